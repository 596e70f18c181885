"""Run a survey: every target as a task on an executor, resumable, then one summary.

:func:`run_survey` sends one task per target (:func:`ttvkit.survey.task.survey_target`)
to an executor: a dask.distributed ``LocalCluster`` made for the run by
default, an existing cluster's scheduler address, or any object with
``submit`` (a dask ``Client``, a ``concurrent.futures`` pool) or ``map``.
dask.distributed is used because the same code then runs on one machine
or on a cluster, with a scheduler that survives a worker's death.  Each
task writes its own result to the survey folder and returns only the
target's name and status, so the process running the survey holds no
target's data and its memory does not grow with the number of targets.
A target is finished when its row exists; run again, the survey skips
finished targets (``redo`` to run them all) and retries failed ones.
"""

from __future__ import annotations

import json
import shutil
from dataclasses import dataclass
from pathlib import Path

from ttvkit.diagnosis.diagnose import DiagnosisOptions
from ttvkit.errors import InputError, OutputExistsError
from ttvkit.io.readers import atomic_write_text
from ttvkit.survey.manifest import load_targets
from ttvkit.survey.summary import read_rows, summary_frame, write_index_html, write_summary_ecsv
from ttvkit.survey.task import calibration_key, failure_row, folders, survey_target, write_row

__all__ = ["run_survey", "SurveyRun", "MARKER", "start_local_cluster"]

#: The file that marks a folder as a survey's (a survey resumes only in a folder that has it).
MARKER = "survey.json"


@dataclass(frozen=True)
class SurveyRun:
    """What :func:`run_survey` did: the summary, the files, and how many targets ran, were skipped, failed."""

    summary: object      # pandas DataFrame, one line per target
    paths: dict
    ran: int
    skipped: int
    failed: int


def run_survey(targets, out: "str | Path", options: DiagnosisOptions | None = None, *, executor=None,
               scheduler: str | None = None, n_workers: int = 2, redo: bool = False, progress: bool = True,
               calibration=None, say=print) -> SurveyRun:
    """Diagnose every target of a survey into its own report folder and write one summary.

    Parameters
    ----------
    targets : str, Path or list of SurveyTarget
        A manifest (CSV/ECSV), a folder of ``NAME.ecsv`` + ``NAME.toml`` pairs, or the targets.
    out : str or Path
        The survey folder: new, empty, or an earlier run of a survey (resumed).
        It receives ``targets/NAME/`` (each exactly what
        :func:`ttvkit.pipeline.run_diagnosis` writes), ``summary.ecsv``,
        ``index.html``, ``rows/`` and ``thumbnails/``.
    options : DiagnosisOptions, optional
        The diagnosis of every target; a manifest's option columns change it per target.
    executor : object with ``submit`` or ``map``, optional
        Runs the tasks (a dask ``Client``, a process pool); it must see ``out``
        on its file system.  Default: a dask ``LocalCluster`` of ``n_workers``
        single-threaded processes, made and closed here.
    scheduler : str, optional
        Address of a running dask scheduler to use instead (``tcp://host:8786``).
    n_workers : int
        Worker processes of the default ``LocalCluster``.
    redo : bool
        Run finished targets again (their folders are replaced).
    progress : bool
        Show a progress bar.
    calibration : CalibrationOptions, optional
        Also calibrate every target's verdict on its own epochs and errors
        (:func:`ttvkit.diagnosis.calibration.calibrate`, run inside the
        target's task): ``calibration/NAME.json``, and the summary columns
        ``false_alarm_rate`` and ``decay_found_half_the_time`` (ms/yr).  It
        fits the target's own hypotheses when the survey or the manifest row
        names them (N-body ones left out), else the calibration's own set.  A
        target finished without this calibration (none, or other settings)
        is run again.
    say : callable
        Progress lines.

    Returns
    -------
    SurveyRun
    """
    options = options or DiagnosisOptions()
    targets = load_targets(targets)
    out = _prepare(Path(out), targets)
    where = folders(out)
    finished = _finished(where, targets, calibration) if not redo else set()
    todo = [t for t in targets if t.name not in finished]
    say(f"survey: {len(targets)} targets; {len(finished)} already finished, {len(todo)} to diagnose")
    if todo:
        _run_tasks(todo, out, options, executor, scheduler, n_workers, progress, calibration)
    rows = read_rows(where["rows"], [t.name for t in targets])
    missing = {t.name for t in targets} - {r["target"] for r in rows}
    for name in sorted(missing):  # a task lost with its worker and not reported: say so, never skip silently
        write_row(where["rows"], failure_row(name, RuntimeError("no result came back from the executor")))
    if missing:
        rows = read_rows(where["rows"], [t.name for t in targets])
    frame = summary_frame(rows)
    paths = {"summary.ecsv": write_summary_ecsv(frame, out / "summary.ecsv"),
             "index.html": write_index_html(rows, out / "index.html", title=f"ttvkit survey: {out.name}")}
    failed = int(sum(r["status"] != "done" for r in rows))
    say(f"survey: {len(rows) - failed} diagnosed, {failed} failed; summary {paths['summary.ecsv']}, "
        f"index {paths['index.html']}")
    return SurveyRun(frame, paths, len(todo), len(finished), failed)


