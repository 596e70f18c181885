"""The report of a diagnosis: one self-contained HTML page, the figures, the JSON.

:func:`write_report` writes into a folder that appears whole or not at all
(built under a temporary name, renamed at the end): ``report.html`` (figures
embedded as data URIs, no network needed to open it), each figure as PNG
(300 dpi) and PDF, ``diagnosis.json`` and the BJD_TDB timing table used.
The page leads with the verdict table, then the figures, the forecast, the
checks of each hypothesis, the assumptions of each physical model and the
caution that the verdict is a plausibility screen, not a proof.
"""

from __future__ import annotations

import base64
import html
import io
import json
from pathlib import Path

import numpy as np

from ttvkit.diagnosis.diagnose import CAUTION
from ttvkit.io.outdir import staged_folder
from ttvkit.report.numbers import format_value

__all__ = ["write_report", "render_html"]


_CSS = """
body{font-family:Georgia,serif;max-width:60rem;margin:2rem auto;padding:0 1rem;color:#111;line-height:1.45}
h1{font-size:1.5rem}h2{font-size:1.2rem;border-bottom:1px solid #ccc;margin-top:2rem}
table{border-collapse:collapse;width:100%;font-size:.85rem;margin:.5rem 0}
th,td{border:1px solid #ccc;padding:.25rem .4rem;text-align:left;vertical-align:top}
th{background:#f0f0f0}.stands{background:#e8f4ea}.excluded{background:#fbeaea}.disfavoured{background:#f4f4f4}
.caution{border-left:4px solid #D55E00;padding:.5rem 1rem;background:#fff6ef}
figure{margin:1rem 0}figure img{width:100%;height:auto;border:1px solid #eee}figcaption{font-size:.85rem;color:#333}
code{font-size:.85rem}
"""

_CAPTIONS = {
    "oc_diagram": "O − C against the constant-period fit, by source, with the hypotheses still standing "
                  "(1σ bands) and the residuals from the leading one.",
    "periodogram": "Lomb–Scargle periodogram of the constant-period residuals with false-alarm levels "
                   "(Baluev 2008).",
    "activity_envelope": "The largest O − C semi-amplitude the star can power (energy ratio 1) in the thin- "
                         "and finite-shell Applegate models, and the observed modulation.",
    "companion_check": "RV semi-amplitude each companion hypothesis implies, against what the system's RVs "
                       "would already have shown.",
    "forecast": "Predicted O − C of the standing hypotheses; dotted lines mark where two part by 3σ.",
    "perturber_map": "Perturber mass against period ratio: the shaded region is excluded by the timing "
                     "(χ² above the constant-period fit by more than the threshold); dots are the best-fitting "
                     "masses, coloured by how much they improve χ²; the dashed line is the RV limit; grey "
                     "periods are Hill-unstable beside the transiting planet.",
    "posterior_corner": "Posterior of the leading hypothesis (or its Gaussian approximation when not sampled).",
    "activity_link": "The O − C (top, with its smoothing) and an activity indicator (bottom) on one time axis; "
                     "the line over the indicator is the period change ΔP/P at the best lag, scaled onto it.",
    "calibration": "Injection and recovery on simulated tables with this table's epochs, kinds and errors: "
                   "the fraction of injected signals the verdict calls needed (binomial 1σ bars) and the "
                   "false alarms of each hypothesis on tables without a signal.",
}


def _png_data_uri(fig) -> str:
    """A 150-dpi PNG as a data URI, from a Figure or from a 300-dpi PNG file already written: halving
    the file's pixels costs a tenth of drawing the figure again."""
    buf = io.BytesIO()
    if isinstance(fig, (str, Path)):
        from PIL import Image  # matplotlib's own dependency

        with Image.open(fig) as image:
            image.reduce(2).save(buf, format="png")
    else:
        fig.savefig(buf, format="png", dpi=150)
    return "data:image/png;base64," + base64.b64encode(buf.getvalue()).decode("ascii")


def _e(text) -> str:
    return html.escape(str(text))


def _fmt(v) -> str:
    if v is None:
        return "—"
    if isinstance(v, float):
        return f"{v:.4g}"
    return _e(v)


