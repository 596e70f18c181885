"""TimingTable reading, validation, epochs and round trips."""

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from ttvkit import (
    Ephemeris,
    EphemerisError,
    InputError,
    TimeStandardError,
    TimingTable,
    TtvkitError,
    make_target,
)

TARGET = make_target(287.41, 31.18)


def write(tmp_path, text, name="t.csv"):
    p = tmp_path / name
    p.write_text(text)
    return p


def test_plain_csv_reads_with_only_the_standard(tmp_path):
    p = write(tmp_path, "time,uncertainty\n2456000.3141,0.0004\n2456002.1875,0.0005\n")
    t = TimingTable.read(p, standard="BJD_TDB", ephemeris=Ephemeris(2456000.3141, 1.8734))
    assert list(t.epoch) == [0, 1]
    assert t.time[0] == 2456000.3141  # BJD_TDB in, BJD_TDB out: exact
    assert list(t.kind) == ["transit", "transit"]
    assert list(t.source) == ["t.csv", "t.csv"]


def test_per_row_standards_are_converted(tmp_path):
    p = write(tmp_path, "epoch,time,uncertainty,standard\n0,2456000.3141,0.0004,BJD_TDB\n"
                        "1,2456002.1867,0.0005,HJD_UTC\n")
    t = TimingTable.read(p, target=TARGET)
    # HJD_UTC -> BJD_TDB adds ~ (TT-UTC = 67.184 s in 2012) + a few s
    assert 60 < (t.time[1] - 2456002.1867) * 86400 < 75
    assert list(t.given_standard) == ["BJD_TDB", "HJD_UTC"]


def test_header_units(tmp_path):
    p = write(tmp_path, "epoch,time,uncertainty [s]\n0,2456000.3141,30\n")
    t = TimingTable.read(p, standard="BJD_TDB")
    assert t.uncertainty[0] == pytest.approx(30 / 86400)


def test_column_mapping(tmp_path):
    p = write(tmp_path, "n,HJD,err\n0,2456000.3141,0.5\n")
    t = TimingTable.read(p, standard="HJD_UTC", target=TARGET,
                         columns={"epoch": "n", "time": "HJD", "uncertainty": "err"},
                         units={"uncertainty": "min"})
    assert t.uncertainty[0] == pytest.approx(30 / 86400)


def test_ecsv_round_trip_is_lossless(tmp_path, demo_table):
    out = tmp_path / "t.ecsv"
    demo_table.write(out)
    back = TimingTable.read(out)
    assert np.array_equal(back.time, demo_table.time)
    assert np.array_equal(back.uncertainty, demo_table.uncertainty)
    assert np.array_equal(back.epoch, demo_table.epoch)
    assert list(back.kind) == list(demo_table.kind)
    assert list(back.source) == list(demo_table.source)
    assert list(back.given_standard) == list(demo_table.given_standard)
    assert back.target.ra.deg == pytest.approx(287.41)


def test_write_refuses_to_overwrite(tmp_path, demo_table):
    out = tmp_path / "t.ecsv"
    demo_table.write(out)
    with pytest.raises(TtvkitError, match="exists"):
        demo_table.write(out)
    demo_table.write(out, overwrite=True)


def test_occultation_epochs(tmp_path):
    eph = Ephemeris(2456000.0, 2.0)
    t = TimingTable([2456001.0, 2456004.0, 2456005.0], [1e-3] * 3,
                    kind=["occultation", "transit", "occultation"], ephemeris=eph)
    assert list(t.epoch) == [0, 2, 2]


def test_ambiguous_epoch_names_the_row(tmp_path):
    p = write(tmp_path, "time,uncertainty\n2456000.0,0.001\n2456000.6,0.001\n")
    with pytest.raises(EphemerisError, match=r"row 2.*ambiguous"):
        TimingTable.read(p, standard="BJD_TDB", ephemeris=Ephemeris(2456000.0, 2.0))


def test_missing_epochs_without_ephemeris(tmp_path):
    p = write(tmp_path, "time,uncertainty\n2456000.0,0.001\n")
    with pytest.raises(EphemerisError, match="ephemeris"):
        TimingTable.read(p, standard="BJD_TDB")


