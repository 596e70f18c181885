"""Diagnostic figures.  Each function reads a Diagnosis and returns a Figure.

Nothing is computed here that the diagnosis did not compute (shared/DESIGN.md):
the curves come from ``Diagnosis.curves`` and the forecast.  The style is
one for all figures: a serif font, labelled axes with units, markers that
stay distinct in greyscale (shape and fill, not only colour), colours from
the Okabe & Ito (2008) colour-blind-safe palette.  Figures are returned,
never shown; :func:`save_figure` writes PNG (300 dpi) and PDF.
"""

from __future__ import annotations

import contextlib
from pathlib import Path

import matplotlib

matplotlib.use("Agg", force=False)
import matplotlib.pyplot as plt  # noqa: E402
import numpy as np  # noqa: E402
from matplotlib.figure import Figure  # noqa: E402

from ttvkit.constants import DAY_S, YEAR_D

__all__ = ["oc_figure", "periodogram_figure", "envelope_figure", "companion_figure", "forecast_figure",
           "corner_figure", "perturber_map_figure", "save_figure", "all_figures"]

COLOURS = ["#0072B2", "#D55E00", "#009E73", "#CC79A7", "#E69F00", "#56B4E9", "#000000"]
MARKERS = ["o", "s", "^", "D", "v", "P", "X", "<", ">"]
STYLE = {"font.family": "serif", "font.size": 9, "axes.labelsize": 9, "axes.titlesize": 9,
         "legend.fontsize": 7, "xtick.direction": "in", "ytick.direction": "in", "xtick.top": True,
         "ytick.right": True, "axes.linewidth": 0.8, "lines.linewidth": 1.2, "savefig.bbox": "tight"}


@contextlib.contextmanager
def _style():
    with plt.rc_context(STYLE):
        yield


def _figure(width=7.0, height=4.0, **kw) -> Figure:
    return Figure(figsize=(width, height), constrained_layout=True, **kw)


def oc_figure(diagnosis) -> Figure:
    """O−C diagram by source with the standing hypotheses and a residual panel."""
    c = diagnosis.curves
    with _style():
        fig = _figure(7.0, 5.0)
        top, bottom = fig.subplots(2, 1, sharex=True, gridspec_kw={"height_ratios": [3, 1]})
        for k, source in enumerate(diagnosis.table.sources):
            m = c["point_source"] == source
            filled = k % 2 == 0
            kw = dict(fmt=MARKERS[k % len(MARKERS)], ms=4, capsize=0, elinewidth=0.6, color=COLOURS[k % 7],
                      mfc=COLOURS[k % 7] if filled else "white", label=source, alpha=0.9)
            top.errorbar(c["point_year"][m], c["point_oc_s"][m], c["point_sigma_s"][m], **kw)
            bottom.errorbar(c["point_year"][m], c["point_residual_s"][m], c["point_sigma_s"][m], **kw)
        styles = ["-", "--", "-.", ":"]
        marked = c.get("marked", {})     # drawn though it does not stand (the best fit): say why
        for j, (name, (med, lo, hi)) in enumerate(c["models"].items()):
            label = f"{name} ({marked[name]})" if name in marked else name
            top.plot(c["model_year"], med, styles[j % 4], color=COLOURS[1] if name in marked else "k",
                     lw=1.2, label=label)
            top.fill_between(c["model_year"], lo, hi, color="0.6", alpha=0.35, lw=0)
        top.axhline(0, color="0.5", lw=0.6)
        bottom.axhline(0, color="k", lw=0.8)
        top.set_ylabel("O − C (s)\nagainst a constant period")
        bottom.set_ylabel("residual (s)")
        bottom.text(0.01, 0.92, f"residuals from {c['lead']}", transform=bottom.transAxes, va="top", fontsize=7)
        bottom.set_xlabel("year (BJD_TDB)")
        top.legend(loc="best", ncol=2, frameon=False)
        top.set_title(f"{diagnosis.system.name}: mid-times, the hypotheses the data need and the best fit")
    return fig


