"""One survey target, as one task: read its files, run the pipeline, leave its result on disk.

:func:`survey_target` runs where the executor puts it (a dask worker, a
process of a pool).  It writes, in this order, the target's report folder
(:func:`ttvkit.pipeline.run_diagnosis`, staged so that it appears whole or
not at all), a small O−C thumbnail and last the target's summary row
(``rows/NAME.json``, written through a temporary file and a rename).  The
row is the mark of a finished target: a survey killed at any moment and
run again finds every target either with its row (finished, skipped) or
without it (run again, its folder replaced).  A failure is caught and
written as a row too, so that one bad target does not stop the others.
"""

from __future__ import annotations

import json
import math
import os
import tempfile
import time
import warnings
from dataclasses import replace
from pathlib import Path

from ttvkit.diagnosis.checks import QUALITY_FACTOR_CHECK
from ttvkit.diagnosis.diagnose import DiagnosisOptions
from ttvkit.errors import TtvkitError
from ttvkit.io.readers import atomic_write_text

__all__ = ["survey_target", "read_target", "failure_row", "write_row", "diagnosis_row", "KEY_NUMBERS", "folders"]

#: Derived numbers the summary shows: fit quantity name → summary column (read from the fit with the
#: lowest ΔBIC among those that have it).
KEY_NUMBERS = {"dP_dt": "dP_dt", "decay_timescale": "decay_timescale", "delta_P_over_P": "delta_P_over_P",
               "modulation_period_yr": "modulation_period", "minimum_companion_mass": "minimum_companion_mass"}
#: Physical-check values the summary shows: the check's name → summary column.
KEY_CHECKS = {QUALITY_FACTOR_CHECK: "Q_star"}


def folders(out: Path) -> dict:
    """The survey's sub-folders: targets (report folders), rows (summary rows), thumbnails, calibration."""
    return {"targets": out / "targets", "rows": out / "rows", "thumbnails": out / "thumbnails",
            "calibration": out / "calibration"}


class _InThisProcess:
    """An executor that runs the calibration's simulations one after another where the task runs: a
    survey's worker is already one of the machine's processes, and a pool inside it would oversubscribe."""

    def map(self, fn, *iterables):
        return map(fn, *iterables)


def survey_target(target, out: "str | Path", options: DiagnosisOptions, calibration=None) -> tuple:
    """Diagnose one target into ``out/targets/NAME`` and write its row; returns ``(name, status)``.

    With ``calibration`` (a :class:`~ttvkit.diagnosis.calibration.CalibrationOptions`), the
    verdict is also calibrated on the target's own epochs and errors
    (:func:`~ttvkit.diagnosis.calibration.calibrate`), into ``out/calibration/NAME.json``, and the
    row carries its false-alarm rate and the decay rate it finds half the time.

    Never raises for a bad target: the error becomes the row (``status``
    ``"failed"``, with the message).
    """
    out = Path(out)
    where = folders(out)
    start = time.perf_counter()
    try:
        row = _diagnose_into(target, where, options, calibration)
    except Exception as exc:  # one target's failure is recorded, it never stops the survey
        row = failure_row(target.name, exc)
    row["seconds"] = round(time.perf_counter() - start, 3)
    write_row(where["rows"], row)
    _return_freed_memory()
    return target.name, row["status"]


def _return_freed_memory() -> None:
    """Hand memory freed by the target's figures back to the system (glibc keeps freed arenas, so a
    long-lived worker's resident size creeps up target by target); a no-op where there is no glibc."""
    import ctypes
    import gc

    gc.collect()
    try:
        ctypes.CDLL("libc.so.6").malloc_trim(0)
    except (OSError, AttributeError):
        pass


def _diagnose_into(target, where: dict, options: DiagnosisOptions, calibration=None) -> dict:
    from ttvkit.errors import TtvkitWarning
    from ttvkit.pipeline import run_diagnosis

    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", TtvkitWarning)
        table, system = read_target(target)
        folder = where["targets"] / target.name
        chosen = replace(options, **target.options, progress=False)
        run = run_diagnosis(table, system, folder, chosen, force=folder.exists(), say=lambda *a: None)
        _write_thumbnail(run.diagnosis, where["thumbnails"] / f"{target.name}.png")
    row = diagnosis_row(target.name, run.diagnosis)
    row["warnings"] += [str(w.message) for w in caught if issubclass(w.category, TtvkitWarning)]
    if calibration is not None:
        try:   # the diagnosis stands whatever happens to its calibration
            row["numbers"].update(_calibrate_into(table, for_target(calibration, chosen, target),
                                                  where["calibration"], target.name))
            row["calibration"] = f"calibration/{target.name}.json"
            row["calibration_asked"] = calibration_key(calibration)
        except Exception as exc:
            row["warnings"].append(f"the calibration failed: {' '.join(str(exc).split())}")
    return row


def calibration_key(calibration) -> dict:
    """What a calibration was asked for, as plain JSON (a resumed survey with other settings redoes it)."""
    from dataclasses import asdict

    wanted = {k: v for k, v in asdict(calibration).items() if k != "likelihood"}
    wanted["likelihood"] = calibration.likelihood.describe() if calibration.likelihood else "Gaussian"
    return json.loads(json.dumps(wanted))


def for_target(calibration, chosen: DiagnosisOptions, target):
    """The calibration of this target's verdict: its own hypotheses (the N-body ones left out: an
    integration per simulated table) when the survey or its manifest row names them, its own seed."""
    from ttvkit.hypotheses import DEFAULT_COMPARISON, get_hypothesis

    changes = {}
    if tuple(chosen.hypotheses) != tuple(DEFAULT_COMPARISON):
        changes["hypotheses"] = tuple(h for h in chosen.hypotheses if not get_hypothesis(h).expensive)
    if "seed" in target.options:
        changes["seed"] = target.options["seed"]
    return replace(calibration, **changes)