BAD = [
    ("epoch,uncertainty\n0,0.001\n", "missing column 'time'", {}),
    ("epoch,time,uncertainty\n0,abc,0.001\n", r"row 1, column 'time'.*not a number", {}),
    ("epoch,time,uncertainty\n0,nan,0.001\n", r"row 1, column 'time'.*finite", {}),
    ("epoch,time,uncertainty\n0,2456000.0,-0.001\n", r"row 1, column 'uncertainty'.*positive", {}),
    ("epoch,time,uncertainty\n0,2456000.0,0\n", r"column 'uncertainty'.*positive", {}),
    ("epoch,time,uncertainty,kind\n0,2456000.0,0.001,flare\n", r"column 'kind'.*unknown kind", {}),
    ("epoch,time,uncertainty,standard\n0,2456000.0,0.001,BJD\n", r"column 'standard'.*ambiguous", {}),
    ("epoch,time,uncertainty,standard\n0,2456000.0,0.001,GPS\n", r"row 1.*unknown time standard", {}),
    ("epoch,time,uncertainty [furlongs]\n0,2456000.0,0.001\n", r"unparseable unit|not a time unit", {}),
    ("epoch,time,uncertainty [parsec]\n0,2456000.0,0.001\n", "not a time unit", {}),
    ("", "empty", {}),
    ("epoch,time,uncertainty\n", "no data rows", {}),
    ("epoch,time,uncertainty\n0,2456000.0\n", r"row 1.*fields", {}),
    ("epoch,time,uncertainty\n1.5,2456000.0,0.001\n", r"column 'epoch'.*not an integer", {}),
]


@pytest.mark.parametrize("text,match,kwargs", BAD)
def test_bad_input_names_file_row_and_column(tmp_path, text, match, kwargs):
    p = write(tmp_path, text)
    with pytest.raises(InputError, match=match) as info:
        TimingTable.read(p, standard="BJD_TDB", **kwargs)
    assert str(p) in str(info.value)


def test_no_standard_is_an_error(tmp_path):
    p = write(tmp_path, "epoch,time,uncertainty\n0,2456000.0,0.001\n")
    with pytest.raises(TimeStandardError, match=r"row 1.*no time standard"):
        TimingTable.read(p)


def test_binary_file(tmp_path):
    p = tmp_path / "x.csv"
    p.write_bytes(bytes(range(256)) * 4)
    with pytest.raises(InputError, match="binary"):
        TimingTable.read(p, standard="BJD_TDB")


def test_no_such_file(tmp_path):
    with pytest.raises(InputError, match="no such file"):
        TimingTable.read(tmp_path / "nope.csv", standard="BJD_TDB")


def test_o_minus_c(demo_table):
    eph = Ephemeris(2456000.31412, 1.8734192)
    oc = demo_table.observed_minus_calculated(eph)
    assert oc.unit == "s"
    # injected 50-s modulation plus <=150-s noise plus the planted ~66-s offset
    assert np.max(np.abs(oc.value)) < 600


# Property-based: whatever bytes or text arrive, the reader either returns a
# table or raises a TtvkitError; nothing else escapes.
cells = st.one_of(st.floats(allow_nan=True, allow_infinity=True).map(repr),
                  st.integers(-10**6, 10**7).map(str),
                  st.text(alphabet=st.characters(blacklist_categories=("Cs",)), max_size=8),
                  st.sampled_from(["", "nan", "BJD_TDB", "HJD_UTC", "BJD", "transit", "sec", "-1", "1e400"]))
headers = st.lists(st.sampled_from(["epoch", "time", "uncertainty", "kind", "source", "standard",
                                    "uncertainty [s]", "time [d]", "x", "uncertainty [zz]"]),
                   min_size=1, max_size=6)


@settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(header=headers, body=st.lists(st.lists(cells, min_size=1, max_size=7), max_size=5))
def test_malformed_text_raises_only_ttvkit_errors(tmp_path, header, body):
    text = ",".join(header) + "\n" + "\n".join(",".join(r) for r in body)
    p = tmp_path / "prop.csv"
    p.write_text(text, encoding="utf-8")
    try:
        TimingTable.read(p, standard="BJD_TDB", ephemeris=Ephemeris(2456000.0, 1.5))
    except TtvkitError:
        pass


@settings(max_examples=100, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(data=st.binary(max_size=300))
def test_arbitrary_bytes_raise_only_ttvkit_errors(tmp_path, data):
    p = tmp_path / "prop.ecsv"
    p.write_bytes(b"# %ECSV 1.0\n" + data if data[:1] == b"#" else data)
    try:
        TimingTable.read(p, standard="BJD_TDB")
    except TtvkitError:
        pass