def _perturber_section(pmap) -> str:
    """A paragraph on the mass–period map: the best point and what rules it in or out."""
    import astropy.units as u

    info = pmap.to_dict()
    b = info["best_point"]
    s = pmap.summary
    rows = [r for r in s if r["integrated"]]
    allowed_small = [r for r in rows if r["hill_stable"] and r["rv_seen"] != 1]
    text = [f"<h2>Perturbing planets</h2><p>{info['grid_points']} N-body integrations over perturber periods "
            f"of {float(s['period_ratio'].min()):.2g}–{float(s['period_ratio'].max()):.3g}× the transiting "
            f"planet's. " + (
                "No single perturber that is Hill-stable and not excluded by the RV limits improves the fit."
                if b is None else
                f"The best single perturber the physics allows (Hill-stable, not excluded by the RV limits) "
                f"sits at {b['period_ratio']:.3f}× the period with {b['mass_mearth']:.3g} Earth masses and "
                f"improves χ² by {b['delta_chi2_gain']:.1f} over a constant period.") + "</p>"]
    if allowed_small:
        lo = min(allowed_small, key=lambda r: r["largest_mass"])
        text.append(f"<p>Tightest timing limit on a stable, RV-silent perturber: below "
                    f"{lo['largest_mass'].to_value(u.Mearth):.3g} Earth masses at "
                    f"{float(lo['period_ratio']):.3f}× the period.</p>")
    text.append("<p>" + _e("; ".join(pmap.notes)) + ". The map assumes coplanar orbits and a circular "
                "perturber, and interpolates each point's transit-time response between two integrations (at "
                "1 Earth mass and at the linear estimate of the mass limit); limits of a few Earth masses or "
                "less right at a resonance rest on that interpolation and are the least certain. It screens "
                "where a planet could hide; it does not detect one.</p>")
    return "".join(text)


