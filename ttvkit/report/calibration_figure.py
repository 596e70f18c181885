"""The injection–recovery figure: recovered fraction against injected amplitude, null false alarms.

Reads a :class:`~ttvkit.diagnosis.calibration.Calibration` and returns a
Figure (nothing is computed here beyond binomial error bars of the fractions
already counted; the style is the report's).
"""

from __future__ import annotations

import numpy as np
from matplotlib.figure import Figure

from ttvkit.report.figures import COLOURS, MARKERS, _figure, _style

__all__ = ["calibration_figure"]


def calibration_figure(calibration) -> Figure:
    """Left: fraction of injected signals called *needed* per amplitude; right: null false alarms."""
    with _style():
        fig = _figure(8.0, 3.4)
        left, right = fig.subplots(1, 2, gridspec_kw={"width_ratios": [3, 2]})
        n = max(calibration.n_per_amplitude, 1)
        for i, (name, rows) in enumerate(calibration.recovery.items()):
            amp = np.array([r[0] for r in rows])
            frac = np.array([r[1] for r in rows])
            err = np.sqrt(np.clip(frac * (1 - frac), 0, None) / n)      # binomial 1σ
            left.errorbar(amp, frac, err, marker=MARKERS[i], color=COLOURS[i], capsize=2, label=name)
        for level in (0.5, 0.9):
            left.axhline(level, color="0.6", lw=0.8, ls=":")
        left.set_xlabel("injected amplitude (σ of its detectability)")
        left.set_ylabel("fraction called needed")
        left.set_ylim(-0.03, 1.03)
        left.legend(loc="lower right", frameon=False)
        names = [k for k in calibration.false_alarms if k != "any"] + ["any"]
        rates = [calibration.false_alarms[k] for k in names]
        right.barh(range(len(names)), rates, color=[COLOURS[6] if k == "any" else COLOURS[0] for k in names])
        right.axvline(0.05, color=COLOURS[1], ls="--", lw=1, label="5%")
        right.set_xlim(0, max(0.1, 1.25 * max(rates)))      # a rate cannot be negative; 0 must show as 0
        for y, rate in enumerate(rates):                     # the counts, legible even when a bar is empty
            right.text(rate, y, f" {round(rate * calibration.n_null)}/{calibration.n_null}", va="center",
                       fontsize="small")
        right.set_yticks(range(len(names)), names)
        right.set_xlabel(f"false alarms on {calibration.n_null} null tables")
        right.legend(loc="lower right", frameon=False)
        scale = calibration.settings.get("error_scale", 1.0)
        fig.suptitle("Injection and recovery" + (f" (true scatter {scale:g}× the stated errors)"
                                                 if scale != 1.0 else ""))
    return fig
