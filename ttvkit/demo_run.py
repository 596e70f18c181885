"""Run every ttvkit capability on the invented demo scenario.

``ttvkit demo --out DIR`` calls :func:`run_demo`.  It grows as capabilities
land; each step writes its products into DIR and adds a line to the summary.
"""

from __future__ import annotations

import json
from pathlib import Path

from ._outdir import staged_folder
from .demo import PLANET_NAME, build_demo_scenario, target

__all__ = ["run_demo"]


def run_demo(out: "str | Path", force: bool = False, quiet: bool = False) -> dict:
    """Build the demo inputs in ``out/inputs`` and run the pipeline on them.

    Parameters
    ----------
    out : str or Path
        Output folder; must be new or empty unless ``force``.
    force : bool
        Replace a non-empty ``out``.
    quiet : bool
        Print nothing (the caller prints the returned summary).

    Returns
    -------
    dict
        What was written and found, JSON-serialisable.
    """
    from .timing import TimingTable

    out = Path(out)
    summary: dict = {"scenario": PLANET_NAME, "output": str(out), "files": [], "warnings": []}
    say = (lambda *a: None) if quiet else print
    with staged_folder(out, force) as stage:
        paths = build_demo_scenario().write(stage / "inputs")
        say(f"demo: invented scenario {PLANET_NAME}; inputs in {out / 'inputs'}")
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
        summary["files"] = sorted(str(p.relative_to(stage)) for p in stage.rglob("*") if p.is_file())
    say(f"demo: wrote {len(summary['files'])} files into {out}")
    return summary
