"""Activity indicators in the verdict: reading them, testing them against the period change, the report.

The invented binary of the demo (ttvkit.demo.binary) is the input: its injected truth (a wandering
cycle of characteristic period 11 yr; a brightness that follows ΔP/P half a year late) is the
reference, with Eggleton (1983, ApJ 268, 368) for the Roche lobes.  The test's detection and false-alarm
rates on 200 simulated pairs are in tests/inference/test_activity_link.py (slow).
"""

import json

import numpy as np
import pytest

from ttvkit.demo.binary import BINARY_TRUTH, build_binary_scenario
from ttvkit.errors import InputError
from ttvkit.physics import System
from ttvkit.timing.indicators import IndicatorSeries, read_indicator_series
from ttvkit.timing.standards import make_target
from ttvkit.timing.table import TimingTable


@pytest.fixture(scope="module")
def scenario(tmp_path_factory):
    paths = build_binary_scenario().write(tmp_path_factory.mktemp("binary") / "inputs")
    system = System.from_toml(paths["system"])
    table = TimingTable.read(paths["timings"], target=make_target(64.83, -22.61))
    return paths, system, table


@pytest.fixture(scope="module")
def diagnosed(scenario, tmp_path_factory):
    from ttvkit.diagnosis.diagnose import DiagnosisOptions
    from ttvkit.pipeline import run_diagnosis

    paths, system, table = scenario
    brightness = read_indicator_series(paths["indicator"], name="V magnitude")
    out = tmp_path_factory.mktemp("report") / "d"
    run = run_diagnosis(table, system, out, DiagnosisOptions(sampled=False, progress=False, activity=(brightness,)),
                        say=lambda *a: None)
    return run.diagnosis, out


def test_reading_an_indicator_series(scenario, tmp_path):
    paths, _, _ = scenario
    s = read_indicator_series(paths["indicator"])
    assert s.name == "v_mag" and s.time.size == 116 and np.all(s.error > 0)
    # decimal years are read as TDB years
    f = tmp_path / "years.csv"
    f.write_text("year,flux,flux_err\n" + "".join(f"{2000 + i / 4:.2f},{1 + 0.01 * i},0.01\n" for i in range(12)))
    y = read_indicator_series(f)
    assert y.time[0] == pytest.approx(2451544.5, abs=0.01)      # 2000.0 is 2000-01-01 00:00 (astropy decimalyear)
    # pandas and astropy tables are taken as they are
    import pandas as pd

    frame = pd.DataFrame({"time": s.time, "v_mag": s.value, "v_mag_err": s.error})
    assert np.array_equal(read_indicator_series(frame).value, s.value)


@pytest.mark.parametrize("text, match", [
    ("when,v,v_err\n" + "2455000,1,0.1\n" * 12, r"bad.csv: no time column"),
    ("time,v,v_err\n" + "2455000,1,0.1\n" * 5 + "2455001,x,0.1\n" + "2455002,1,0.1\n" * 6,
     r"bad.csv, row 6, column 'v': 'x' is not a number"),
    ("time,v,v_err\n" + "2455000,1,0.1\n" * 3 + "2455001,1,-0.1\n" + "2455002,1,0.1\n" * 8,
     r"bad.csv, row 4, column 'v_err': error -0.1 must be positive"),
    ("time,v,v_err\n" + "55000,1,0.1\n" * 12, r"bad.csv, row 1, column 'time': 55000 is not a BJD_TDB"),
    ("time,v,v_err\n" + "2455000,1,0.1\n" * 4, r"at least 10"),
    ("time,v,w,v_err\n" + "2455000,1,2,0.1\n" * 12, r"cannot tell the value column"),
    ("time,v\n" + "2455000,1\n" * 12, r"no error column for 'v'"),
])
def test_bad_indicator_files_are_refused_by_row_and_column(tmp_path, text, match):
    f = tmp_path / "bad.csv"
    f.write_text(text)
    with pytest.raises(InputError, match=match):
        read_indicator_series(f)


