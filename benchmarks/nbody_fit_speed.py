"""Cost of the n-body-perturber hypothesis on the demo scenario.

Run by hand (not part of the test suite):

    python benchmarks/nbody_fit_speed.py [sampler_steps]

Builds the invented demo compilation (Orvessa b, 1.87 d, 21 years of
mid-times) and times: one model evaluation (one N-body integration over the
data), a batch of 32 (an emcee half-ensemble's worth, on threads), the
least-squares fit from its starting points, and a short emcee run.  Prints
the fitted perturber and one summary line.
"""

import sys
import tempfile
import time
import warnings
from pathlib import Path

import numpy as np


def main(sampler_steps: int = 200):
    from ttvkit.demo import build_demo_scenario, target
    from ttvkit.diagnosis import timing_context
    from ttvkit.hypotheses import TimingData, get_hypothesis
    from ttvkit.inference import fit, sample
    from ttvkit.physics.system import System
    from ttvkit.timing import TimingTable

    folder = Path(tempfile.mkdtemp())
    paths = build_demo_scenario().write(folder)
    table = TimingTable.read(paths["timings"], target=target())
    system = System.from_toml(paths["system"])
    data = TimingData.from_table(table, timing_context(system))
    hyp = get_hypothesis("n-body-perturber")
    lo, hi = hyp.bounds(data)
    theta = np.array([0.0, data.period, 5.0, 2.1 * data.period, 0.0, 0.0, 1.0])
    hyp.predict(theta, data)                                 # compile outside the timing
    start = time.perf_counter()
    for _ in range(5):
        hyp.predict(theta, data)
    one = (time.perf_counter() - start) / 5
    batch = np.tile(theta, (32, 1))
    batch[:, 2] = np.linspace(1, 30, 32)
    start = time.perf_counter()
    hyp.predict(batch, data)
    many = time.perf_counter() - start
    start = time.perf_counter()
    result = fit(data, hyp)
    fitting = time.perf_counter() - start
    p = result.to_dict()["parameters"]
    print(f"  {data.n} mid-times over {data.span / 365.25:.1f} yr ({data.span / data.period:.0f} orbits); "
          f"one evaluation {one * 1e3:.0f} ms; 32 on threads {many:.2f} s")
    print(f"  fit: {p['perturber_mass']['value']:.3g} Earth masses at "
          f"{p['perturber_period']['value'] / data.period:.4f}x, chi2 {result.chi2:.1f} "
          f"(constant period: {fit(data, 'constant-period').chi2:.1f})")
    start = time.perf_counter()
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        sample(result, n_steps=sampler_steps, max_steps=None, progress=False)
    sampling = time.perf_counter() - start
    print(f"n-body-perturber: one evaluation {one * 1e3:.0f} ms; fit {fitting:.0f} s; "
          f"emcee {sampler_steps} steps x 32 walkers {sampling:.0f} s "
          f"({sampling / sampler_steps:.2f} s per step)")


if __name__ == "__main__":
    main(*(int(x) for x in sys.argv[1:2]))
