"""A survey killed with SIGKILL mid-way and run again ends with every target exactly once, each report
the same as a single-target run (:func:`ttvkit.pipeline.run_diagnosis`, the issue's reference), and no
half-written folder.  The survey runs as ``ttvkit survey`` in its own process group (its dask scheduler
and worker processes included), which the test kills whole.
"""

import json
import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest
from survey.invented import TEST_HYPOTHESES, assert_same_report, target_name, write_targets

from ttvkit.diagnosis import DiagnosisOptions
from ttvkit.io.outdir import MANIFEST
from ttvkit.pipeline import run_diagnosis
from ttvkit.survey import read_manifest, read_target

NOW = 2461000.5
ROOT = Path(__file__).resolve().parents[2]


def _survey_command(manifest, out, workers=1):
    return [sys.executable, "-m", "ttvkit.cli", "survey", str(manifest), "--out", str(out), "--workers",
            str(workers), "--no-sample", "--now", str(NOW), "--no-progress"]


def _environment():
    env = dict(os.environ)
    env["PYTHONPATH"] = os.pathsep.join([str(ROOT)] + [p for p in [env.get("PYTHONPATH")] if p])
    return env


def _kill_when(out: Path, n_rows: int, process, timeout_s: float = 600.0) -> int:
    """SIGKILL the survey's process group once ``n_rows`` rows exist; returns how many rows there were."""
    start = time.monotonic()
    rows = out / "rows"
    while time.monotonic() - start < timeout_s:
        done = len(list(rows.glob("*.json"))) if rows.is_dir() else 0
        if done >= n_rows or process.poll() is not None:
            break
        time.sleep(0.05)
    os.killpg(process.pid, signal.SIGKILL)
    process.wait()
    return len(list(rows.glob("*.json")))


def _run(manifest, out, n_targets, kill_after, workers=1):
    process = subprocess.Popen(_survey_command(manifest, out, workers), cwd=ROOT, env=_environment(),
                               stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL, start_new_session=True)
    finished_before = _kill_when(out, kill_after, process)
    assert 0 < finished_before < n_targets, "the kill must land mid-way for this test to mean anything"
    again = subprocess.run(_survey_command(manifest, out, workers), cwd=ROOT, env=_environment(),
                           capture_output=True, text=True, timeout=900)
    assert again.returncode == 0, again.stderr
    return finished_before, again.stdout


def _check_each_once(out: Path, names: list) -> None:
    assert sorted(p.name for p in (out / "targets").iterdir()) == sorted(names)
    assert sorted(p.name for p in (out / "rows").iterdir()) == sorted(f"{n}.json" for n in names)
    # hidden names other than ttvkit's own output manifest (io.outdir.MANIFEST) would be staging leftovers
    assert not [p for p in out.rglob(".*") if p.name != MANIFEST], "a staging folder or file was left behind"
    lines = (out / "summary.ecsv").read_text().splitlines()
    body = [line for line in lines if not line.startswith("#")][1:]
    assert sorted(line.split(" ")[0] for line in body) == sorted(names)
    for n in names:
        assert json.loads((out / "rows" / f"{n}.json").read_text())["status"] == "done"


def test_killed_survey_rerun_has_every_target_once(tmp_path):
    n = 5
    columns = {"hypotheses": ";".join(TEST_HYPOTHESES)}
    manifest = write_targets(tmp_path / "in", n, n_points=20, columns=columns)
    out = tmp_path / "survey"
    finished_before, stdout = _run(manifest, out, n, kill_after=2)
    assert f"{finished_before} finished earlier" in stdout
    names = [target_name(i) for i in range(n)]
    _check_each_once(out, names)
    options = DiagnosisOptions(sampled=False, hypotheses=TEST_HYPOTHESES, now=NOW, progress=False)
    for target in read_manifest(manifest)[finished_before - 1: finished_before + 1]:  # either side of the kill
        table, system = read_target(target)
        run_diagnosis(table, system, tmp_path / target.name, options, say=lambda *a: None)
        assert_same_report(out / "targets" / target.name, tmp_path / target.name)


@pytest.mark.slow
def test_killed_larger_survey_on_two_workers(tmp_path):
    n = 12
    manifest = write_targets(tmp_path / "in", n, n_points=30, columns={"hypotheses": ";".join(TEST_HYPOTHESES)})
    out = tmp_path / "survey"
    finished_before, stdout = _run(manifest, out, n, kill_after=5, workers=2)
    assert f"{finished_before} finished earlier" in stdout
    _check_each_once(out, [target_name(i) for i in range(n)])