def test_the_brightness_link_enters_the_verdict(diagnosed):
    diagnosis, _ = diagnosed
    result = diagnosis.activity[0]
    # detected at the surrogates' floor, at a lag near the injected half year (within a lag step)
    assert result.link.p_value <= 0.01
    assert abs(result.link.lag / 365.25 - BINARY_TRUTH["indicator_lag_yr"]) < 0.5
    qp = diagnosis["quasi-periodic-modulation"]
    check = next(c for c in qp.checks if c.name == "activity indicator 'V magnitude'")
    assert check.outcome == "pass" and check.decisive
    # the wandering cycle is what the data need, at the injected characteristic period (within 3σ)
    assert qp.verdict == "needed and plausible"
    period = qp.fit.estimate("modulation_period_yr")
    assert abs(period.value - BINARY_TRUTH["characteristic_period_yr"]) < 3 * max(period.lower, period.upper)
    # no activity check on hypotheses that are not activity cycles
    assert not any(c.name.startswith("activity indicator") for c in diagnosis["light-travel-time"].checks)
    # neither star fills its Roche lobe (Eggleton 1983): conservative transfer is excluded
    assert diagnosis["mass-transfer"].physical == "excluded"


def test_report_has_the_figure_the_section_and_valid_json(diagnosed):
    import jsonschema

    diagnosis, out = diagnosed
    assert (out / "activity_link.png").exists()
    html = (out / "report.html").read_text(encoding="utf-8")
    assert "Does the activity follow the period?" in html
    payload = json.loads((out / "diagnosis.json").read_text())
    from importlib.resources import files

    schema = json.loads(files("ttvkit.report").joinpath("schemas/diagnosis.schema.json").read_text())
    jsonschema.validate(payload, schema)
    assert payload["activity_indicators"][0]["name"] == "V magnitude"


def test_an_unrelated_red_indicator_is_not_called_linked(scenario):
    # An Ornstein–Uhlenbeck brightness series independent of the O−C (seeded): the surrogate test must not
    # call it linked (its false-alarm rate over 200 such pairs is checked in the slow test).
    from ttvkit.diagnosis.activity import indicator_check, link_indicators
    from ttvkit.inference.fitting import fit

    _, system, table = scenario
    rng = np.random.default_rng(7)
    t = np.sort(rng.uniform(table.time.min(), table.time.max(), 100))
    red = np.zeros(t.size)
    for i in range(1, t.size):
        keep = np.exp(-(t[i] - t[i - 1]) / 700.0)
        red[i] = keep * red[i - 1] + np.sqrt(1 - keep ** 2) * rng.normal(0, 0.02)
    series = IndicatorSeries("unrelated", t, red + rng.normal(0, 0.004, t.size), np.full(t.size, 0.004))
    result = link_indicators(table, fit(table, "constant-period"), [series], seed=3)[0]
    assert result.link.p_value > 0.01
    assert indicator_check(result, fit(table, "sinusoidal-modulation")).outcome != "pass"


def test_an_indicator_that_misses_the_timings_is_refused_by_file(scenario, tmp_path):
    # Decimal years 1950-1955 against eclipse timings of 1995-2025: no overlap at any lag, refused naming
    # the indicator's file (several may be given) rather than with an anonymous message.
    from ttvkit.diagnosis.activity import link_indicators
    from ttvkit.inference.fitting import fit

    _, _, table = scenario
    f = tmp_path / "old.csv"
    f.write_text("year,flux,flux_err\n" + "".join(f"{1950 + i / 4:.2f},{1 + 0.01 * (i % 5)},0.01\n"
                                                  for i in range(20)))
    with pytest.raises(InputError, match=r"old.csv: activity indicator 'flux': .*do not overlap"):
        link_indicators(table, fit(table, "constant-period"), [read_indicator_series(f)])