def periodogram_figure(diagnosis) -> Figure:
    """Lomb–Scargle power of the constant-period residuals with false-alarm levels."""
    pg = diagnosis.periodogram
    with _style():
        fig = _figure(7.0, 3.0)
        ax = fig.subplots()
        ax.semilogx(pg.period / YEAR_D, pg.power, color="k", lw=0.8)
        for (fap, level), ls in zip(sorted(pg.levels.items(), reverse=True), ["--", "-.", ":"]):
            ax.axhline(level, ls=ls, color=COLOURS[1], lw=0.9, label=f"false-alarm probability {fap:g}")
        ax.axvline(pg.best_period / YEAR_D, color=COLOURS[0], lw=0.8, alpha=0.6,
                   label=f"highest peak {pg.best_period / YEAR_D:.2f} yr (FAP {pg.false_alarm_probability:.2g})")
        ax.set_xlabel("period (yr)")
        ax.set_ylabel("Lomb–Scargle power")
        ax.legend(frameon=False, loc="upper left")
        ax.set_title("periodogram of the O − C residuals from a constant period")
    return fig


def envelope_figure(diagnosis) -> Figure:
    """O−C semi-amplitude against modulation period: what the star can power."""
    c = diagnosis.curves
    with _style():
        fig = _figure(4.8, 3.8)
        ax = fig.subplots()
        if "envelope_period_yr" in c:
            p = c["envelope_period_yr"]
            ax.loglog(p, c["envelope_thin_s"], "-", color=COLOURS[0], label="thin-shell limit")
            ax.loglog(p, c["envelope_finite_s"], "--", color=COLOURS[1], label="finite-shell limit")
            ax.fill_between(p, 1e-6, np.maximum(c["envelope_thin_s"], c["envelope_finite_s"]), color=COLOURS[0],
                            alpha=0.12, lw=0, label="the star can power this")
        else:
            ax.text(0.5, 0.5, "system file lacks what the budget needs", transform=ax.transAxes, ha="center")
        if "signal" in c:
            a, p = c["signal"]["semi_amplitude"], c["signal"]["modulation_period_yr"]
            ax.errorbar([p["value"]], [a["value"]], xerr=[[p["lower"]], [p["upper"]]],
                        yerr=[[a["lower"]], [a["upper"]]], fmt="*", ms=11, color="k", mfc=COLOURS[4],
                        label="observed modulation")
            top = max(a["value"] * 10, np.max(c.get("envelope_thin_s", [1])) * 2)
            ax.set_ylim(max(1e-3, min(np.min(c.get("envelope_finite_s", [a["value"]])) / 3, a["value"] / 30)), top)
        ax.set_xlabel("modulation period (yr)")
        ax.set_ylabel("O − C semi-amplitude (s)")
        ax.set_title("activity envelope (Applegate mechanism)")
        ax.legend(frameon=False, loc="upper left")
    return fig


def companion_figure(diagnosis) -> Figure:
    """RV semi-amplitude each companion hypothesis implies, against the RV limit."""
    c = diagnosis.curves
    with _style():
        fig = _figure(4.8, 3.8)
        ax = fig.subplots()
        if "rv_limit_K" in c:
            ax.loglog(c["rv_limit_period_yr"], c["rv_limit_K"], "-", color="k",
                      label="RV detection limit (3× RV scatter over the baseline)")
            ax.fill_between(c["rv_limit_period_yr"], c["rv_limit_K"], 1e6, color="0.7", alpha=0.3, lw=0,
                            label="would already have been seen")
        for k, (name, (period, amp, outcome)) in enumerate(c["rv_points"].items()):
            ax.loglog([period], [amp], MARKERS[k + 1], ms=8, color=COLOURS[k], mfc="white" if outcome == "fail" else COLOURS[k],
                      label=f"{name} ({'excluded' if outcome == 'fail' else 'allowed' if outcome == 'pass' else 'untested'})")
        if not c["rv_points"]:
            ax.text(0.5, 0.5, "no companion hypothesis with an RV test", transform=ax.transAxes, ha="center")
        ax.set_xlabel("companion period (yr)")
        ax.set_ylabel("RV semi-amplitude of the host (m/s)")
        ax.set_title("would the companion have been seen?")
        if ax.get_legend_handles_labels()[0]:
            ax.legend(frameon=False, loc="lower right")
        values = [v[1] for v in c["rv_points"].values()] + list(c.get("rv_limit_K", []))
        if values:
            ax.set_ylim(max(min(values) / 10, 1e-3), max(values) * 10)
    return fig


