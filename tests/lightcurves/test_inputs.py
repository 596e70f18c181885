"""measure() meets users where they are (issue 13): paths, one path, LightCurves, arrays, TimeSeries,
lightkurve-style objects.  Light curves are simulated with batman (the reference library)."""

from __future__ import annotations

import astropy.units as u
import batman
import numpy as np
import pytest
from astropy.time import Time

from ttvkit.errors import InputError
from ttvkit.lightcurves.measure import measure
from ttvkit.lightcurves.midtime import TransitShape
from ttvkit.lightcurves.reading import read_light_curve
from ttvkit.timing import Ephemeris

SHAPE = TransitShape(period=3.0, radius_ratio=0.1, a_over_rstar=8.0, impact_parameter=0.3, q1=0.4356, q2=0.3030)
EPH = Ephemeris(2456000.0, 3.0)
TRUTH = 0.0021  # days after the ephemeris: the simulated transit's true offset


def simulate(seed=5):
    rng = np.random.default_rng(seed)
    t = np.arange(-0.2, 0.2, 2.0 / 1440)
    p = SHAPE.batman_params(TRUTH)
    f = batman.TransitModel(p, t).light_curve(p) + rng.normal(0, 1e-3, t.size)
    return t + EPH.reference_time, f, np.full(t.size, 1e-3)


class LightkurveLike:
    """The attributes a lightkurve LightCurve has (.time an astropy Time, flux Quantities)."""

    def __init__(self, t, f, e):
        self.time = Time(t, format="jd", scale="tdb")
        self.flux = f * u.electron / u.s
        self.flux_err = e * u.electron / u.s
        self.meta = {"OBJECT": "invented star"}


@pytest.fixture(scope="module")
def reference(tmp_path_factory):
    t, f, e = simulate()
    path = tmp_path_factory.mktemp("lc") / "lc.csv"
    path.write_text("time,flux,flux_err\n" + "\n".join(f"{float(a)!r},{float(b)!r},{float(c)!r}" for a, b, c in zip(t, f, e)))
    table, _ = measure(str(path), EPH, shape=SHAPE, progress=False)  # a single path, not a list
    return path, table


def test_single_path_measures_the_simulated_transit(reference):
    _, table = reference
    # batman's truth within 3 sigma of the measured uncertainty (fixed seed)
    assert abs(table.time[0] - (EPH.reference_time + TRUTH)) < 3 * table.uncertainty[0]


@pytest.mark.parametrize("kind", ["arrays", "lightcurve", "timeseries", "lightkurve"])
def test_every_input_kind_gives_the_same_mid_time(reference, kind):
    from astropy.timeseries import TimeSeries

    path, table = reference
    t, f, e = simulate()
    item = {"arrays": lambda: (t, f, e),
            "lightcurve": lambda: read_light_curve(path),
            "timeseries": lambda: TimeSeries(time=Time(t, format="jd", scale="tdb"), data={"flux": f, "flux_err": e}),
            "lightkurve": lambda: LightkurveLike(t, f, e)}[kind]()
    other, _ = measure(item, EPH, shape=SHAPE, progress=False)
    # the same numbers by another route: equal to far below the timing error (1e-9 d = 0.1 ms)
    assert other.time[0] == pytest.approx(table.time[0], abs=1e-9)


def test_unusable_inputs_are_clear():
    with pytest.raises(InputError, match="not a path, a LightCurve"):
        measure([42], EPH, shape=SHAPE, progress=False)
    with pytest.raises(InputError, match="must be 1-d arrays of one length"):
        measure([(np.arange(5.0), np.ones(4), np.ones(5))], EPH, shape=SHAPE, progress=False)
    t, f, e = simulate()
    with pytest.raises(InputError, match="scale 'utc'; say their standard"):
        measure([(Time(t, format="jd", scale="utc"), f, e)], EPH, shape=SHAPE, progress=False)
