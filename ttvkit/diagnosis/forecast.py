"""When will new mid-times separate the hypotheses still standing?

For each standing hypothesis the O−C (against the constant-period fit) is
predicted over the coming years with its 1σ band (posterior draws).  Two
hypotheses are told apart at an epoch when their medians differ by more than
3 √(σ_a² + σ_b² + σ_obs²), with σ_obs the timing precision of a new
observation (default: the median uncertainty of the most recent fifth of
the table).  The forecast lists the first such date for each pair, the
epochs worth observing (the first separating epochs and the one of largest
separation), and the next transit windows of the leading hypothesis —
start, mid and end in UTC and BJD_TDB with the ephemeris uncertainty.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from ttvkit.constants import DAY_S, YEAR_D
from ttvkit.inference.predictions import prediction_band
from ttvkit.timing.standards import bjd_tdb_to_utc

__all__ = ["Forecast", "make_forecast"]


@dataclass
class Forecast:
    """Predictions of the standing hypotheses and when they part."""

    epochs: np.ndarray
    bjd_tdb: np.ndarray
    curves: dict                      # name -> (median, lower, upper) O−C in seconds
    precision_s: float
    pairs: list = field(default_factory=list)
    windows: list = field(default_factory=list)
    reference: str = "constant-period"

    def to_dict(self) -> dict:
        """Plain-JSON form (curves thinned to at most 60 points)."""
        step = max(1, self.epochs.size // 60)
        return {"reference": self.reference, "timing_precision_s": self.precision_s,
                "epochs": self.epochs[::step].tolist(),
                "curves": {k: {"median_s": v[0][::step].tolist(), "lower_s": v[1][::step].tolist(),
                               "upper_s": v[2][::step].tolist()} for k, v in self.curves.items()},
                "separations": self.pairs, "next_transits": self.windows}


def make_forecast(standing: list, reference, table, years: float = 10.0, precision_s: float | None = None,
                  duration_h: float | None = None, target=None, n_windows: int = 8,
                  now: float | None = None) -> Forecast:
    """Forecast the O−C of the standing fits over ``years``.

    Parameters
    ----------
    standing : list of FitResult
        The hypotheses still standing, best first.
    reference : FitResult
        The constant-period fit the O−C is measured against.
    table : TimingTable
    years : float
    precision_s : float, optional
        Timing precision of a future observation (seconds).
    duration_h : float, optional
        Transit duration T14 (hours) for the windows.
    target : SkyCoord, optional
        For UTC dates at the geocentre.
    n_windows : int
        Upcoming transits listed.
    now : float, optional
        BJD_TDB from which to look ahead (default: the present, or the last
        mid-time if that is later).

    Returns
    -------
    Forecast
    """
    base = reference.data
    if now is None:
        from astropy.time import Time

        now = float(Time.now().tdb.jd)
    now_epoch = int(np.floor((now - base.t_ref) / base.period))
    last = max(int(np.max(table.epoch)), now_epoch)
    n_future = int(years * YEAR_D / base.period)
    step = max(1, n_future // 400)
    epochs = np.arange(last + 1, last + n_future + 1, step)
    data = base.at_epochs(epochs)
    ref_line = reference.hypothesis.predict(reference.model_theta(), data)
    if precision_s is None:
        recent = np.argsort(table.time)[-max(1, len(table) // 5):]
        precision_s = float(np.median(table.uncertainty[recent]) * DAY_S)
    curves = {}
    for fit in standing:
        med, lo, hi = prediction_band(fit, data)
        curves[fit.name] = ((med - ref_line) * DAY_S, (lo - ref_line) * DAY_S, (hi - ref_line) * DAY_S)
    bjd = ref_line + base.t_ref
    pairs = []
    names = list(curves)
    for i, a in enumerate(names):
        for b in names[i + 1:]:
            ma, la, ha = curves[a]
            mb, lb, hb = curves[b]
            sep = np.abs(ma - mb)
            sigma = np.sqrt(((ha - la) / 2) ** 2 + ((hb - lb) / 2) ** 2 + precision_s ** 2)
            ok = np.flatnonzero(sep > 3 * sigma)
            entry = {"hypotheses": [a, b], "first_epoch": None, "first_date_utc": None,
                     "epochs_worth_observing": [], "largest_separation_s": float(sep.max()),
                     "largest_separation_sigma": float((sep / sigma).max())}
            if ok.size:
                first = int(ok[0])
                best = int(np.argmax(sep / sigma))
                worth = sorted({int(epochs[k]) for k in list(ok[:3]) + [best]})
                entry.update(first_epoch=int(epochs[first]), first_bjd_tdb=float(bjd[first]),
                             first_date_utc=_utc(bjd[first], target), epochs_worth_observing=worth)
            pairs.append(entry)
    windows = []
    if standing:
        lead = standing[0]
        nxt = np.arange(last + 1, last + 1 + n_windows)
        wdata = base.at_epochs(nxt)
        med, lo, hi = prediction_band(lead, wdata)
        for k, e in enumerate(nxt):
            mid = float(med[k] + base.t_ref)
            sig = float((hi[k] - lo[k]) / 2 * DAY_S)
            half = (duration_h / 48.0) if duration_h else None
            windows.append({"epoch": int(e), "hypothesis": lead.name, "mid_bjd_tdb": mid,
                            "uncertainty_s": sig, "mid_utc": _utc(mid, target),
                            "start_bjd_tdb": mid - half if half else None,
                            "end_bjd_tdb": mid + half if half else None,
                            "start_utc": _utc(mid - half, target) if half else None,
                            "end_utc": _utc(mid + half, target) if half else None})
    return Forecast(epochs, bjd, curves, float(precision_s), pairs, windows, reference.name)


def _utc(bjd: float, target) -> str:
    t = bjd_tdb_to_utc(np.array([bjd]), target)[0]
    return t.isot[:19]