def forecast_figure(diagnosis) -> Figure:
    """Standing hypotheses into the future, the 3σ separation dates marked."""
    f = diagnosis.forecast
    from astropy.time import Time

    with _style():
        fig = _figure(7.0, 3.6)
        ax = fig.subplots()
        year = Time(f.bjd_tdb, format="jd", scale="tdb").decimalyear
        styles = ["-", "--", "-.", ":"]
        for j, (name, (med, lo, hi)) in enumerate(f.curves.items()):
            ax.plot(year, med, styles[j % 4], color=COLOURS[j % 7], label=name)
            ax.fill_between(year, lo, hi, color=COLOURS[j % 7], alpha=0.2, lw=0)
        for pair in f.pairs:
            if pair.get("first_bjd_tdb"):
                y = Time(pair["first_bjd_tdb"], format="jd", scale="tdb").decimalyear
                ax.axvline(y, color="k", lw=0.8, ls=":")
                ax.annotate(" vs ".join(pair["hypotheses"]) + " part (3σ)", (y, ax.get_ylim()[1]), rotation=90,
                            va="top", ha="right", fontsize=6)
        ax.axhline(0, color="0.5", lw=0.6)
        ax.set_xlabel("year (BJD_TDB)")
        ax.set_ylabel("predicted O − C (s)\nagainst a constant period")
        ax.set_title(f"forecast (future timing precision {f.precision_s:.0f} s)")
        if ax.get_legend_handles_labels()[0]:
            ax.legend(frameon=False, loc="best")
    return fig


def corner_figure(diagnosis) -> Figure:
    """Posterior of the leading hypothesis (or the Gaussian approximation if not sampled)."""
    import corner

    lead = (diagnosis.standing or diagnosis.assessments)[0].fit
    params = lead.hypothesis.parameters()
    draws = lead.model_theta(lead.draws())
    cols, labels = [], []
    for i, p in enumerate(params):
        v = draws[:, i] * p.to_display
        unit = {"BJD_TDB": "d", "Mearth": "M⊕"}.get(p.unit, p.unit)
        if p.name in ("T0", "P"):  # seconds from the median: days would show only noise digits
            v = (v - np.median(v)) * DAY_S
            labels.append(f"{p.symbol} − median (s)")
        elif np.median(np.abs(v)) > 100 * max(np.std(v), 1e-300):  # a large offset: show the spread
            v = v - np.median(v)
            labels.append(f"{p.symbol} − median ({unit})" if unit else f"{p.symbol} − median")
        else:
            labels.append(f"{p.symbol} ({unit})" if unit else p.symbol)
        cols.append(v)
    with _style():
        fig = plt.figure(figsize=(7.0, 7.0))
        corner.corner(np.column_stack(cols), labels=labels, fig=fig, quantiles=[0.16, 0.5, 0.84],
                      show_titles=False, plot_datapoints=False, smooth=1.0, label_kwargs={"fontsize": 7},
                      labelpad=0.12, max_n_ticks=4)
        kind = "posterior" if lead.samples is not None else "Gaussian approximation at the optimum"
        fig.suptitle(f"{lead.name}: {kind}", fontsize=9)
    return fig


