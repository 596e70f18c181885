"""Speed of `compare` with posterior sampling, and how it grows with the table.

Run by hand (not part of the test suite):

    python benchmarks/compare_speed.py

Simulates a 200-epoch and a 2000-epoch table of an invented planet with a
sinusoidal modulation (fixed seed), runs every hypothesis of `compare` with
emcee sampling (3000 steps) and prints the times.  Goal (issue): 200 epochs
in <= 60 s on a 2-core machine; 2000/200 cost ratio <= 12.
"""

import sys
import time
import warnings
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "tests"))

from simulate import simulate  # noqa: E402

from ttvkit.inference import compare  # noqa: E402


def run(n_epochs: int) -> tuple[float, int, int]:
    theta = [0.0, 2.0, 45 / 86400, -20 / 86400, 3300.0]
    table = simulate("sinusoidal-modulation", theta, np.random.default_rng(42), n=n_epochs,
                     span_epochs=max(4000, 2 * n_epochs))
    start = time.perf_counter()
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        result = compare(table, sampled=True, n_steps=3000, seed=1, progress=False)
    elapsed = time.perf_counter() - start
    converged = sum(bool(f.sampling and f.sampling.get("converged")) for f in result.fits)
    print(f"  {n_epochs} epochs: {elapsed:.1f} s; best {result.best.name}; converged {converged}/{len(result.fits)}")
    return elapsed, converged, len(result.fits)


if __name__ == "__main__":
    small, ok, total = run(200)
    large, _, _ = run(2000)
    print(f"compare: 200 epochs in {small:.1f} s; 2000/200 epochs cost ratio {large / small:.1f}; "
          f"converged {ok}/{total}")
