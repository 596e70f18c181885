"""Time of the demo's full diagnosis, sampling included.

Run by hand (not part of the test suite):

    python benchmarks/diagnose_speed.py

Goal (issue): within 2 minutes on a 2-core machine.
"""

import tempfile
import time
from pathlib import Path

from ttvkit.demo import build_demo_scenario, target
from ttvkit.diagnosis import DiagnosisOptions
from ttvkit.physics import System
from ttvkit.pipeline import run_diagnosis
from ttvkit.timing import TimingTable
from ttvkit.timing.edits import TableEdits

if __name__ == "__main__":
    with tempfile.TemporaryDirectory() as folder:
        paths = build_demo_scenario().write(Path(folder) / "inputs")
        table = TimingTable.read(paths["timings"], target=target())
        edits = TableEdits(relabel={s.source: s.likely_standard for s in table.check_standards()})
        system = System.from_toml(paths["system"])
        start = time.perf_counter()
        diagnosis = run_diagnosis(table, system, Path(folder) / "report", DiagnosisOptions(progress=False),
                                  edits=edits, say=lambda *a: None).diagnosis
        elapsed = time.perf_counter() - start
    print(f"diagnose: demo ({len(table)} mid-times, {len(diagnosis.assessments)} hypotheses, sampled) "
          f"in {elapsed:.1f} s including the report")
