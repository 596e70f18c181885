"""Files are sacred (issue 13): --force replaces only ttvkit's own outputs; staging never lingers."""

from __future__ import annotations

import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest

from ttvkit.cli.main import main
from ttvkit.errors import OutputExistsError
from ttvkit.io.outdir import MANIFEST, staged_folder


def _snapshot(folder: Path) -> dict:
    return {p.relative_to(folder).as_posix(): p.read_bytes() for p in folder.rglob("*") if p.is_file()}


def test_force_replaces_only_ttvkits_files(tmp_path):
    out = tmp_path / "report"
    with staged_folder(out, force=False) as stage:
        (stage / "a.txt").write_text("first")
        (stage / "old.txt").write_text("stale")
    assert (out / MANIFEST).exists()
    with staged_folder(out, force=True) as stage:
        (stage / "a.txt").write_text("second")
    assert (out / "a.txt").read_text() == "second"
    assert not (out / "old.txt").exists()  # ttvkit's own stale output removed
    (out / "notes.txt").write_text("mine")
    with pytest.raises(OutputExistsError, match=r"ttvkit did not write \(notes.txt\)"):
        with staged_folder(out, force=True) as stage:
            (stage / "a.txt").write_text("third")
    assert (out / "notes.txt").read_text() == "mine" and (out / "a.txt").read_text() == "second"
    assert not [p for p in out.iterdir() if p.name.startswith(".ttvkit-stage-")]


def test_stage_left_by_a_killed_run_is_swept_by_the_next(tmp_path):
    # SIGKILL cannot be caught: the killed run's staging folder stays until ttvkit next writes there
    # (found by benchmarks/survey_speed.py's kill -9 and re-run)
    out = tmp_path / "report"
    with staged_folder(out, force=False) as stage:
        (stage / "a.txt").write_text("first")
    stale = out / ".ttvkit-stage-killed"
    stale.mkdir()
    (stale / "a.txt").write_text("half written")
    with staged_folder(out, force=True) as stage:
        (stage / "a.txt").write_text("second")
    assert not stale.exists() and (out / "a.txt").read_text() == "second"


def test_out_dot_works(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    for text in ("one", "two"):
        with staged_folder(".", force=True) as stage:
            (stage / "a.txt").write_text(text)
    assert (tmp_path / "a.txt").read_text() == "two"
    assert sorted(p.name for p in tmp_path.iterdir()) == [MANIFEST, "a.txt"]


def test_outputs_respect_the_umask(tmp_path):
    old = os.umask(0o022)
    try:
        with staged_folder(tmp_path / "r", force=False) as stage:
            (stage / "sub").mkdir()
            (stage / "sub" / "x.txt").write_text("x")
    finally:
        os.umask(old)
    assert (tmp_path / "r").stat().st_mode & 0o777 == 0o755
    assert (tmp_path / "r" / "sub").stat().st_mode & 0o777 == 0o755
    assert (tmp_path / "r" / "sub" / "x.txt").stat().st_mode & 0o777 == 0o644


def test_diagnose_force_next_to_inputs_keeps_them(tmp_path, capsys):
    data = tmp_path / "data"
    data.mkdir()
    (data / "t.csv").write_text("epoch,time,uncertainty\n0,2456000.0,0.001\n")
    (data / "s.toml").write_text('[star]\nmass = "1 Msun"\nradius = "1 Rsun"\n')
    (data / "notes.txt").write_text("my notes")
    before = _snapshot(data)
    code = main(["diagnose", str(data / "t.csv"), "--system", str(data / "s.toml"), "--out", str(data),
                 "--force", "--standard", "BJD_TDB"])
    err = capsys.readouterr().err
    assert code == 2 and "holds the input" in err
    assert _snapshot(data) == before


def test_demo_force_keeps_an_unrelated_file(tmp_path, capsys):
    (tmp_path / "keep.txt").write_text("unrelated")
    code = main(["demo", "--out", str(tmp_path), "--force", "--no-sample", "--no-perturbers"])
    assert code == 2 and "did not write" in capsys.readouterr().err
    assert (tmp_path / "keep.txt").read_text() == "unrelated"


def test_out_under_a_file_is_refused(tmp_path, capsys):
    (tmp_path / "f").write_text("x")
    code = main(["demo", "--out", str(tmp_path / "f" / "d"), "--no-sample", "--no-perturbers"])
    assert code == 2 and "is a file" in capsys.readouterr().err


_SCRIPT = """
import sys, time
from pathlib import Path
from ttvkit.cli.main import _interrupt_on_sigterm
from ttvkit.io.outdir import staged_folder
_interrupt_on_sigterm()
try:
    with staged_folder(sys.argv[1], force=False) as stage:
        (stage / "half.txt").write_text("x" * 1000)
        print("ready", flush=True)
        time.sleep(60)
except KeyboardInterrupt:
    sys.exit(130)
"""


@pytest.mark.parametrize("sig", [signal.SIGTERM, signal.SIGINT])
def test_signal_during_writing_leaves_nothing(tmp_path, sig):
    out = tmp_path / "report"
    (tmp_path / "input.csv").write_text("precious")
    proc = subprocess.Popen([sys.executable, "-c", _SCRIPT, str(out)], stdout=subprocess.PIPE, text=True,
                            cwd=Path(__file__).resolve().parents[2])
    try:
        assert proc.stdout.readline().strip() == "ready"
        proc.send_signal(sig)
        assert proc.wait(timeout=30) == 130
    finally:
        if proc.poll() is None:
            proc.kill()
    time.sleep(0.1)
    assert sorted(p.name for p in tmp_path.iterdir()) == ["input.csv"]  # no report, no hidden staging
    assert (tmp_path / "input.csv").read_text() == "precious"
