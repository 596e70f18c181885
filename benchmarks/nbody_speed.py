"""Throughput of the compiled N-body engine against the DOP853 reference.

Run by hand (not part of the test suite):

    python benchmarks/nbody_speed.py [n_systems]

Integrates a batch of two-planet systems (a transiting planet at 10 d and a
perturber between 1.5x and 3.5x its period, 1e-5 to 1e-4 M_sun, fixed seed)
over 500 inner orbits in one call of the compiled engine, timing the
transiting planet (as the
perturber search does), then a sample of the same systems one by one with
scipy's DOP853 (rtol 1e-12) -- the first 20 and the 10 whose times move
most when the step is divided by three -- and prints the speed-up per
system and the worst transit-time difference of the transiting planet on
the sample.  Goal (issue): 100x
at <= 1 s agreement for 1000 systems.
"""

import sys
import time

import numpy as np

from ttvkit.physics.nbody import reference_transit_times, transit_times


def main(n_systems: int = 1000, n_reference: int = 20):
    rng = np.random.default_rng(3)
    s = n_systems
    masses = np.column_stack([np.ones(s), np.full(s, 1e-3), 10 ** rng.uniform(-5, -4, s)])
    period = np.column_stack([np.full(s, 10.0), 10 * rng.uniform(1.5, 3.5, s)])
    ecc = rng.uniform(0, 0.03, (s, 2))
    omega = rng.uniform(0, 2 * np.pi, (s, 2))
    inc = np.full((s, 2), np.pi / 2)
    node = np.zeros((s, 2))
    mean = rng.uniform(0, 2 * np.pi, (s, 2))
    t_end = 5000.0
    transit_times(masses[:2], period[:2], ecc[:2], omega[:2], inc[:2], node[:2], mean[:2], 50.0)  # compile
    start = time.perf_counter()
    fast = transit_times(masses, period, ecc, omega, inc, node, mean, t_end, planets=0)
    engine = time.perf_counter() - start
    # the reference sample: the first n_reference systems, plus the ten whose
    # times move most when the step is divided by three (the hardest cases)
    from ttvkit.physics.nbody import default_step

    finer = transit_times(masses, period, ecc, omega, inc, node, mean, t_end, planets=0,
                          dt=default_step(period, ecc) / 3)
    moved = np.nanmax(np.abs(fast - finer), axis=(1, 2))
    pick = np.unique(np.concatenate([np.arange(n_reference), np.argsort(-moved)[:10]]))
    start = time.perf_counter()
    ref = reference_transit_times(masses[pick], period[pick], ecc[pick], omega[pick], inc[pick], node[pick],
                                  mean[pick], t_end)
    reference = (time.perf_counter() - start) / pick.size
    worst = 0.0
    for k, i in enumerate(pick):
        a = fast[i, 0][~np.isnan(fast[i, 0])]
        b = ref[k][0]
        if a.size != b.size:
            worst = np.inf
            continue
        worst = max(worst, float(np.max(np.abs(a - b)) * 86400))
    print(f"  reference sample: {pick.size} systems (the first {n_reference} and the 10 that move most at "
          f"a third of the step)")
    transits = np.isfinite(fast).sum()
    print(f"  compiled engine: {engine:.1f} s for {s} systems ({transits / engine:.0f} system-transits/s); "
          f"reference: {reference:.1f} s per system")
    print(f"nbody: {s} systems x 500 orbits; speedup {reference * s / engine:.0f}x vs reference; "
          f"worst transit-time difference {worst:.2f} s")


if __name__ == "__main__":
    main(int(sys.argv[1]) if len(sys.argv) > 1 else 1000)
