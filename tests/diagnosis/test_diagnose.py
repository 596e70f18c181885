"""The diagnosis end to end on simulated scenarios with known truth (fixed seeds)."""

import json
from importlib import resources

import astropy.units as u
import jsonschema
import numpy as np
import pytest
from simulate import simulate
from systems import k_dwarf_binary, sun_and_jupiter

from ttvkit.diagnosis import diagnose
from ttvkit.physics import Companion, Orbit, Star, System
from ttvkit.physics.tides import decay_rate_from_quality_factor

NOW = 2461376.5  # a fixed "present" (2026-12-01) so forecasts are reproducible

# An invented eclipsing binary: an active K dwarf with a stellar companion,
# synchronised (no rotation period given), P = 2 d like the simulated tables.
BINARY = k_dwarf_binary()
MODULATION = [0.0, 2.0, 5 / 86400, 0.0, 20 * 365.25]   # 5-s semi-amplitude, 20-yr cycle


def run(table, system, names):
    return diagnose(table, system, hypotheses=names, sampled=False, progress=False, now=NOW)


def test_modulation_the_star_can_power():
    # thin-shell energy ratio ~0.5 for this star (Applegate 1992 chain): allowed
    table = simulate("sinusoidal-modulation", MODULATION, np.random.default_rng(31), sigma_s=3.0)
    d = run(table, BINARY, ["sinusoidal-modulation"])
    a = d["sinusoidal-modulation"]
    assert a.physical == "possible"
    assert a.verdict == "needed and plausible"
    assert d["constant-period"].verdict == "disfavoured by the data"
    assert "sinusoidal-modulation" in d.summary()


def test_same_modulation_on_a_faint_star_is_excluded():
    faint = k_dwarf_binary(teff=None, luminosity=1e-4 * u.Lsun)
    table = simulate("sinusoidal-modulation", MODULATION, np.random.default_rng(31), sigma_s=3.0)
    a = run(table, faint, ["sinusoidal-modulation"])["sinusoidal-modulation"]
    assert a.verdict == "physically excluded"
    assert "cannot power" in a.reason


def test_decay_with_a_plausible_quality_factor_is_needed_and_plausible():
    # Q'_* = 1e6 (inside the documented range for a solar-type host) -> dP/dt
    # from the Goldreich & Soter form; the fit must recover a plausible Q'_*.
    host = System(Star(mass=1 * u.Msun, radius=1.2 * u.Rsun, teff=5800 * u.K),
                  Companion(mass=3 * u.Mjup, radius=1.2 * u.Rjup), Orbit(period=2.0 * u.day, a_over_rstar=3.0))
    rate = decay_rate_from_quality_factor(host, 1e6).to_value(u.dimensionless_unscaled)
    table = simulate("orbital-decay", [0.0, 2.0, rate * 2.0], np.random.default_rng(32))
    d = run(table, host, ["orbital-decay", "sinusoidal-modulation"])
    a = d["orbital-decay"]
    assert a.verdict == "needed and plausible"
    q = [c for c in a.checks if c.name.startswith("tidal quality")][0]
    assert q.outcome == "pass"
    assert 10 ** 5.5 < q.value < 10 ** 6.5  # recovered Q' within half a dex of the truth


def test_light_time_companion_seen_in_rvs_is_excluded():
    # 80-s light-time amplitude over 11 yr: K ~ 270 m/s, far above 3 x 5 m/s.
    system = sun_and_jupiter(2.0, rv_baseline_yr=10.0, rv_rms=5.0)
    table = simulate("light-travel-time", [0.0, 2.0, 80 / 86400, 4000.0, 0.3, 0.2, 1.0], np.random.default_rng(33))
    a = run(table, system, ["light-travel-time"])["light-travel-time"]
    assert a.verdict == "physically excluded"
    rv = [c for c in a.checks if c.name == "radial-velocity visibility"][0]
    assert rv.outcome == "fail" and rv.value > 100


def test_json_validates_against_the_schema(tmp_path):
    from ttvkit.report import write_report

    table = simulate("sinusoidal-modulation", MODULATION, np.random.default_rng(34), sigma_s=3.0)
    table.intake_warnings = ["rows 3 and 9: the same mid-time twice (an invented reading note)"]
    d = run(table, BINARY, ["sinusoidal-modulation", "orbital-decay"])
    paths = write_report(d, tmp_path / "report")
    schema = json.loads(resources.files("ttvkit").joinpath("report/schemas/diagnosis.schema.json").read_text())
    payload = json.loads(paths["diagnosis.json"].read_text())
    jsonschema.validate(payload, schema)
    # what reading the table warned about is in the JSON too (issue 13)
    assert {"kind": "table", "message": table.intake_warnings[0]} in payload["warnings"]
    assert "plausibility screen, not a proof" in paths["report.html"].read_text()
    for name in ("oc_diagram", "periodogram", "activity_envelope", "companion_check", "forecast", "posterior_corner"):
        assert (tmp_path / "report" / f"{name}.png").stat().st_size > 10_000
        assert (tmp_path / "report" / f"{name}.pdf").exists()


def test_interrupted_report_leaves_nothing(tmp_path, monkeypatch):
    from ttvkit.report import writer as report_module

    table = simulate("constant-period", [0.0, 2.0], np.random.default_rng(35))
    d = run(table, BINARY, ["orbital-decay"])

    def boom(*args, **kwargs):
        raise KeyboardInterrupt

    monkeypatch.setattr(report_module, "render_html", boom)
    with pytest.raises(KeyboardInterrupt):
        report_module.write_report(d, tmp_path / "out")
    assert not (tmp_path / "out").exists()
    assert list(tmp_path.iterdir()) == []  # no half-written staging folder either
    # an existing non-empty folder is kept unless forced
    (tmp_path / "out").mkdir()
    (tmp_path / "out" / "keep.txt").write_text("mine")
    monkeypatch.undo()
    from ttvkit import OutputExistsError
    with pytest.raises(OutputExistsError):
        report_module.write_report(d, tmp_path / "out")
    assert (tmp_path / "out" / "keep.txt").read_text() == "mine"
    # --force replaces only ttvkit's own outputs (issue 13): the user's file stops it and survives
    with pytest.raises(OutputExistsError, match="did not write"):
        report_module.write_report(d, tmp_path / "out", force=True)
    assert (tmp_path / "out" / "keep.txt").read_text() == "mine"
    (tmp_path / "out" / "keep.txt").unlink()
    report_module.write_report(d, tmp_path / "out")
    report_module.write_report(d, tmp_path / "out", force=True)  # its own earlier report is replaced
    assert (tmp_path / "out" / "report.html").exists()


def test_schema_lists_exactly_the_verdict_vocabulary():
    # the JSON schema and the one verdict module must agree word for word
    from ttvkit.diagnosis.verdicts import VERDICTS

    schema = json.loads(resources.files("ttvkit").joinpath("report/schemas/diagnosis.schema.json").read_text())
    enum = schema["$defs"]["hypothesis"]["properties"]["verdict"]["enum"]
    assert sorted(enum) == sorted(VERDICTS)
