"""Every window appears: timed, or untimed with its reason; bad input refused at the edge."""

import numpy as np
import pytest
from lightcurves.lc_sim import MINUTE, SHAPE, simulate_curve

from ttvkit import InputError
from ttvkit.lightcurves.measure import measure
from ttvkit.lightcurves.midtime import TransitShape, shape_from_toml
from ttvkit.lightcurves.reading import read_light_curve
from ttvkit.timing import Ephemeris

BJD0 = 2456000.0


def write_curve(path, t, f, e, header="time,flux,flux_err"):
    rows = [header] + [f"{a:.10f},{b:.10g},{c:.10g}" for a, b, c in zip(t, f, e)]
    path.write_text("\n".join(rows) + "\n")
    return path


def simulated_file(tmp_path, rng, name="lc.csv", transform=None, **kw):
    lc, truths, _ = simulate_curve(rng, **kw)
    f = lc.flux if transform is None else transform(lc.time, lc.flux)
    return write_curve(tmp_path / name, lc.time + BJD0, f, lc.flux_err), {k: v + BJD0 for k, v in truths.items()}


EPH = Ephemeris(BJD0, SHAPE.period)


def reasons(report):
    return {s["epoch"]: s["reason"] for s in report.skipped}


def test_flat_window_and_nan_gap_are_reported(tmp_path):
    # epoch 1 flattened (no transit), epoch 2 blanked with NaN rows: both listed
    rng = np.random.default_rng(1500)
    lc, _, _ = simulate_curve(rng, n_transits=4)
    f = lc.flux.copy()
    near = lambda k: np.abs(lc.time - k * SHAPE.period) < 0.2   # noqa: E731
    f[near(1)] = 1 + rng.normal(0, 1e-3, near(1).sum())
    f[near(2)] = np.nan
    p = write_curve(tmp_path / "lc.csv", lc.time + BJD0, f, lc.flux_err)
    table, report = measure(p, EPH, shape=SHAPE, progress=False)
    assert sorted(table.epoch) == [0, 3]
    why = reasons(report)
    assert "not detected" in why[1]
    assert "gap" in why[2]


def test_magnitudes_are_recognised(tmp_path):
    # a magnitude column by name is refused at the edge; magnitudes given as
    # "flux" brighten where the transit is due: every window untimed, saying so
    rng = np.random.default_rng(1501)
    p, _ = simulated_file(tmp_path, rng, n_transits=2, transform=lambda t, f: 10.5 - 2.5 * np.log10(f))
    with pytest.raises(InputError, match="magnitudes given as flux"):
        measure(p, EPH, shape=SHAPE, progress=False)
    text = p.read_text().replace("time,flux,flux_err", "time,mag,mag_err")
    (tmp_path / "mag.csv").write_text(text)
    with pytest.raises(InputError, match="looks like magnitudes") as info:
        read_light_curve(tmp_path / "mag.csv", columns={"flux": "mag", "flux_err": "mag_err"})
    assert "mag.csv" in str(info.value) and "mag" in str(info.value)


def test_search_ending_at_its_bound_is_not_a_result(tmp_path):
    # the transit 30% of T14 away from the prediction: beyond the search bound
    # (T14 / 4), so the window is untimed, not a time at the bound
    rng = np.random.default_rng(1502)
    t14, _ = SHAPE.durations()
    p, _ = simulated_file(tmp_path, rng, n_transits=2)
    shifted = Ephemeris(BJD0 + 0.3 * t14, SHAPE.period)
    with pytest.raises(InputError, match="bound|not detected") as info:
        measure(p, shifted, shape=SHAPE, progress=False)
    assert "bound" in str(info.value)


def test_light_curve_covering_no_transit_is_listed(tmp_path):
    rng = np.random.default_rng(1503)
    p, _ = simulated_file(tmp_path, rng, n_transits=2)
    t = BJD0 + 1.5 + np.arange(200) * 2 * MINUTE   # between transits
    q = write_curve(tmp_path / "off.csv", t, 1 + rng.normal(0, 1e-3, 200), np.full(200, 1e-3))
    table, report = measure([p, q], EPH, shape=SHAPE, progress=False)
    assert len(table) == 2
    assert [s["source"] for s in report.skipped] == ["off.csv"]
    assert "covers no transit" in report.skipped[0]["reason"]


@pytest.mark.parametrize("key,value,match", [
    ("radius_ratio", "-0.1", "radius_ratio = -0.1"),
    ("impact_parameter", "1.5", "no transit"),
    ("q1", "1.2", "Kipping"),
    ("a_over_rstar", "nan", "a_over_rstar"),
])
def test_bad_shape_values_are_refused(tmp_path, key, value, match):
    values = {"period": '"3 d"', "radius_ratio": "0.1", "a_over_rstar": "8.0", "impact_parameter": "0.3"}
    values[key] = value
    p = tmp_path / "shape.toml"
    p.write_text("[shape]\n" + "".join(f"{k} = {v}\n" for k, v in values.items()))
    with pytest.raises(InputError, match=match) as info:
        shape_from_toml(p)
    assert "shape.toml" in str(info.value)
    with pytest.raises(InputError):
        TransitShape(3.0, -0.1, 8.0, 0.3)


def test_realistic_light_curve_with_pipeline_errors_twice_the_scatter(tmp_path):
    # No public light curve ships inside a general-purpose package we may use,
    # so: a 27-day, 2-min light curve (9 transits of the invented shape) whose
    # error column is 2x the true scatter, as the issue found for a pipeline's
    # flux errors.  The measured ratio must be 0.5 (+-5%: 1/sqrt(2 n) of
    # ~2000 out-of-transit points is 1.6%), the errors half those of trusting
    # the column, and the mid-times consistent with the truth: chi2 of 9 pulls
    # inside its 0.5%-99.5% range [1.73, 23.6] (chi2 table, 9 d.o.f.)
    rng = np.random.default_rng(1504)
    p, truths = simulated_file(tmp_path, rng, n_transits=9, given=2e-3)
    table, report = measure(p, EPH, shape=SHAPE, progress=False)
    given, _ = measure(p, EPH, shape=SHAPE, noise="given", progress=False)
    assert len(table) == 9 and not report.skipped
    assert np.all(np.abs(table.extra["noise_ratio"] - 0.5) < 0.025)
    assert set(table.extra["error_source"]) == {"flux_err x ratio"}
    assert np.median(table.uncertainty / given.uncertainty) == pytest.approx(0.5, rel=0.05)
    pulls = (table.time - np.array([truths[k] for k in table.epoch])) / table.uncertainty
    assert 1.73 < np.sum(pulls ** 2) < 23.6
