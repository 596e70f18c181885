"""Speed and accuracy of per-transit mid-time fits.

Run by hand (not part of the test suite):

    python benchmarks/midtime_speed.py

Simulates 3000 white-noise transits in 200-point windows (batman, fixed
seed), times them with the fast path, and prints: transits per second; the
cost of one fit in units of one batman evaluation of the same window
(measured in the same run; goal <= 30); the scatter of the recovered
mid-times over the Carter et al. (2008) bound; the pull std; and the peak
memory per transit of a streamed `measure` run at two sizes (flat = the
same).
"""

import time
import tracemalloc

import batman
import numpy as np

from ttvkit.lightcurves.midtime import TransitShape, WindowModel, fit_mid_time
from ttvkit.lightcurves.reading import Window

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
    start = time.perf_counter()
    fits = [fit_mid_time(w, SHAPE) for w, _, _ in data]
    elapsed = time.perf_counter() - start
    w0 = data[0][0]
    model = WindowModel(w0.time, w0.flux, w0.flux_err, SHAPE)
    reps = 5000
    t1 = time.perf_counter()
    for i in range(reps):
        model.light_curve(1e-4 * (i % 7))
    one_eval = (time.perf_counter() - t1) / reps
    errors = np.array([f.time - truth for f, (_, truth, _) in zip(fits, data)])
    pulls = errors / np.array([f.uncertainty for f in fits])
    _, tau = SHAPE.durations()
    cadence = data[0][2]
    carter = SIGMA / SHAPE.radius_ratio ** 2 * np.sqrt(tau / (2 / cadence))
    rate = N / elapsed
    ratio = (elapsed / N) / one_eval
    print(f"  {N} fits in {elapsed:.2f} s; one batman evaluation {one_eval * 1e6:.1f} us; "
          f"{np.mean([f.evaluations for f in fits]):.1f} model calls per fit")
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


if __name__ == "__main__":
    main()
