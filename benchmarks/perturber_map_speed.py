"""The full mass-period map on the demo scenario: wall time and peak memory.

Run by hand (not part of the test suite):

    python benchmarks/perturber_map_speed.py [n_periods] [n_phases]

Builds the invented demo compilation (Orvessa b, 1.87 d, 21 years of
mid-times), converts it to BJD_TDB and maps perturbers over 0.3-10x the
period with the default grid (500 periods x 4 phases = 2000 points), on a
process pool over all cores.  Goal (issue): within 5 minutes on a 2-core
machine, memory under 2 GB.  Prints one summary line.
"""

import os
import resource
import sys
import tempfile
import time
from pathlib import Path


def main(n_periods: int = 500, n_phases: int = 4):
    from ttvkit.demo import build_demo_scenario, target
    from ttvkit.diagnosis.perturbers import map_perturbers
    from ttvkit.physics.resonance import perturber_periods
    from ttvkit.physics.system import System
    from ttvkit.timing import TimingTable

    folder = Path(tempfile.mkdtemp())
    paths = build_demo_scenario().write(folder)
    table = TimingTable.read(paths["timings"], target=target())
    system = System.from_toml(paths["system"])
    start = time.perf_counter()
    pmap = map_perturbers(table, system, periods=perturber_periods(system.orbit.period, n=n_periods),
                          n_phases=n_phases, progress=True)
    wall = time.perf_counter() - start
    own = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    workers = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss / 1024
    best = pmap.to_dict()["best_point"]
    print(f"  {pmap.n_points} grid points ({int(pmap.grid['integrated'].sum())} integrated, two passes); "
          f"best: {best['mass_mearth']:.3g} Earth masses at {best['period_ratio']:.3f}x")
    print(f"perturber map: {pmap.n_points} points on {os.cpu_count()} cores in {wall:.0f} s; "
          f"peak memory {own:.0f} MB main + {workers:.0f} MB per worker")


if __name__ == "__main__":
    main(*(int(x) for x in sys.argv[1:3]))