def _calibrate_into(table, calibration, folder: Path, name: str) -> dict:
    """Calibrate the verdict on this table's design; write the JSON; the summary's numbers from it."""
    from ttvkit.diagnosis.calibration import calibrate
    from ttvkit.hypotheses.base import TimingData
    from ttvkit.hypotheses.ephemerides import MS_PER_YR_PER_S_PER_S

    folder.mkdir(exist_ok=True)
    result = calibrate(table, calibration, executor=_InThisProcess(), progress=False)
    atomic_write_text(folder / f"{name}.json", json.dumps(result.to_dict(), indent=1) + "\n", overwrite=True)
    numbers = {"false_alarm_rate": {"value": result.false_alarms["any"], "lower": None, "upper": None,
                                    "unit": "", "from": "calibration"}}
    if "orbital-decay" in result.thresholds:
        half = result.thresholds["orbital-decay"]["50%"]
        sigma, _ = result.amplitude_unit["orbital-decay"]     # dP/dE of 1 detectability sigma, d/epoch
        period = TimingData.from_table(table).period
        numbers["decay_found_half_the_time"] = {
            "value": None if half is None else -half * sigma / period * MS_PER_YR_PER_S_PER_S,
            "lower": None, "upper": None, "unit": "ms/yr", "from": "calibration"}
    return numbers


def read_target(target) -> tuple:
    """The target's TimingTable and System (the table's coordinates from the system file when it has them)."""
    from ttvkit.physics import System
    from ttvkit.timing.standards import make_target
    from ttvkit.timing.table import TimingTable

    system = System.from_toml(target.system)
    star = system.star
    coords = make_target(star.ra, star.dec) if star.ra is not None and star.dec is not None else None
    return TimingTable.read(target.table, target=coords), system


def diagnosis_row(name: str, diagnosis) -> dict:
    """The summary row of one diagnosis: best explanation, every verdict, the key derived numbers."""
    assessments = sorted(diagnosis.assessments, key=lambda a: a.delta_bic)
    standing = getattr(diagnosis, "standing", None) or assessments
    best = min(standing, key=lambda a: a.delta_bic)
    numbers = {}
    for quantity, column in KEY_NUMBERS.items():
        for a in assessments:
            if a.fit.has(quantity):
                e = a.fit.estimate(quantity)
                numbers[column] = {"value": _finite(e.value), "lower": _finite(e.lower),
                                   "upper": _finite(e.upper), "unit": e.unit, "from": a.name}
                break
    for piece, column in KEY_CHECKS.items():
        for a in assessments:
            found = [c for c in getattr(a, "checks", []) if getattr(c, "name", "") == piece
                     and getattr(c, "value", None) is not None]
            if found:
                numbers[column] = {"value": _finite(found[0].value), "lower": None, "upper": None,
                                   "unit": getattr(found[0], "unit", ""), "from": a.name}
                break
    warning_text = [w.get("message", str(w)) if isinstance(w, dict) else str(w) for w in diagnosis.warnings]
    return {"target": name, "status": "done", "error": "", "n_points": len(diagnosis.table),
            "best": best.name, "best_verdict": best.verdict, "summary": diagnosis.summary(),
            "hypotheses": {a.name: {"verdict": a.verdict, "delta_bic": _finite(a.delta_bic)}
                           for a in diagnosis.assessments},
            "numbers": numbers, "warnings": warning_text,
            "report": f"targets/{name}/report.html", "thumbnail": f"thumbnails/{name}.png", "calibration": ""}


def failure_row(name: str, exc: BaseException) -> dict:
    """The summary row of a target that could not be diagnosed (the error message is the cell)."""
    message = str(exc) if isinstance(exc, TtvkitError) else f"{type(exc).__name__}: {exc}"
    return {"target": name, "status": "failed", "error": " ".join(message.split()), "n_points": None,
            "best": "", "best_verdict": "", "summary": "", "hypotheses": {}, "numbers": {}, "warnings": [],
            "report": "", "thumbnail": "", "calibration": ""}


def write_row(rows: Path, row: dict) -> Path:
    """Write ``rows/NAME.json`` atomically (it replaces the row of an earlier run of the target)."""
    return atomic_write_text(rows / f"{row['target']}.json", json.dumps(row, indent=1) + "\n", overwrite=True)


def _finite(value):
    value = float(value)
    return value if math.isfinite(value) else None


def _write_thumbnail(diagnosis, path: Path) -> None:
    """A small O−C diagram (points and the constant-period zero line), written atomically."""
    from matplotlib.figure import Figure  # no pyplot: the worker's backend is left alone

    c = diagnosis.curves
    fig = Figure(figsize=(2.4, 1.5), dpi=72)
    ax = fig.add_axes((0.02, 0.04, 0.96, 0.92))
    ax.errorbar(c["point_year"], c["point_oc_s"], c["point_sigma_s"], fmt="o", ms=2, elinewidth=0.5,
                color="k", capsize=0)
    for med, _, _ in list(c.get("models", {}).values())[:1]:
        ax.plot(c["model_year"], med, color="C3", lw=1)
    ax.axhline(0, color="0.6", lw=0.5)
    ax.set_xticks([])
    ax.set_yticks([])
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".part", dir=path.parent)
    try:
        with os.fdopen(fd, "wb") as handle:
            fig.savefig(handle, format="png")
        os.replace(tmp, path)
    except BaseException:
        if os.path.exists(tmp):
            os.unlink(tmp)
        raise