def render_html(diagnosis, figures: dict, notes: list | None = None) -> str:
    """The report page as one HTML string with the figures embedded.

    ``figures`` maps a figure's name to a matplotlib Figure or to the path of its 300-dpi PNG.
    """
    d = diagnosis
    rows = []
    for a in d.assessments:
        cls = "stands" if a.stands else "excluded" if a.physical == "excluded" else "disfavoured"
        rows.append(f"<tr class='{cls}'><td><code>{_e(a.name)}</code></td><td>{a.delta_bic:.1f}</td>"
                    f"<td>{_e(a.statistical)}</td><td>{_e(a.physical)}</td><td><b>{_e(a.verdict)}</b></td>"
                    f"<td>{_e(a.reason)}</td></tr>")
    parts = [f"<!DOCTYPE html><html lang='en'><head><meta charset='utf-8'><title>ttvkit diagnosis: "
             f"{_e(d.system.name)}</title><style>{_CSS}</style></head><body>",
             f"<h1>Timing diagnosis: {_e(d.system.name)}</h1>",
             f"<p>{len(d.table)} mid-times from {len(d.table.sources)} sources, all in BJD_TDB.</p>",
             "<h2>Verdict</h2>", f"<p>{_e(d.summary())}</p>",
             "<table><tr><th>hypothesis</th><th>ΔBIC</th><th>statistical standing</th><th>physical standing</th>"
             "<th>verdict</th><th>reason</th></tr>" + "".join(rows) + "</table>",
             f"<p class='caution'>{_e(CAUTION)}</p>"]
    if d.warnings or notes:
        parts.append("<h2>Warnings</h2><ul>" + "".join(f"<li>{_e(w['kind'])}: {_e(w['message'])}</li>"
                                                       for w in d.warnings) +
                     "".join(f"<li>{_e(n)}</li>" for n in (notes or [])) + "</ul>")
    parts.append("<h2>Figures</h2>")
    for name, fig in figures.items():
        caption = _CAPTIONS.get(name.split("__")[0], "")
        parts.append(f"<figure><img alt='{_e(name)}' src='{_png_data_uri(fig)}'><figcaption><b>{_e(name)}</b>: "
                     f"{_e(caption)} (PNG and PDF files beside this page.)</figcaption></figure>")
    f = d.forecast
    if f is not None:
        parts.append(f"<h2>Forecast</h2><p>Future timing precision assumed: {f.precision_s:.0f} s.</p>")
        if f.pairs:
            parts.append("<table><tr><th>hypotheses</th><th>first 3σ separation (UTC)</th><th>epoch</th>"
                         "<th>epochs worth observing</th><th>largest separation</th></tr>")
            for p in f.pairs:
                parts.append(f"<tr><td>{_e(' vs '.join(p['hypotheses']))}</td><td>{_fmt(p['first_date_utc'])}</td>"
                             f"<td>{_fmt(p['first_epoch'])}</td><td>{_e(', '.join(map(str, p['epochs_worth_observing'])) or 'none within the window')}</td>"
                             f"<td>{p['largest_separation_s']:.1f} s ({p['largest_separation_sigma']:.1f}σ)</td></tr>")
            parts.append("</table>")
        else:
            parts.append("<p>Only one hypothesis stands; nothing to separate.</p>")
        parts.append("<h3>Next transits</h3><table><tr><th>epoch</th><th>start (UTC)</th><th>mid (UTC)</th>"
                     "<th>end (UTC)</th><th>mid (BJD_TDB)</th><th>±1σ (s)</th></tr>")
        for w in f.windows:
            parts.append(f"<tr><td>{w['epoch']}</td><td>{_fmt(w['start_utc'])}</td><td>{_fmt(w['mid_utc'])}</td>"
                         f"<td>{_fmt(w['end_utc'])}</td><td>{w['mid_bjd_tdb']:.5f}</td><td>{w['uncertainty_s']:.0f}</td></tr>")
        parts.append(f"</table><p>Predicted by <code>{_e(f.windows[0]['hypothesis']) if f.windows else ''}</code>; "
                     "UTC at the geocentre.</p>")
    if getattr(d, "perturbers", None) is not None:
        parts.append(_perturber_section(d.perturbers))
    if getattr(d, "calibration", None) is not None:
        parts.append(_calibration_section(d.calibration))
    if getattr(d, "activity", None):
        parts.append(_activity_section(d.activity))
    parts.append("<h2>Each hypothesis</h2>")
    for a in d.assessments:
        table = a.fit.to_dict()
        parts.append(f"<h3><code>{_e(a.name)}</code>: {_e(a.verdict)}</h3>"
                     f"<p>χ² = {table['chi2']:.1f} for {table['dof']} degrees of freedom; BIC {table['bic']:.1f}; "
                     f"{_e(table['likelihood'])}{'; sampled with emcee' if table['sampled'] else ''}.</p>")
        parts.append("<table><tr><th>quantity</th><th>value</th><th>−1σ</th><th>+1σ</th><th>unit</th></tr>")
        for section in ("parameters", "derived"):
            for k, v in table[section].items():
                parts.append(f"<tr><td>{_e(k)}</td><td>{format_value(v['value'], v['lower'], v['upper']).split()[0]}</td><td>{v['lower']:.3g}</td>"
                             f"<td>{v['upper']:.3g}</td><td>{_e(v['unit'])}</td></tr>")
        parts.append("</table>")
        if a.checks:
            parts.append("<table><tr><th>check</th><th>value</th><th>limit</th><th>outcome</th><th>why</th></tr>")
            for c in a.checks:
                parts.append(f"<tr><td>{_e(c.name)}</td><td>{_fmt(c.value)}</td><td>{_fmt(c.limit)}</td>"
                             f"<td>{_e(c.outcome)}</td><td>{_e(c.reason)}</td></tr>")
            parts.append("</table>")
    parts.append("<h2>Assumptions of the physical models</h2><dl>")
    for k, v in diagnosis.model_assumptions().items():
        parts.append(f"<dt><b>{_e(k)}</b></dt><dd>{_e(v)}</dd>")
    parts.append("</dl>")
    parts.append(f"<p class='caution'>{_e(CAUTION)}</p>")
    parts.append("<p><small>Made by ttvkit. Figures, <code>diagnosis.json</code> and the BJD_TDB table "
                 "<code>timings_bjd_tdb.ecsv</code> are beside this page.</small></p>")
    parts.append("<script>window.addEventListener('load',function(){var im=Array.prototype.slice.call("
                 "document.images);document.body.setAttribute('data-figures-loaded',im.filter(function(i)"
                 "{return i.complete&&i.naturalWidth>0;}).length+'/'+im.length);});</script></body></html>")
    return "\n".join(parts)


