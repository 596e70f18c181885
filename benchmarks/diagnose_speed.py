"""Time of the demo's full diagnosis, sampling included.

Run by hand (not part of the test suite):

    python benchmarks/diagnose_speed.py

Goal (issue): within 2 minutes on a 2-core machine.
"""

import tempfile
import time
from pathlib import Path

from ttvkit.cli_diagnose import run_diagnosis
from ttvkit.demo import build_demo_scenario, target
from ttvkit.physics import System
from ttvkit.timing import TimingTable

if __name__ == "__main__":
    with tempfile.TemporaryDirectory() as folder:
        paths = build_demo_scenario().write(Path(folder) / "inputs")
        table = TimingTable.read(paths["timings"], target=target())
        relabel = [f"{s.source}={s.likely_standard}" for s in table.check_standards()]
        system = System.from_toml(paths["system"])
        start = time.perf_counter()
        diagnosis, _, _ = run_diagnosis(table, system, Path(folder) / "report", relabel=relabel,
                                        progress=False, say=lambda *a: None)
        elapsed = time.perf_counter() - start
    print(f"diagnose: demo ({len(table)} mid-times, {len(diagnosis.assessments)} hypotheses, sampled) "
          f"in {elapsed:.1f} s including the report")
