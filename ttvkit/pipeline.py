"""The whole job in one call: a timing table and a system → a diagnosis → a report folder.

:func:`run_diagnosis` is what ``ttvkit diagnose`` does, and the demo calls
it too: apply the user's edits to the table (sources re-read or left out),
diagnose (:func:`ttvkit.diagnosis.diagnose`) and write the report
(:func:`ttvkit.report.write_report`), staged so that the folder appears
whole or not at all.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

from ttvkit.diagnosis.diagnose import Diagnosis, DiagnosisOptions, diagnose
from ttvkit.io.outdir import check_folder
from ttvkit.report.writer import write_report
from ttvkit.timing.edits import TableEdits

__all__ = ["run_diagnosis", "DiagnosisRun"]


@dataclass(frozen=True)
class DiagnosisRun:
    """What :func:`run_diagnosis` made: the diagnosis, the notes on the user's edits, the files written."""

    diagnosis: Diagnosis
    notes: list
    paths: dict


def run_diagnosis(table, system, out: "str | Path", options: DiagnosisOptions | None = None, *,
                  edits: TableEdits | None = None, force: bool = False, executor=None,
                  map_executor=None, say=print, calibration=None, calibration_executor=None) -> DiagnosisRun:
    """Edit the table as asked, diagnose it and write the report into ``out``.

    Parameters
    ----------
    table : TimingTable
    system : System
    out : str or Path
        Report folder: new or empty, unless ``force``.
    options : DiagnosisOptions, optional
    edits : TableEdits, optional
        Sources to re-read in another standard or to leave out; each edit is
        noted in the report.
    force : bool
        Replace an earlier report in ``out``.
    executor, map_executor : objects with ``map``, optional
        Passed to :func:`~ttvkit.diagnosis.diagnose`.
    say : callable
        Progress lines (``print`` by default; ``lambda *a: None`` for none).
    calibration : CalibrationOptions, optional
        Also calibrate the verdict on this table's epochs, kinds and errors
        (:func:`ttvkit.diagnosis.calibration.calibrate`, with the diagnosis'
        hypotheses and likelihood) and put it in the report.
    calibration_executor : object with ``map``, optional
        Runs the simulations (a process pool over every core by default).

    Returns
    -------
    DiagnosisRun
    """
    options = options or DiagnosisOptions()
    check_folder(out, force)
    table, notes = (edits or TableEdits()).apply(table)
    say(f"diagnose: {len(table)} mid-times, {len(table.sources)} sources; fitting "
        f"{'and sampling ' if options.sampled else ''}every hypothesis")
    if options.perturber_map is not None:
        say("diagnose: and mapping perturbing planets (N-body; minutes)")
    if options.fit_perturber:
        say("diagnose: and fitting an N-body perturbing planet (slow)")
    diagnosis = diagnose(table, system, options, executor=executor, map_executor=map_executor)
    if calibration is not None:
        from dataclasses import replace

        from ttvkit.diagnosis.calibration import calibrate
        from ttvkit.hypotheses import get_hypothesis

        # the same verdict as the diagnosis: its hypotheses (the N-body ones would need an integration
        # per simulated table) and its likelihood
        fitted = tuple(h for h in options.hypotheses if not get_hypothesis(h).expensive)
        calibration = replace(calibration, hypotheses=fitted, likelihood=options.likelihood,
                              excess_noise=options.excess_noise)
        runs = calibration.n_null + calibration.n_per_amplitude * len(calibration.amplitudes) * len(calibration.inject)
        say(f"diagnose: calibrating the verdict on {runs} simulated tables with this table's epochs and errors")
        diagnosis.calibration = calibrate(table, calibration, executor=calibration_executor,
                                          progress=options.progress)
    paths = write_report(diagnosis, out, force=force, notes=notes)
    return DiagnosisRun(diagnosis, notes, paths)
