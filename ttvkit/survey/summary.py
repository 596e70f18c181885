"""The survey's one summary: a DataFrame, an ECSV file and an HTML index page, made from the rows on disk.

Each finished target left a small JSON row (``rows/NAME.json``, see
:mod:`ttvkit.survey.task`); the summary reads them one at a time, in the
order of the targets, so that building it never holds any target's
diagnosis.  Columns: the target, its status and error, the number of
mid-times, the best explanation (the standing hypothesis with the lowest
ΔBIC) and its verdict, then for every hypothesis seen its verdict and ΔBIC,
the key derived numbers with their 1σ half-widths, and the warnings.
"""

from __future__ import annotations

import html
import io
import json
from pathlib import Path

from ttvkit.io.readers import atomic_write_text

__all__ = ["read_rows", "summary_frame", "write_summary_ecsv", "write_index_html"]

_FIRST = ["target", "status", "n_points", "best", "best_verdict"]


def read_rows(rows: Path, names) -> list:
    """The rows of the targets ``names`` that have one, in that order."""
    out = []
    for name in names:
        path = rows / f"{name}.json"
        if path.is_file():
            out.append(json.loads(path.read_text(encoding="utf-8")))
    return out


def summary_frame(rows: list):
    """One line per target: a pandas DataFrame with the columns described in the module docstring."""
    import numpy as np
    import pandas as pd

    hypotheses, numbers = [], []
    for row in rows:
        hypotheses += [h for h in row["hypotheses"] if h not in hypotheses]
        numbers += [n for n in row["numbers"] if n not in numbers]
    # an error column only for numbers that come with errors (Q_star and the calibration's do not)
    with_errors = {n for n in numbers for row in rows
                   if any(row["numbers"].get(n, {}).get(side) is not None for side in ("lower", "upper"))}
    records = []
    for row in rows:
        rec = {k: row[k] for k in _FIRST}
        rec["n_points"] = -1 if row["n_points"] is None else int(row["n_points"])
        for h in hypotheses:
            entry = row["hypotheses"].get(h, {})
            rec[f"verdict[{h}]"] = entry.get("verdict", "")
            rec[f"delta_bic[{h}]"] = _number(entry.get("delta_bic"))
        for n in numbers:
            entry = row["numbers"].get(n, {})
            rec[n] = _number(entry.get("value"))
            if n in with_errors:
                lower, upper = _number(entry.get("lower")), _number(entry.get("upper"))
                rec[f"{n}_err"] = float(np.nanmean([lower, upper])) if np.isfinite([lower, upper]).any() else np.nan
        rec["warnings"] = " | ".join(row["warnings"])
        rec["error"] = row["error"]
        rec["report"] = row["report"]
        if any(r.get("calibration") for r in rows):
            rec["calibration"] = row.get("calibration", "")
        records.append(rec)
    frame = pd.DataFrame.from_records(records)
    frame.attrs["units"] = {n: next((r["numbers"][n]["unit"] for r in rows if n in r["numbers"]), "")
                            for n in numbers}
    return frame


def _number(value) -> float:
    return float("nan") if value is None else float(value)


def write_summary_ecsv(frame, path: Path) -> Path:
    """Write the summary as ECSV (units on the derived-number columns), replacing an earlier one atomically."""
    from astropy.table import Table

    table = Table.from_pandas(frame) if len(frame) else Table(names=list(frame.columns) or _FIRST)
    for name, unit in frame.attrs.get("units", {}).items():
        for column in (name, f"{name}_err"):
            if column in table.colnames and unit:
                table[column].unit = unit
    table.meta["comments"] = ["ttvkit survey summary: one row per target; the verdict is a plausibility "
                              "screen, not a proof."]
    buffer = io.StringIO()
    table.write(buffer, format="ascii.ecsv")
    atomic_write_text(path, buffer.getvalue(), overwrite=True)
    return path


def write_index_html(rows: list, path: Path, title: str = "ttvkit survey") -> Path:
    """An HTML page linking each target's report, with its O−C thumbnail (written atomically)."""
    e = html.escape
    lines = []
    for row in rows:
        thumb = (f'<a href="{e(row["report"])}"><img src="{e(row["thumbnail"])}" width="160" '
                 f'alt="O−C of {e(row["target"])}"></a>') if row["status"] == "done" else ""
        name = (f'<a href="{e(row["report"])}">{e(row["target"])}</a>' if row["report"]
                else e(row["target"]))
        if row["status"] == "done":
            what = f"<b>{e(row['best'])}</b> ({e(row['best_verdict'])})<br><small>{e(row['summary'])}</small>"
        else:
            what = f'<span class="failed">failed: {e(row["error"])}</span>'
        number = row["numbers"].get("dP_dt")
        rate = f"{number['value']:.3g} {e(number['unit'])}" if number and number["value"] is not None else ""
        alarms, found = row["numbers"].get("false_alarm_rate"), row["numbers"].get("decay_found_half_the_time")
        if alarms and alarms["value"] is not None:
            rate += (f'<br><small><a href="{e(row.get("calibration", ""))}">calibration</a>: false alarms '
                     f'{100 * alarms["value"]:.0f}%')
            if found and found["value"] is not None:
                rate += f'; a decay of {found["value"]:.3g} ms/yr is found half the time'
            rate += "</small>"
        warn = "<br>".join(e(w) for w in row["warnings"])
        lines.append(f"<tr><td>{thumb}</td><td>{name}</td><td>{what}</td><td>{rate}</td>"
                     f"<td><small>{warn}</small></td></tr>")
    done = sum(r["status"] == "done" for r in rows)
    page = f"""<!DOCTYPE html>
<html lang="en"><head><meta charset="utf-8"><title>{e(title)}</title>
<style>body{{font-family:sans-serif;margin:1.5em}} td{{vertical-align:top;padding:4px 8px;
border-bottom:1px solid #ddd}} .failed{{color:#a00}}</style></head><body>
<h1>{e(title)}</h1>
<p>{len(rows)} targets, {done} diagnosed, {len(rows) - done} failed. Best explanation: the standing
hypothesis with the lowest ΔBIC. The verdict is a plausibility screen, not a proof.
The whole table: <a href="summary.ecsv">summary.ecsv</a>.</p>
<table><tr><th>O−C</th><th>target</th><th>best explanation</th><th>dP/dt</th><th>warnings</th></tr>
{chr(10).join(lines)}
</table></body></html>
"""
    return atomic_write_text(path, page, overwrite=True)
