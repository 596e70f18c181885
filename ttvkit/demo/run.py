"""Run every ttvkit capability on the invented demo scenario.

``ttvkit demo --out DIR`` calls :func:`run_demo`.  It grows as capabilities
land; each step writes its products into DIR and adds a line to the summary.
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np

from ttvkit.constants import DAY_S
from ttvkit.demo.scenario import PLANET_NAME, build_demo_scenario, target
from ttvkit.io.outdir import staged_folder

__all__ = ["run_demo"]


#: The demo's perturber map: the full 0.3-10x range, 200 periods x 4 phases
#: (about 40 s on two cores; ``ttvkit perturbers`` defaults to 500 x 4).
DEMO_MAP_PERIODS = 80
DEMO_MAP_PHASES = 2
DEMO_MAP_RANGE = (0.3, 10.0)

#: Sampler steps of the demo's n-body-perturber chain when it is asked for
#: (``--fit-perturber``: 0.7-1.8 s a step on two cores, plus one to two minutes to fit).
DEMO_PERTURBER_STEPS = 200


def run_demo(out: "str | Path", force: bool = False, quiet: bool = False, sampled: bool = True,
             progress: bool = False, perturbers: bool = True, fit_perturber: bool = False,
             binary: bool = True) -> dict:
    """Build the demo inputs in ``out/inputs`` and run the pipeline on them.

    Parameters
    ----------
    out : str or Path
        Output folder; must be new or empty unless ``force``.
    force : bool
        Replace a non-empty ``out``.
    quiet : bool
        Print nothing (the caller prints the returned summary).
    sampled : bool
        Sample the posteriors in the diagnosis (slower, honest bands).
    progress : bool
        Show the sampler's progress bars.
    perturbers : bool
        Include the N-body perturber map (DEMO_MAP_PERIODS periods ×
        DEMO_MAP_PHASES phases).
    fit_perturber : bool
        Also fit the ``n-body-perturber`` hypothesis, seeded from the map, and
        sample it for DEMO_PERTURBER_STEPS steps (a few minutes more).
    binary : bool
        Also run the second scenario, an invented eclipsing binary with a
        wandering activity cycle and a brightness series
        (:mod:`ttvkit.demo.binary`), into ``out/binary``.

    Returns
    -------
    dict
        What was written and found, JSON-serialisable.
    """
    out = Path(out)
    summary: dict = {"scenario": PLANET_NAME, "output": str(out), "files": [], "warnings": []}
    say = (lambda *a: None) if quiet else print
    with staged_folder(out, force) as stage:
        paths = build_demo_scenario().write(stage / "inputs")
        say(f"demo: invented scenario {PLANET_NAME}; inputs in {out / 'inputs'}")
        table, suspicions = _read_compilation(paths, stage, summary, say)
        table = _add_light_curve_times(table, paths, stage, summary, say)
        _diagnose(table, suspicions, paths, stage / "diagnosis", summary, say, sampled=sampled, progress=progress,
                  perturbers=perturbers, fit_perturber=fit_perturber)
        summary["report"] = str(out / "diagnosis" / "report.html")
        if binary:
            summary["binary"] = _binary_demo(stage / "binary", out / "binary", say, sampled=sampled,
                                             progress=progress)
        summary["files"] = sorted(str(p.relative_to(stage)) for p in stage.rglob("*") if p.is_file())
    say(f"demo: wrote {len(summary['files'])} files into {out}; open {summary['report']}")
    return summary


def _read_compilation(paths: dict, stage: Path, summary: dict, say):
    """Read the compiled table in its mixed standards, run the mix-up check, write the BJD_TDB table."""
    from ttvkit.timing.table import TimingTable

    table = TimingTable.read(paths["timings"], target=target())
    say(f"demo: read {len(table)} mid-times from {len(table.sources)} sources in "
        f"{', '.join(sorted(set(table.given_standard.tolist())))}; converted to BJD_TDB")
    suspicions = table.check_standards()
    for s in suspicions:
        say(f"demo: standards check: {s.message()}")
        summary["warnings"].append(s.to_dict())
    table.write(stage / "timings_bjd_tdb.ecsv")
    (stage / "standards_check.json").write_text(
        json.dumps([s.to_dict() for s in suspicions], indent=2) + "\n")
    summary["n_points"] = len(table)
    return table, suspicions


def _add_light_curve_times(table, paths: dict, stage: Path, summary: dict, say):
    """Time the demo's own light curves and add them to the compilation."""
    from ttvkit.demo.scenario import TRUTH
    from ttvkit.lightcurves.measure import measure
    from ttvkit.timing.ephemeris import Ephemeris
    from ttvkit.timing.table import TimingTable

    curves = sorted(p for k, p in paths.items() if k.startswith("light_curve:"))
    measured, mreport = measure(curves, Ephemeris(TRUTH["reference_time"], TRUTH["period"]),
                                fit_shape=True, target=target(), progress=False)
    measured.write(stage / "measured_mid_times.ecsv")
    # one label for the six files, so the O−C legend stays readable
    measured.source = np.full(len(measured), "Skylark 2025 light curves (timed here)")
    say(f"demo: timed {mreport.measured} transits in {len(curves)} light curves (shape fitted; median "
        f"uncertainty {np.median(measured.uncertainty) * DAY_S:.1f} s); added to the compilation")
    summary["measured_transits"] = mreport.measured
    return TimingTable.concatenate([table, measured])


