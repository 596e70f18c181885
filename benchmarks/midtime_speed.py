"""Speed and accuracy of per-transit mid-time fits.

Run by hand (not part of the test suite):

    python benchmarks/midtime_speed.py

Simulates 3000 white-noise transits in 200-point windows (batman, fixed
seed), times them with the fast path, and prints: transits per second; the
cost of one fit in units of one batman evaluation of the same window
(measured in the same run; goal <= 30: the fit interpolates a table of the
shape's batman model, so this counts everything, Python included); the scatter of the recovered
mid-times over the Carter et al. (2008) bound; the pull std; and the peak
memory per transit of a streamed `measure` run at two sizes (flat = the
same).

Then the noise table (``midtime-noise:``): 500 simulated transits per case
(CPU times of this process throughout, time.process_time: the machine is
shared, and wall-clock rates would measure the neighbours)
(50 light curves of 10 windows, tests/lightcurves/lc_sim.py, fixed seeds)
timed by the default ``noise="auto"`` path — white noise, AR(1) red noise of
500 ppm / 15 min and 1000 ppm / 30 min on 1000 ppm white, flux errors given
2x too large and 2x too small, 30-min cadence — the pull std of each, the
worst fraction beyond 3 sigma, and the cost per transit of the correlated
(GP) path over the white path on the same red-noise light curves.
"""

import sys
import time
import tracemalloc
from pathlib import Path

import batman
import numpy as np

from ttvkit.lightcurves.midtime import TransitShape, WindowModel, fit_mid_time
from ttvkit.lightcurves.per_curve import time_light_curve
from ttvkit.lightcurves.reading import Window, cut_windows

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "tests"))
from lightcurves.lc_sim import MINUTE, simulate_curve  # noqa: E402
from lightcurves.lc_sim import SHAPE as LD_SHAPE  # noqa: E402

SHAPE = TransitShape(period=3.0, radius_ratio=0.1, a_over_rstar=8.0, impact_parameter=0.3, q1=1e-12, q2=0.0)
N, POINTS, SIGMA = 3000, 200, 1e-3


def windows(rng, n):
    t14, _ = SHAPE.durations()
    cadence = 3 * t14 / POINTS
    for _ in range(n):
        truth = rng.uniform(-0.005, 0.005)
        t = (np.arange(POINTS) - POINTS / 2) * cadence
        p = SHAPE.batman_params(truth)
        f = batman.TransitModel(p, t).light_curve(p) + rng.normal(0, SIGMA, POINTS)
        yield Window(0, 0.0, t, f, np.full(POINTS, SIGMA), "full", "bench"), truth, cadence


def main():
    rng = np.random.default_rng(7)
    data = list(windows(rng, N))
    start = time.process_time()
    fits = [fit_mid_time(w, SHAPE) for w, _, _ in data]
    elapsed = time.process_time() - start
    w0 = data[0][0]
    # The unit of cost: one batman evaluation of a window (a model built once, re-evaluated for a new
    # t0, as a fit without the tabulated shape would do).  The fit itself interpolates one table per
    # shape (midtime.tabulated_transit), so its "evaluations" are interpolations, not batman calls.
    model = WindowModel(w0.time, w0.flux, w0.flux_err, SHAPE, tabulated=False)
    reps = 5000
    t1 = time.process_time()
    for i in range(reps):
        model.light_curve(1e-4 * (i % 7))
    one_eval = (time.process_time() - t1) / reps
    errors = np.array([f.time - truth for f, (_, truth, _) in zip(fits, data)])
    pulls = errors / np.array([f.uncertainty for f in fits])
    _, tau = SHAPE.durations()
    cadence = data[0][2]
    carter = SIGMA / SHAPE.radius_ratio ** 2 * np.sqrt(tau / (2 / cadence))
    rate = N / elapsed
    ratio = (elapsed / N) / one_eval
    print(f"  {N} fits in {elapsed:.2f} s CPU; one batman evaluation {one_eval * 1e6:.1f} us; "
          f"{np.mean([f.evaluations for f in fits]):.1f} trial models per fit, each an interpolation of the "
          "shape's table (batman once per shape); the cost line below is the whole fit in batman evaluations")
    for n in (500, 2000):
        gen = windows(np.random.default_rng(8), n)
        tracemalloc.start()
        for w, _, _ in gen:
            fit_mid_time(w, SHAPE)
        peak = tracemalloc.get_traced_memory()[1]
        tracemalloc.stop()
        print(f"  streamed {n} transits: peak traced memory {peak / 1e6:.2f} MB")
    print(f"midtime: {rate:.0f} transits/s; {ratio:.1f} batman evaluations per fit; "
          f"scatter/Carter {np.std(errors) / carter:.2f}; pull std {np.std(pulls):.2f}")


NOISE_CASES = {
    "white": {},
    "red R1": {"red": (5e-4, 15 * MINUTE)},
    "red R2": {"red": (1e-3, 30 * MINUTE)},
    "errors 2x high": {"given": 2e-3},
    "errors 2x low": {"given": 5e-4},
    "long cadence": {"cadence": 30 * MINUTE, "exposure": 30 * MINUTE, "white": 3e-4},
}


def pulls(kw, seed, curves=50, noise="auto"):
    """Pulls of ``curves`` x 10 simulated transits, the seconds spent timing them, untimed count."""
    rng = np.random.default_rng(seed)
    t14, tau = LD_SHAPE.durations()
    out, spent, untimed = [], 0.0, 0
    for _ in range(curves):
        lc, truths, eph = simulate_curve(rng, **kw)
        start = time.process_time()
        timed, skipped, _ = time_light_curve(lc, cut_windows(lc, eph, t14, tau), LD_SHAPE, noise)
        spent += time.process_time() - start
        untimed += len(skipped)
        out += [(m.time - truths[m.epoch]) / m.uncertainty for m in timed]
    return np.array(out), spent, untimed


def noise_table():
    stds, beyond = {}, []
    for i, (name, kw) in enumerate(NOISE_CASES.items()):
        p, spent, untimed = pulls(kw, 2000 + i)
        stds[name] = np.std(p)
        beyond.append(np.mean(np.abs(p) > 3))
        print(f"  {name}: {p.size} transits, {untimed} untimed, pull std {stds[name]:.3f}, "
              f"beyond 3 sigma {100 * beyond[-1]:.1f}%, {1e3 * spent / max(p.size, 1):.2f} ms/transit")
    _, white_cost, _ = pulls(NOISE_CASES["red R1"], 2001, curves=20, noise="white")
    _, gp_cost, _ = pulls(NOISE_CASES["red R1"], 2001, curves=20, noise="gp")
    print(f"midtime-noise: pull std white {stds['white']:.2f}, red {stds['red R1']:.2f}, "
          f"red {stds['red R2']:.2f}, errors 2x high {stds['errors 2x high']:.2f}, "
          f"errors 2x low {stds['errors 2x low']:.2f}, long cadence {stds['long cadence']:.2f}; "
          f"beyond 3 sigma {100 * max(beyond):.1f}%; correlated path {gp_cost / white_cost:.1f}x the white cost")


if __name__ == "__main__":
    noise_table()
    main()
