"""Speed of `compare` with posterior sampling, and how it grows with the table.

Run by hand (not part of the test suite):

    python benchmarks/compare_speed.py

Simulates a 200-epoch and a 2000-epoch table of an invented planet with a
sinusoidal modulation (fixed seed) and runs every hypothesis of `compare`
with emcee sampling at the defaults: 500 steps, extended until each chain is
50 autocorrelation times long (cap 20000).  The 200-epoch table is timed in
one process and with a new pool of one worker per core (as `ttvkit compare
--sample` does by default; the time includes starting the workers); the
pool's time is the `compare:` line's.
Goal (issue): 200 epochs in <= 10 s on a 2-core machine with every chain
converged.
"""

import sys
import time
import warnings
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "tests"))

from simulate import simulate  # noqa: E402

from ttvkit.inference import compare, local_pool  # noqa: E402


def run(n_epochs: int, executor=None, label: str = "") -> tuple[float, int, int]:
    theta = [0.0, 2.0, 45 / 86400, -20 / 86400, 3300.0]
    table = simulate("sinusoidal-modulation", theta, np.random.default_rng(42), n=n_epochs,
                     span_epochs=max(4000, 2 * n_epochs))
    start = time.perf_counter()
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        result = compare(table, sampled=True, seed=1, progress=False, executor=executor)
    elapsed = time.perf_counter() - start
    converged = sum(bool(f.sampling and f.sampling.get("converged")) for f in result.fits)
    steps = [f.sampling["n_steps"] for f in result.fits]
    print(f"  {n_epochs} epochs{label}: {elapsed:.1f} s; best {result.best.name}; converged "
          f"{converged}/{len(result.fits)}; chain lengths {min(steps)}-{max(steps)} steps")
    return elapsed, converged, len(result.fits)


if __name__ == "__main__":
    serial, _, _ = run(200, label=", one process")
    pool = local_pool()
    workers = pool._max_workers if pool is not None else 1
    try:
        small, ok, total = run(200, pool, label=f", {workers} workers")
        large, _, _ = run(2000, pool, label=f", {workers} workers")
    finally:
        if pool is not None:
            pool.shutdown()
    print(f"compare: 200 epochs in {small:.1f} s ({workers} workers; {serial:.1f} s in one process); "
          f"2000/200 epochs cost ratio {large / small:.1f}; converged {ok}/{total}")