def _diagnose(table, suspicions, paths: dict, out: Path, summary: dict, say, *, sampled: bool, progress: bool,
              perturbers: bool, fit_perturber: bool) -> None:
    """As a person would after checking the flagged paper: re-read the suspect source and diagnose."""
    from ttvkit.diagnosis.diagnose import DiagnosisOptions
    from ttvkit.diagnosis.perturbers import PerturberMapOptions
    from ttvkit.inference.fitting import local_pool
    from ttvkit.physics import System
    from ttvkit.pipeline import run_diagnosis
    from ttvkit.timing.edits import TableEdits

    system = System.from_toml(paths["system"])
    edits = TableEdits(relabel={s.source: s.likely_standard for s in suspicions})
    for source, standard in edits.relabel.items():
        say(f"demo: re-reading {source!r} as {standard} for the diagnosis")
    perturber_map = None
    if perturbers:
        perturber_map = PerturberMapOptions(n_periods=DEMO_MAP_PERIODS, low=DEMO_MAP_RANGE[0],
                                            high=DEMO_MAP_RANGE[1], resonance_points=3,
                                            n_phases=DEMO_MAP_PHASES)
        say(f"demo: mapping perturbers ({DEMO_MAP_RANGE[0]}-{DEMO_MAP_RANGE[1]:g}x the period, "
            f"{DEMO_MAP_PERIODS} periods x {DEMO_MAP_PHASES} phases)")
    options = DiagnosisOptions(sampled=sampled, progress=progress, perturber_map=perturber_map,
                               fit_perturber=fit_perturber, perturber_steps=DEMO_PERTURBER_STEPS)
    pool = local_pool() if sampled else None
    try:
        diagnosis = run_diagnosis(table, system, out, options, edits=edits, say=say, executor=pool).diagnosis
    finally:
        if pool is not None:
            pool.shutdown()
    if diagnosis.perturbers is not None:
        best = diagnosis.perturbers.to_dict()["best_point"]
        say(f"demo: perturber map: {diagnosis.perturbers.n_points} N-body grid points; " + (
            "no allowed perturber improves the fit" if best is None else
            f"best allowed single perturber {best['mass_mearth']:.3g} Earth masses at "
            f"{best['period_ratio']:.3f}x the period (chi2 gain {best['delta_chi2_gain']:.1f})"))
        summary["perturber_map"] = best
    if not fit_perturber:
        say("demo: 'ttvkit demo --fit-perturber' also fits and samples an N-body perturbing planet "
            "(a few minutes more)")
    say(f"demo: verdict: {diagnosis.summary()}")
    for a in diagnosis.assessments:
        say(f"demo:   {a.name:40s} dBIC {a.delta_bic:6.1f}  {a.verdict}")
    summary["verdicts"] = {a.name: a.verdict for a in diagnosis.assessments}
    summary["summary"] = diagnosis.summary()


def _binary_demo(stage: Path, shown: Path, say, *, sampled: bool, progress: bool) -> dict:
    """The second scenario: an invented eclipsing binary, both stars described, with a brightness series."""
    from ttvkit.demo.binary import BINARY_NAME, build_binary_scenario
    from ttvkit.diagnosis.diagnose import DiagnosisOptions
    from ttvkit.inference.fitting import local_pool
    from ttvkit.physics import System
    from ttvkit.pipeline import run_diagnosis
    from ttvkit.timing.indicators import read_indicator_series
    from ttvkit.timing.table import TimingTable

    paths = build_binary_scenario().write(stage / "inputs")
    say(f"demo: second scenario, the invented eclipsing binary {BINARY_NAME}; inputs in {shown / 'inputs'}")
    system = System.from_toml(paths["system"])
    table = TimingTable.read(paths["timings"], target=None if system.star.ra is None else
                             _target_of(system))
    brightness = read_indicator_series(paths["indicator"], name="V magnitude of Tarrowby A")
    say(f"demo: {len(table)} primary and secondary eclipse mid-times; testing the link of "
        f"{brightness.name!r} ({len(brightness.time)} points) with the period change")
    options = DiagnosisOptions(sampled=sampled, progress=progress, activity=(brightness,))
    pool = local_pool() if sampled else None
    try:
        diagnosis = run_diagnosis(table, system, stage / "diagnosis", options, say=say, executor=pool).diagnosis
    finally:
        if pool is not None:
            pool.shutdown()
    say(f"demo: binary verdict: {diagnosis.summary()}")
    for a in diagnosis.assessments:
        say(f"demo:   {a.name:40s} dBIC {a.delta_bic:6.1f}  {a.verdict}")
    return {"scenario": BINARY_NAME, "report": str(shown / "diagnosis" / "report.html"),
            "verdicts": {a.name: a.verdict for a in diagnosis.assessments}, "summary": diagnosis.summary(),
            "activity_link_p": [r.link.p_value for r in diagnosis.activity]}


def _target_of(system):
    from ttvkit.timing.standards import make_target

    return make_target(system.star.ra.to_value("deg"), system.star.dec.to_value("deg"))
