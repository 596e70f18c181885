"""Bad and odd timing tables (issue 13): every kind refused or warned, naming file, row and column.

Each refused case also checks that no table (no number) came out.  Cases are
invented; the kinds are those a corpus of bad inputs produced (issue 13).
"""

from __future__ import annotations

import warnings

import numpy as np
import pytest

from ttvkit.errors import EphemerisError, InputError, TimeStandardError
from ttvkit.timing.intake_checks import IntakeWarning
from ttvkit.timing.table import Ephemeris, TimingTable

EPH = Ephemeris(2456000.0, 2.0)
GOOD = "\n".join(f"{e},{2456000.0 + 2.0 * e:.5f},0.0005" for e in range(6))

# (name, text, read options, error class, regex the message must match)
REFUSED = [
    ("mjd labelled JD_UTC", "epoch,time,uncertainty\n0,56000.0,0.001\n1,56002.0,0.001\n", {"standard": "JD_UTC"},
     InputError, r"row 1, column 'time'.*does not fit the stated standard JD_UTC.*modified Julian date"),
    ("mjd labelled BJD_TDB", "epoch,time,uncertainty\n0,56000.0,0.001\n", {"standard": "BJD_TDB"},
     InputError, r"row 1, column 'time'.*modified Julian date"),
    ("mission days labelled BJD_TDB", "epoch,time,uncertainty\n0,1325.3,0.001\n", {"standard": "BJD_TDB"},
     InputError, r"row 1, column 'time'.*mission day count"),
    ("full JD labelled BTJD", "epoch,time,uncertainty\n0,2459000.3,0.001\n", {"standard": "BTJD"},
     InputError, r"row 1, column 'time'.*full Julian date"),
    ("year 1725", "epoch,time,uncertainty\n0,2351300.5,0.001\n", {"standard": "HJD_UTC"},
     InputError, r"row 1, column 'time'.*outside 1800–2100"),
    ("negative time", "epoch,time,uncertainty\n0,-2456000.0,0.001\n", {"standard": "BJD_TDB"},
     InputError, r"row 1, column 'time'.*does not fit"),
    ("uncertainty in seconds read as days", "epoch,time,uncertainty\n0,2456000.0,35\n1,2456002.0,40\n",
     {"standard": "BJD_TDB"}, InputError, r"row 1, column 'uncertainty'.*too large.*--uncertainty-unit s"),
    ("uncertainty in minutes read as days", "epoch,time,uncertainty\n0,2456000.0,0.8\n",
     {"standard": "BJD_TDB"}, InputError, r"row 1, column 'uncertainty'.*seconds or minutes"),
    ("uncertainty a large fraction of the period", "time,uncertainty\n2456000.0,0.04\n",
     {"standard": "BJD_TDB", "ephemeris": Ephemeris(2456000.0, 0.5)}, InputError, r"fraction of the period"),
    ("time header in minutes over BJD numbers", "epoch,time [min],uncertainty\n0,2456000.0,0.001\n",
     {"standard": "BJD_TDB"}, InputError, r"column 'time'.*in min.*counted in days"),
    ("typo'd standard", "epoch,time,uncertainty,standard\n0,2456000.0,0.001,BJD_TBD\n", {},
     TimeStandardError, r"row 1, column 'standard'.*unknown time standard"),
    ("bare BJD", "epoch,time,uncertainty,standard\n0,2456000.0,0.001,BJD\n", {},
     TimeStandardError, r"row 1, column 'standard'.*ambiguous.*--bare-bjd"),
    ("row between epochs", "time,uncertainty\n2456000.0,0.001\n2456003.0,0.001\n2456004.0,0.001\n",
     {"standard": "BJD_TDB", "ephemeris": EPH}, EphemerisError, r"row 2, column 'time'.*ambiguous"),
    ("epoch off by one", "epoch,time,uncertainty\n" + GOOD + "\n7,2456012.0,0.0005\n",
     {"standard": "BJD_TDB"}, EphemerisError, r"row 7, column 'epoch'.*epoch 7.*off by -1"),
    ("epoch off by one against the ephemeris", "epoch,time,uncertainty\n0,2456000.0,0.001\n2,2456002.0,0.001\n",
     {"standard": "BJD_TDB", "ephemeris": EPH}, EphemerisError, r"row 2, column 'epoch'"),
    ("drop a row the file lacks", "epoch,time,uncertainty\n0,2456000.0,0.001\n", {"standard": "BJD_TDB",
     "drop_rows": [5]}, InputError, r"--drop-rows names row\(s\) 5"),
    ("empty uncertainty", "epoch,time,uncertainty\n0,2456000.0,\n", {"standard": "BJD_TDB"},
     InputError, r"row 1, column 'uncertainty'.*empty"),
    ("infinite time", "epoch,time,uncertainty\n0,inf,0.001\n", {"standard": "BJD_TDB"},
     InputError, r"row 1, column 'time'.*not a finite number"),
]


@pytest.mark.parametrize("name,text,options,error,match", REFUSED, ids=[c[0] for c in REFUSED])
def test_refused_with_file_row_and_column(tmp_path, name, text, options, error, match):
    path = tmp_path / "times.csv"
    path.write_text(text)
    table = None
    with pytest.raises(error, match=match) as info:
        table = TimingTable.read(path, **options)
    assert str(path) in str(info.value)
    assert table is None  # no number came out


