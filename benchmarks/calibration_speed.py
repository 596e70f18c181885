"""Injection and recovery of the verdict on one simulated table, timed.

Run by hand (not part of the test suite):

    python benchmarks/calibration_speed.py [n_per_set]

One invented table (100 transits over 11 yr of a 2-d orbit, drawn from 2000
epochs: irregular, with long gaps; fixed seed).  Three sets of
``n_per_set`` simulations (default 200) on a process pool over every core:
null tables (every default calibration hypothesis fitted), null tables
whose true scatter is 1.5× the stated errors (fitted with the excess-noise
jitter term), and a decay injected at 5σ of its detectability; the 68%
coverage of dP/dt is counted over the null and the decay fits.  Goals
(issue 15): false alarms ≤ 5% in both null sets, recovery ≥ 90%, coverage
63–73%, and one table's calibration with 200 simulations per amplitude
≤ 2 min on 2 cores.
"""

import sys
import time
import warnings
from concurrent.futures import ProcessPoolExecutor
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "tests"))
sys.path.insert(0, str(Path(__file__).resolve().parents[1]))   # this checkout before any installed copy

from simulate import simulate  # noqa: E402

from ttvkit.diagnosis.calibration import calibrate  # noqa: E402
from ttvkit.inference.likelihood import Likelihood  # noqa: E402


def main(n: int) -> None:
    table = simulate("constant-period", [0.0, 2.0], np.random.default_rng(5), n=100, span_epochs=2000)
    start = time.perf_counter()
    with warnings.catch_warnings(), ProcessPoolExecutor() as pool:
        warnings.simplefilter("ignore")
        plain = calibrate(table, n_null=n, n_per_amplitude=n, amplitudes=(5.0,), executor=pool, progress=False)
        first = time.perf_counter() - start
        under = calibrate(table, n_null=n, n_per_amplitude=0, error_scale=1.5, likelihood=Likelihood(jitter=True),
                          executor=pool, progress=False, seed=1)
    elapsed = time.perf_counter() - start
    print(f"  null verdicts: {plain.null_verdicts}")
    print(f"  understated-error null verdicts: {under.null_verdicts}")
    print(f"  one table, {n} null + {n} injected simulations: {first:.0f} s")
    recovered = plain.recovery["orbital-decay"][0][1]
    print(f"calibration: null false alarms {round(plain.false_alarms['any'] * n)}/{n}, understated errors "
          f"{round(under.false_alarms['any'] * n)}/{n}, decay 5 sigma recovered {round(recovered * n)}/{n}, "
          f"coverage {plain.coverage:.3f}; {elapsed:.0f} s")


if __name__ == "__main__":
    main(int(sys.argv[1]) if len(sys.argv) > 1 else 200)
