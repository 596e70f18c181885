"""The activity-link figure: the O−C and the activity indicator on one time axis.

Reads an :class:`~ttvkit.inference.activity_link.ActivityLink` and the two
series it was computed from; draws, computes nothing (the smoothed O−C and
the scaled, lagged overlay come with the result).  Same house style as
:mod:`ttvkit.report.figures`.
"""

from __future__ import annotations

import numpy as np
from matplotlib.figure import Figure

from ttvkit.constants import DAY_S
from ttvkit.report.figures import COLOURS, MARKERS, _figure, _style

__all__ = ["activity_link_figure"]


def activity_link_figure(link, oc_time, oc, oc_error, indicator_time, indicator, indicator_error,
                         indicator_label: str = "activity indicator") -> Figure:
    """Two panels sharing the time axis: O−C (s) with its smoothing; the indicator with the lagged overlay.

    Parameters
    ----------
    link : ActivityLink
        The result of :func:`ttvkit.inference.activity_link.activity_link`.
    oc_time, oc, oc_error : array_like
        The O−C series in days (as passed to ``activity_link`` as plain numbers).
    indicator_time, indicator, indicator_error : array_like
        The indicator series.
    indicator_label : str
        Y-axis label of the lower panel (say the unit).

    Returns
    -------
    matplotlib.figure.Figure
    """
    t0 = float(np.floor(min(np.min(oc_time), np.min(indicator_time))))
    with _style():
        fig = _figure(7.0, 4.6)
        top, bottom = fig.subplots(2, 1, sharex=True)
        top.errorbar(np.asarray(oc_time) - t0, np.asarray(oc) * DAY_S, np.asarray(oc_error) * DAY_S * np.ones(len(oc)),
                     fmt=MARKERS[0], ms=3, color=COLOURS[0], elinewidth=0.6, label="O−C")
        top.plot(link.curve_time - t0, link.oc_curve * DAY_S, color=COLOURS[1], label="smoothed O−C")
        top.set_ylabel("O−C (s)")
        top.legend(loc="best")
        bottom.errorbar(np.asarray(indicator_time) - t0, indicator,
                        np.asarray(indicator_error) * np.ones(len(indicator)), fmt=MARKERS[1], ms=3,
                        mfc="none", color=COLOURS[2], elinewidth=0.6, label=indicator_label)
        what = "ΔP/P" if link.target == "period change" else "O−C"
        bottom.plot(link.curve_time - t0, link.overlay, color=COLOURS[1], ls="--",
                    label=f"scaled {what}, lag {link.lag:.0f} d (r = {link.correlation:.2f}, p = {link.p_value:.3g})")
        bottom.set_ylabel(indicator_label)
        bottom.set_xlabel(f"BJD_TDB − {t0:.0f} (d)")
        bottom.legend(loc="best")
    return fig