def _prepare(out: Path, targets) -> Path:
    """Make or resume the survey folder; remove what an interrupted earlier run of it left half-written."""
    if out.exists() and not out.is_dir():
        raise OutputExistsError(f"{out}: exists and is not a folder")
    if out.is_dir() and any(out.iterdir()) and not (out / MARKER).is_file():
        raise OutputExistsError(f"{out}: is not empty and holds no earlier survey ({MARKER}); "
                                "choose a new or empty folder")
    if not out.resolve().parent.exists():
        raise InputError(f"{out}: the parent folder {out.resolve().parent} does not exist")
    out.mkdir(exist_ok=True)
    for folder in folders(out).values():
        folder.mkdir(exist_ok=True)
        for stale in folder.glob(".*"):  # staging names of our own writers (staged_folder, atomic writes)
            if stale.name.endswith((".part", ".old")):
                shutil.rmtree(stale) if stale.is_dir() else stale.unlink()
    for stale in out.glob(".*.part"):
        stale.unlink()
    if not (out / MARKER).is_file():
        atomic_write_text(out / MARKER, json.dumps({"kind": "ttvkit survey", "first_targets":
                                                    [t.name for t in targets[:5]]}, indent=1) + "\n")
    return out


def _finished(where: dict, targets, calibration=None) -> set:
    """Targets whose row says done and whose report folder (and the calibration asked, if any) is in place."""
    done = set()
    asked = calibration_key(calibration) if calibration is not None else None
    for t in targets:
        row = where["rows"] / f"{t.name}.json"
        if row.is_file() and (where["targets"] / t.name / "report.html").is_file():
            try:
                content = json.loads(row.read_text(encoding="utf-8"))
                if content["status"] == "done" and (
                        asked is None or (content.get("calibration_asked") == asked
                                                and (where["calibration"] / f"{t.name}.json").is_file())):
                    done.add(t.name)
            except (ValueError, KeyError):
                pass  # an unreadable row is not a finished target: run it again
    return done


def _run_tasks(todo, out: Path, options, executor, scheduler, n_workers: int, progress: bool,
               calibration=None) -> None:
    from tqdm.auto import tqdm

    own = None
    if executor is None:
        own = _dask_client(scheduler, n_workers)
        executor = own
    bar = tqdm(total=len(todo), desc="survey", unit="target", disable=not progress)
    try:
        for name, status in _completed(executor, todo, out, options, calibration):
            bar.update(1)
            bar.set_postfix_str(f"{name}: {status}", refresh=False)
    finally:
        bar.close()
        if own is not None:
            cluster = getattr(own, "cluster", None)
            own.close()
            if cluster is not None:
                cluster.close()


def _dask_client(scheduler: str | None, n_workers: int):
    from distributed import Client

    if scheduler:
        try:
            return Client(scheduler, timeout="30s")
        except (OSError, TimeoutError, ValueError) as exc:
            raise InputError(f"cannot reach the dask scheduler at {scheduler!r} ({exc}); start it or check "
                             "the address (tcp://HOST:PORT)") from None
    return Client(start_local_cluster(n_workers))


def start_local_cluster(n_workers: int = 2):
    """The survey's dask ``LocalCluster``: ``n_workers`` single-threaded processes, dask's profiler off.

    dask's statistical profiler samples every worker's stack every 10 ms and keeps the samples of
    every task; over a survey's many long tasks that grew each worker by ~6 MB a target (tracemalloc:
    distributed/profile.py held 300 MB after 16 targets), so a survey's memory grew with its length.
    A cluster of your own (``scheduler=``) should be started with
    ``distributed.worker.profile.enabled: false`` for the same reason.
    """
    import dask
    from distributed import LocalCluster

    if n_workers < 1:
        raise InputError(f"a survey needs at least one worker (got {n_workers})")
    with dask.config.set({"distributed.worker.profile.enabled": False}):   # the nannies pass it on
        return LocalCluster(n_workers=n_workers, threads_per_worker=1, processes=True,
                            dashboard_address=":0", silence_logs=40)


def _completed(executor, todo, out: Path, options, calibration=None):
    """Yield ``(name, status)`` as tasks finish; a task that raised becomes a failure row."""
    if not hasattr(executor, "submit"):
        yield from executor.map(survey_target, todo, [out] * len(todo), [options] * len(todo),
                                [calibration] * len(todo))
        return
    if _is_dask(executor):
        from distributed import as_completed

        extra = {"pure": False}  # two surveys of one target are two tasks, not one cached result
    else:
        from concurrent.futures import as_completed

        extra = {}
    pending = {executor.submit(survey_target, t, out, options, calibration, **extra): t.name for t in todo}
    for future in as_completed(list(pending)):
        name = pending.pop(future)
        try:
            yield future.result()
        except Exception as exc:  # the worker died or the task could not run: recorded, the rest go on
            write_row(folders(out)["rows"], failure_row(name, exc))
            yield name, "failed"
        if hasattr(future, "release"):
            future.release()


def _is_dask(executor) -> bool:
    return type(executor).__module__.startswith("distributed")