def test_every_problem_reported_at_once(tmp_path):
    path = tmp_path / "times.csv"
    path.write_text("epoch,time,uncertainty\n0,abc,0.001\n1,2456002.0,-1\n2,56004.0,0.001\n3,2456006.0,0.001\n")
    with pytest.raises(InputError) as info:
        TimingTable.read(path, standard="BJD_TDB")
    text = str(info.value)
    assert "3 problems" in text
    for where in ("row 1, column 'time'", "row 2, column 'uncertainty'", "row 3, column 'time'"):
        assert where in text


def _read(tmp_path, text, **options):
    path = tmp_path / "times.csv"
    path.write_text(text)
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        table = TimingTable.read(path, **options)
    return table, [str(w.message) for w in caught if issubclass(w.category, IntakeWarning)]


def test_repeated_epochs_kept_exact_copies_dropped(tmp_path):
    text = ("epoch,time,uncertainty,source\n0,2456000.00000,0.0005,A\n0,2456000.00030,0.0004,B\n"
            "1,2456002.0,0.0005,A\n1,2456002.0,0.0005,C\n")
    table, messages = _read(tmp_path, text, standard="BJD_TDB")
    assert len(table) == 3  # two observers of epoch 0 kept; row 4 repeats row 3 exactly
    assert any("row 4" in m and "row 3" in m and "dropped" in m for m in messages)


def test_same_event_seven_hours_apart_flagged(tmp_path):
    # the same epoch 7 h off in a second source: 25 200 s, far beyond 5 sigma of 60 s errors
    text = "epoch,time,uncertainty,source\n0,2456000.0,0.0007,A\n0,2456000.29167,0.0007,B\n"
    table, messages = _read(tmp_path, text, standard="BJD_TDB")
    assert len(table) == 2
    assert any("rows 1 ('A') and 2 ('B')" in m and "σ" in m for m in messages)


def test_bare_bjd_read_as_told_and_named(tmp_path):
    text = "epoch,time,uncertainty,standard\n0,2456000.0,0.001,BJD\n1,2456002.0,0.001,BJD_TDB\n"
    table, messages = _read(tmp_path, text, bare_bjd="BJD_TDB")
    assert table.time[0] == 2456000.0
    assert any("1 row(s) labelled only 'BJD' (rows 1)" in m for m in messages)


def test_utc_before_1960_warns_through_ttvkit(tmp_path):
    # JD 2415020.5 is 1900-01-01: UTC undefined there (ERFA "dubious year"), converted with a warning
    from astropy.coordinates import SkyCoord

    text = "epoch,time,uncertainty\n0,2415020.5,0.001\n"
    table, messages = _read(tmp_path, text, standard="HJD_UTC", target=SkyCoord(10, 20, unit="deg"))
    assert len(table) == 1
    assert any("before 1960" in m and "row 1" in m for m in messages)


def test_drop_rows_removes_an_unplaceable_row(tmp_path):
    text = "time,uncertainty\n2456000.0,0.001\n2456003.0,0.001\n2456004.0,0.001\n"
    table, _ = _read(tmp_path, text, standard="BJD_TDB", ephemeris=EPH, drop_rows=[2])
    assert list(table.epoch) == [0, 2]


def test_api_arrays_of_wrong_length_are_a_clear_error():
    with pytest.raises(InputError, match="uncertainty: has 2 values for 3 mid-times"):
        TimingTable([2456000.0, 2456002.0, 2456004.0], [1e-3, 1e-3], epoch=[0, 1, 2])
    with pytest.raises(InputError, match="epoch: has 2 values"):
        TimingTable([2456000.0, 2456002.0, 2456004.0], 1e-3, epoch=[0, 1])


def test_from_astropy_and_pandas_round_trip():
    import astropy.units as u
    from astropy.table import QTable

    q = QTable({"time": [2456000.1, 2456002.1, 2456004.1] * u.day, "uncertainty": [30, 30, 40] * u.s})
    table = TimingTable.from_table(q, standard="BJD_TDB", ephemeris=EPH.__class__(2456000.1, 2.0))
    # 30 s = 30/86400 d (SI day)
    assert table.uncertainty[0] == pytest.approx(30 / 86400, rel=1e-12)
    frame = table.to_pandas()
    assert list(frame["epoch"]) == [0, 1, 2]
    again = TimingTable.from_table(frame, standard="BJD_TDB")
    assert list(again.time) == list(table.time)
    with pytest.raises(InputError, match=r"row 2, column 'time'.*modified Julian"):
        TimingTable.from_table(QTable({"time": [2456000.1, 56002.1], "uncertainty": [1e-3, 1e-3],
                                       "epoch": [0, 1]}), standard="BJD_TDB")


def test_to_bjd_tdb_accepts_an_astropy_time():
    from astropy.coordinates import SkyCoord
    from astropy.time import Time

    from ttvkit.timing.standards import to_bjd_tdb

    target = SkyCoord(217.55, -12.02, unit="deg")
    t = Time([2456000.5], format="jd", scale="utc")
    # the same numbers given as plain days must give the same BJD_TDB (consistency of the two paths)
    assert to_bjd_tdb(t, "HJD_UTC", target)[0] == to_bjd_tdb([2456000.5], "HJD_UTC", target)[0]


def test_merged_table_keeps_numeric_columns_numeric():
    # a literature table (no white_uncertainty) joined with a measured one: the column stays float
    lit = TimingTable([2456000.0, 2456002.0], 1e-3, epoch=[0, 1])
    measured = TimingTable([2456004.0], 1e-3, epoch=[2], extra={"white_uncertainty": [8e-4]})
    merged = TimingTable.concatenate([lit, measured])
    assert merged.extra["white_uncertainty"].dtype.kind == "f"
    assert np.isnan(merged.extra["white_uncertainty"][0]) and merged.extra["white_uncertainty"][2] == 8e-4
