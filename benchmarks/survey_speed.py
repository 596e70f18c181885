"""Survey speed, memory and resumption on invented targets (issue 18).

    python benchmarks/survey_speed.py [--targets 40] [--memory 20 200] [--keep DIR]

1. Speed: the same ``--targets`` invented targets surveyed on a LocalCluster of 1 worker and of 2
   workers (each cluster started and warmed before the clock starts); the ratio of the wall times.
2. Memory: peak resident memory of the whole survey (this process, the scheduler and the workers,
   sampled every 0.1 s) for the two ``--memory`` sizes; the ratio large/small.
3. Resumption: ``ttvkit survey`` on the ``--targets`` targets in its own process group, killed with
   SIGKILL once a third of the targets are done, then run again; R/R counts the targets that end
   exactly once, finished, with no staging folder left.

Diagnoses are quick ones (no sampling, three hypotheses, 30 mid-times each) so that the survey
machinery, not one long fit, is what is measured.  Ends with the issue's line.
"""

from __future__ import annotations

import argparse
import json
import os
import signal
import subprocess
import sys
import tempfile
import threading
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path[:0] = [str(ROOT), str(ROOT / "tests")]

NOW = 2461000.5


def _options():
    from survey.invented import TEST_HYPOTHESES

    from ttvkit.diagnosis import DiagnosisOptions

    return DiagnosisOptions(sampled=False, hypotheses=TEST_HYPOTHESES, now=NOW, progress=False)


def _client(n_workers: int):
    from distributed import Client

    from ttvkit.survey import start_local_cluster

    client = Client(start_local_cluster(n_workers))   # the cluster run_survey makes for itself
    client.run(lambda: __import__("ttvkit.pipeline"))  # imports paid before the clock starts
    return client


class PeakMemory:
    """Peak of the summed RSS of this process and all its children, sampled in a thread."""

    def __init__(self, every_s: float = 0.1):
        import psutil

        self.process, self.every, self.peak, self._stop = psutil.Process(), every_s, 0, threading.Event()

    def _sample(self):
        import psutil

        while not self._stop.is_set():
            total = 0
            for p in [self.process] + self.process.children(recursive=True):
                try:
                    total += p.memory_info().rss
                except psutil.Error:
                    pass
            self.peak = max(self.peak, total)
            time.sleep(self.every)

    def __enter__(self):
        self._thread = threading.Thread(target=self._sample, daemon=True)
        self._thread.start()
        return self

    def __exit__(self, *exc):
        self._stop.set()
        self._thread.join()


def _survey(targets, out, client):
    from ttvkit.survey import run_survey

    start = time.perf_counter()
    run = run_survey(targets, out, _options(), executor=client, progress=False, say=lambda *a: None)
    assert run.failed == 0, run.summary[run.summary["status"] != "done"]
    return time.perf_counter() - start


def speed(targets, work: Path) -> float:
    times = {}
    for n_workers in (1, 2):
        client = _client(n_workers)
        try:
            times[n_workers] = _survey(targets, work / f"speed{n_workers}", client)
        finally:
            client.close()
            client.cluster.close()
        print(f"speed: {len(targets)} targets on {n_workers} worker(s): {times[n_workers]:.1f} s "
              f"({times[n_workers] / len(targets):.2f} s a target)", flush=True)
    return times[1] / times[2]


def memory(all_targets, sizes, work: Path) -> float:
    peaks = {}
    for n in sizes:
        with PeakMemory() as meter:
            client = _client(2)
            try:
                _survey(all_targets[:n], work / f"memory{n}", client)
            finally:
                client.close()
                client.cluster.close()
        peaks[n] = meter.peak
        print(f"memory: {n} targets, peak {meter.peak / 2**20:.0f} MB (driver, scheduler and 2 workers)",
              flush=True)
    return peaks[sizes[1]] / peaks[sizes[0]]


def resumed(manifest: Path, n: int, work: Path) -> tuple:
    out = work / "resumed"
    command = [sys.executable, "-m", "ttvkit.cli", "survey", str(manifest), "--out", str(out), "--workers", "2",
               "--no-sample", "--now", str(NOW), "--no-progress"]
    env = dict(os.environ, PYTHONPATH=str(ROOT))
    process = subprocess.Popen(command, cwd=ROOT, env=env, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL,
                               start_new_session=True)
    rows = out / "rows"
    while process.poll() is None and (len(list(rows.glob("*.json"))) if rows.is_dir() else 0) < max(1, n // 3):
        time.sleep(0.05)
    os.killpg(process.pid, signal.SIGKILL)
    process.wait()
    before = len(list(rows.glob("*.json")))
    subprocess.run(command, cwd=ROOT, env=env, check=True, capture_output=True)
    names = sorted(json.loads(p.read_text())["target"] for p in rows.glob("*.json")
                   if json.loads(p.read_text())["status"] == "done")
    folders = sorted(p.name for p in (out / "targets").iterdir())
    # hidden names are staging leftovers, except ttvkit's own output manifests (io.outdir)
    staging = [p for p in out.rglob(".*") if p.name != ".ttvkit-manifest.json"]
    once = len(names) if names == folders and not staging else 0
    print(f"resumed: killed after {before} of {n} targets; after the re-run {len(names)} finished, "
          f"{len(folders)} folders, {len(staging)} staging leftovers", flush=True)
    return once, n


def main(argv=None) -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    parser.add_argument("--targets", type=int, default=40)
    parser.add_argument("--memory", type=int, nargs=2, default=[20, 200], metavar=("SMALL", "LARGE"))
    parser.add_argument("--keep", type=Path, help="work in this folder and keep it (default: a temporary one)")
    args = parser.parse_args(argv)
    from survey.invented import TEST_HYPOTHESES, write_targets

    from ttvkit.survey import read_manifest

    n_all = max(args.targets, *args.memory)
    with tempfile.TemporaryDirectory() as tmp:
        work = args.keep or Path(tmp)
        work.mkdir(parents=True, exist_ok=True)
        manifest = write_targets(work / "inputs", n_all, columns={"hypotheses": ";".join(TEST_HYPOTHESES)})
        targets = read_manifest(manifest)
        print(f"load: {os.getloadavg()[0]:.1f} (1-min load average on {os.cpu_count()} cores)", flush=True)
        ratio = speed(targets[:args.targets], work)
        mem = memory(targets, args.memory, work)
        small = work / "inputs" / "resume.csv"
        small.write_text("\n".join(manifest.read_text().splitlines()[:args.targets + 1]) + "\n")
        once, total = resumed(small, args.targets, work)
        print(f"load: {os.getloadavg()[0]:.1f} at the end")
    print(f"survey: {args.targets} targets; 2 workers {ratio:.2f}x one worker; memory "
          f"{args.memory[1]}/{args.memory[0]} targets {mem:.2f}x; resumed {once}/{total}")


if __name__ == "__main__":
    main()