def perturber_map_figure(pmap, fitted=None) -> Figure:
    """The mass–period map: allowed and preferred perturber masses over period ratio.

    Parameters
    ----------
    pmap : PerturberMap
        From :func:`ttvkit.diagnosis.perturbers.map_perturbers` (or ``Diagnosis.perturbers``).
    fitted : FitResult, optional
        An ``n-body-perturber`` fit, drawn as a star with its 1σ errors.
    """
    from ttvkit.physics.resonance import RESONANCES

    s = pmap.summary
    ratio = np.asarray(s["period_ratio"])
    hi = np.asarray(s["largest_mass"].value)
    best = np.asarray(s["best_mass"].value)
    gain = np.asarray(s["delta_chi2_best"])
    stable = np.asarray(s["hill_stable"], bool)
    with _style():
        fig = _figure(6.4, 4.0)
        ax = fig.subplots()
        ok = np.isfinite(hi) & (hi > 0)
        top = np.nanmax(hi[ok]) * 30 if np.any(ok) else 1e4
        ax.fill_between(ratio, np.where(ok, hi, np.nan), top, color=COLOURS[1], alpha=0.18, lw=0,
                        label=f"excluded by the timing (Δχ² > {pmap.delta_chi2:g})")
        ax.loglog(ratio, np.where(ok, hi, np.nan), "-", color=COLOURS[1], lw=1.0,
                  label="largest mass the timing allows")
        if "rv_limit_mass" in s.colnames:
            rv = np.asarray(s["rv_limit_mass"].value)
            ax.loglog(ratio, rv, "--", color="k", lw=1.0, label="RV limit (3× RV scatter over the baseline)")
        good = ok & (gain >= pmap.delta_chi2) & (best > 0)
        sc = ax.scatter(ratio[good], best[good], c=gain[good], s=12, cmap="viridis", marker="o", zorder=3,
                        edgecolors="k", linewidths=0.3,
                        label=f"best-fitting mass where it gains χ² > {pmap.delta_chi2:g} (colour: gain)")
        if np.any(good):
            fig.colorbar(sc, ax=ax, label="χ² gain over a constant period")
        if fitted is not None:
            summary = fitted.to_dict()
            r, m = summary["derived"]["period_ratio"], summary["parameters"]["perturber_mass"]
            ax.errorbar([r["value"]], [m["value"]], xerr=[[r["lower"]], [r["upper"]]],
                        yerr=[[min(m["lower"], 0.9 * m["value"])], [m["upper"]]], fmt="*", ms=9,
                        color=COLOURS[2], mec="k", mew=0.4, zorder=4, label="fitted N-body perturber (1σ)")
        unstable = ~stable
        if np.any(unstable):
            edges = ratio[unstable]
            ax.axvspan(edges.min(), edges.max(), color="0.85", lw=0, zorder=0,
                       label="Hill-unstable with the transiting planet")
        for r in RESONANCES:
            for x in (r, 1 / r):
                if ratio.min() <= x <= ratio.max():
                    ax.axvline(x, color="0.6", lw=0.5, ls=":", zorder=0)
        from matplotlib.ticker import FuncFormatter, NullFormatter

        ax.xaxis.set_major_formatter(FuncFormatter(lambda x, _: f"{x:g}"))
        ax.xaxis.set_minor_formatter(NullFormatter())
        ax.set_xticks([t for t in (0.3, 0.5, 1, 1.5, 2, 3, 5, 10) if 0.99 * ratio.min() <= t <= 1.01 * ratio.max()])
        ax.set_xlabel("perturber period / transiting planet's period")
        ax.set_ylabel("perturber mass (Earth masses)")
        if np.any(ok):
            ax.set_ylim(max(np.nanmin(np.where(ok, np.minimum(hi, np.where(best > 0, best, hi)), np.nan)) / 3,
                            1e-3), top)
        ax.set_title(f"where a perturbing planet could hide ({pmap.n_points} grid points; dotted: resonances)")
        ax.legend(frameon=False, loc="upper left", fontsize=6.5)
    return fig


def planetary_system_figure(curves: dict, title: str = "") -> Figure:
    """Per-planet O−C panels with the joint N-body model (``PlanetarySystem.oc_curves``)."""
    with _style():
        fig = _figure(7.0, 1.6 * len(curves) + 0.6)
        axes = np.atleast_1d(fig.subplots(len(curves), 1))
        for k, (ax, (name, c)) in enumerate(zip(axes, curves.items())):
            ax.errorbar(c["index"], c["oc_s"] / 60, c["sigma_s"] / 60, fmt="o", ms=3, elinewidth=0.6,
                        color=COLOURS[k % 7], label=f"{name}: data")
            ax.plot(c["model_index"], c["model_oc_s"] / 60, "-", color="k", lw=0.8, label="N-body model")
            ax.set_ylabel("O − C (min)")
            ax.legend(loc="upper right", frameon=False)
        axes[-1].set_xlabel("transit number since the elements' epoch")
        if title:
            axes[0].set_title(title)
    return fig


def all_figures(diagnosis) -> dict:
    """name → Figure for every figure of the report (the perturber map when the diagnosis has one;
    the writer adds the calibration's)."""
    figures = {"oc_diagram": oc_figure(diagnosis), "periodogram": periodogram_figure(diagnosis),
               "activity_envelope": envelope_figure(diagnosis), "companion_check": companion_figure(diagnosis),
               "forecast": forecast_figure(diagnosis), "posterior_corner": corner_figure(diagnosis)}
    if getattr(diagnosis, "perturbers", None) is not None:
        fitted = next((a.fit for a in diagnosis.assessments if a.name == "n-body-perturber"), None)
        figures["perturber_map"] = perturber_map_figure(diagnosis.perturbers, fitted)
    return figures


def save_figure(fig: Figure, stem: "str | Path") -> list[Path]:
    """Write ``stem.png`` (300 dpi) and ``stem.pdf``; returns the paths."""
    stem = Path(stem)
    paths = [stem.with_suffix(".png"), stem.with_suffix(".pdf")]
    fig.savefig(paths[0], dpi=300)
    fig.savefig(paths[1])
    return paths