def _activity_section(results) -> str:
    """Does each activity indicator vary with the period change (the activity mechanism's prediction)?"""
    rows = "".join(
        f"<tr><td>{_e(r.series.name)}</td><td>{np.size(r.series.time)}</td><td>{r.link.correlation:+.2f}</td>"
        f"<td>{r.link.lag:+.0f}</td><td>{r.link.p_value:.3g}</td></tr>" for r in results)
    return ("<h2>Does the activity follow the period?</h2>"
            "<p>If a magnetic cycle drives the modulation, the active star's activity should vary with the period "
            "change ΔP/P = d(O−C)/dt (Applegate 1992, ApJ 385, 621). Each indicator is correlated with ΔP/P over "
            "a range of lags; the p-value counts how often indicator series of the same red noise but no link "
            "reach the same correlation (not a plain Pearson p-value, which red series make far too small). "
            "The result enters the verdict of each activity hypothesis as a check.</p>"
            "<table><tr><th>indicator</th><th>points</th><th>r at best lag</th><th>lag (d)</th><th>p</th></tr>"
            + rows + "</table>")


def _calibration_section(c) -> str:
    """How far to trust the verdict: false alarms and the signals found half and 90% of the time."""
    alarms = round(c.false_alarms["any"] * c.n_null)
    rows = []
    for name, rows_ in c.recovery.items():
        found = ", ".join(f"{a:g}σ: {f:.0%}" for a, f in rows_)
        rows.append(f"<tr><td><code>{_e(name)}</code></td><td>1σ = {_e(c.sigma_size(name))}</td>"
                    f"<td>{_e(found)}</td><td>{c.found_at(name, '50%')}</td><td>{c.found_at(name, '90%')}</td></tr>")
    coverage = ("" if c.coverage is None else
                f" The 68% intervals of dP/dt covered the truth {c.coverage:.1%} of the time.")
    return ("<h2>How far to trust this verdict</h2>"
            f"<p>On {c.n_null} simulated tables with this table's epochs, kinds and errors and no signal, "
            f"some hypothesis other than a constant period was called needed {alarms} times "
            f"({c.false_alarms['any']:.1%}).{coverage} Injected signals, {c.n_per_amplitude} tables per "
            "amplitude:</p><table><tr><th>injected</th><th>size of 1σ</th><th>called needed</th>"
            "<th>50% at</th><th>90% at</th></tr>" + "".join(rows) + "</table>")


def write_report(diagnosis, out: "str | Path", force: bool = False, notes: list | None = None) -> dict:
    """Write the report folder; returns name → path of what was written.

    Parameters
    ----------
    diagnosis : Diagnosis
    out : str or Path
        Folder; must be new or empty unless ``force``.
    force : bool
        Replace a non-empty folder.
    notes : list of str, optional
        Extra lines for the warnings section (e.g. a relabelled source).
    """
    from ttvkit.report.figures import all_figures, save_figure

    out = Path(out)
    figures = all_figures(diagnosis)
    if getattr(diagnosis, "calibration", None) is not None:
        from ttvkit.report.calibration_figure import calibration_figure

        figures["calibration"] = calibration_figure(diagnosis.calibration)
    for k, r in enumerate(getattr(diagnosis, "activity", ()) or ()):
        from ttvkit.report.activity_figure import activity_link_figure

        label = r.series.name + (f" ({r.series.unit})" if r.series.unit else "")
        name = f"activity_link__{k + 1}" if len(diagnosis.activity) > 1 else "activity_link"
        figures[name] = activity_link_figure(r.link, r.oc_time, r.oc, r.oc_error, r.series.time, r.series.value,
                                             r.series.error, indicator_label=label)
    written = {}
    with staged_folder(out, force) as stage:
        for name, fig in figures.items():
            for p in save_figure(fig, stage / name):
                written[p.name] = out / p.name
        payload = diagnosis.to_dict()
        if notes:
            payload["warnings"] = payload["warnings"] + [{"kind": "note", "message": n} for n in notes]
        (stage / "diagnosis.json").write_text(json.dumps(payload, indent=2, default=_json_default) + "\n")
        diagnosis.table.write(stage / "timings_bjd_tdb.ecsv")
        pngs = {name: stage / f"{name}.png" for name in figures}  # drawn once: the HTML reuses the PNGs
        (stage / "report.html").write_text(render_html(diagnosis, pngs, notes), encoding="utf-8")
        for name in ("diagnosis.json", "timings_bjd_tdb.ecsv", "report.html"):
            written[name] = out / name
    import matplotlib.pyplot as plt

    for fig in figures.values():
        plt.close(fig)
    return written


def _json_default(value):
    import numpy as np

    if isinstance(value, (np.floating, np.integer)):
        return value.item()
    if isinstance(value, np.ndarray):
        return value.tolist()
    if isinstance(value, np.bool_):
        return bool(value)
    raise TypeError(f"not JSON serialisable: {type(value).__name__}")
