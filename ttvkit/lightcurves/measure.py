"""From light-curve files to a timing table: windows, shape, per-transit mid-times.

:func:`measure` reads each light curve (:mod:`ttvkit.lightcurves.reading`), cuts a
window around every predicted transit, fixes the transit shape — given by
the user or fitted to all windows at once (:func:`fit_shape`) — and times
each light curve's windows (:func:`ttvkit.lightcurves.per_curve.time_light_curve`:
the noise measured, the transit detected).  Light curves are processed one
at a time, so memory stays flat with the number of light curves.  Every
window appears in the result: timed (in the table) or untimed with the
reason (in the report), never silently dropped.
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace

import numpy as np
from scipy.optimize import least_squares

from ttvkit.errors import InputError
from ttvkit.lightcurves.midtime import TransitShape, WindowModel
from ttvkit.lightcurves.per_curve import NOISE_MODELS, supersampled, time_light_curve
from ttvkit.lightcurves.reading import cut_windows
from ttvkit.timing.table import TimingTable

__all__ = ["measure", "MeasureOptions", "fit_shape", "guess_shape", "MeasureReport"]

@dataclass
class MeasureReport:
    """What was measured, what was not and why, the points dropped, the noise found.

    ``skipped`` lists every untimed window (source, epoch, coverage,
    reason) and every light curve that covers no predicted transit (epoch
    None); ``noise`` has one entry per light curve (white ratio, fitted
    correlated-noise model and whether it was used).
    """

    measured: int = 0
    skipped: list = field(default_factory=list)
    dropped: dict = field(default_factory=dict)
    shape: TransitShape | None = None
    noise: list = field(default_factory=list)

    def to_dict(self) -> dict:
        """Plain-JSON form."""
        s = self.shape
        return {"measured": self.measured, "skipped": self.skipped, "dropped_points": self.dropped,
                "noise": self.noise,
                "shape": None if s is None else {k: getattr(s, k) for k in s.__dataclass_fields__}}


def guess_shape(windows, period: float) -> TransitShape:
    """A rough shape from the windows folded on their predicted mid-times."""
    dt = np.concatenate([w.time - w.predicted for w in windows])
    f = np.concatenate([w.flux / np.median(w.flux) for w in windows])
    order = np.argsort(dt)
    dt, f = dt[order], f[order]
    bins = np.linspace(dt[0], dt[-1], 80)
    idx = np.digitize(dt, bins)
    binned = np.array([np.median(f[idx == i]) if np.any(idx == i) else 1.0 for i in range(1, bins.size)])
    depth = float(max(1 - np.min(binned), 1e-4))
    centres = 0.5 * (bins[1:] + bins[:-1])
    inside = centres[binned < 1 - depth / 2]
    t14 = float(max(np.ptp(inside) if inside.size > 1 else 0.1, 0.02)) * 1.1
    k = float(np.sqrt(depth))
    a = float(max(period * (1 + k) / (np.pi * t14) * np.sqrt(1 - 0.3 ** 2), 1.5))
    return TransitShape(period, k, a, 0.3)


def fit_shape(windows, initial: TransitShape, baseline_order: int = 1) -> TransitShape:
    """Fit radius ratio, a/R*, impact parameter and q1, q2 to all windows at once.

    Each window has its own mid-time (fitted) and polynomial baseline
    (profiled out).  Bounds: 0 < k < 0.5, 1.2 < a/R* < 200, 0 ≤ b < 1 + k,
    0 ≤ q1, q2 ≤ 1 (Kipping 2013).
    """
    if not windows:
        raise InputError("no windows to fit a shape to")
    n = len(windows)

    def shape_of(x):   # b kept below 1 + k: a trial shape that misses the star is not a shape
        return replace(initial, radius_ratio=x[0], a_over_rstar=x[1], impact_parameter=min(x[2], 0.999 * (1 + x[0])),
                       q1=x[3], q2=x[4])

    models = [None] * n

    def residuals(x):
        shape = shape_of(x)
        p = shape.batman_params(0.0)   # one shape for every window of this trial
        out = []
        for i, w in enumerate(windows):
            if models[i] is None:
                models[i] = WindowModel(w.time, w.flux, w.flux_err, shape, baseline_order, tabulated=False)
            m = models[i]
            for attr in ("rp", "a", "inc", "u"):
                setattr(m.params, attr, getattr(p, attr))
            _, model = m.profile_chi2(w.predicted + x[5 + i])
            out.append((w.flux - model) / w.flux_err)
        return np.concatenate(out)

    # mid-times as offsets from the predictions: finite-difference steps are
    # relative to |x|, which at BJD ~ 2.46e6 would be hours
    x0 = np.concatenate([[initial.radius_ratio, initial.a_over_rstar, initial.impact_parameter, initial.q1,
                          initial.q2], np.zeros(n)])
    t14, _ = initial.durations()
    lo = np.concatenate([[1e-3, 1.2, 0.0, 0.0, 0.0], np.full(n, -0.3 * t14)])
    hi = np.concatenate([[0.5, 200.0, 1.2, 1.0, 1.0], np.full(n, 0.3 * t14)])
    x0 = np.clip(x0, lo + 1e-9, hi - 1e-9)
    res = least_squares(residuals, x0, bounds=(lo, hi), x_scale="jac", method="trf", max_nfev=200)
    return shape_of(res.x)


@dataclass(frozen=True, kw_only=True)
class MeasureOptions:
    """How :func:`measure` reads light curves and times their transits (every field has a default).

    Attributes
    ----------
    shape : TransitShape, optional
        The transit shape; required unless ``fit_shape``.
    fit_shape : bool
        Fit the shape to all full windows first (starting from ``shape`` or
        from a rough guess).
    standard, preset, columns, target, observer
        Passed to :func:`ttvkit.lightcurves.reading.read_light_curve`.
    time_partial : bool
        Also time windows with ingress or egress missing (flagged).
    baseline_order : int
        Degree of each window's polynomial baseline (0 to 3).
    noise : {"auto", "white", "gp", "given"}
        The uncertainties' noise model: ``white`` rescales the flux errors
        to the out-of-transit scatter; ``gp`` fits a correlated-noise GP per
        light curve; ``auto`` (default) uses the GP where the data need it,
        else ``white``; ``given`` trusts the flux errors.
    """

    shape: TransitShape | None = None
    fit_shape: bool = False
    standard: str | None = None
    preset: str | None = None
    columns: dict | None = None
    target: object = None
    observer: object = None
    time_partial: bool = False
    baseline_order: int = 1
    noise: str = "auto"

    def __post_init__(self):
        if self.noise not in NOISE_MODELS:
            raise InputError(f"noise model {self.noise!r}: choose one of {', '.join(NOISE_MODELS)}")
        if self.shape is None and not self.fit_shape:
            raise InputError("give a transit shape (--shape SHAPE.toml) or ask for it to be fitted (--fit-shape)")
        if not 0 <= self.baseline_order <= 3:
            raise InputError("--baseline-order must be 0 to 3")


def measure(paths, ephemeris, options: MeasureOptions | None = None, *, progress: bool = True,
            **changes) -> tuple[TimingTable, MeasureReport]:
    """Mid-times of every transit in the light curves.

    Parameters
    ----------
    paths : path, LightCurve, arrays, TimeSeries, lightkurve-style object, or a sequence of them
        Light-curve files (CSV, ECSV, FITS) or light curves in memory (see
        :func:`ttvkit.lightcurves.inputs.as_light_curves`).
    ephemeris : Ephemeris
        Reference ephemeris (BJD_TDB) to find the transits and number them.
    options : MeasureOptions, optional
        The shape (or ``fit_shape=True``), reading options and fitting
        options.
    progress : bool
    **changes
        Fields of :class:`MeasureOptions` to set, e.g. ``shape=..., time_partial=True``.

    Returns
    -------
    (TimingTable, MeasureReport)
        The table has extra columns ``beta``, ``coverage``,
        ``white_uncertainty``, ``error_source`` (which noise model gave the
        uncertainty), ``noise_ratio`` (out-of-transit scatter / given
        errors) and ``depth_snr``; its source label is the light-curve file.
        Untimed windows and their reasons are in the report.
    """
    from tqdm.auto import tqdm

    from ttvkit.lightcurves.inputs import as_light_curves

    options = replace(options, **changes) if options is not None else MeasureOptions(**changes)

    report = MeasureReport()
    curves = as_light_curves(paths, options)
    for lc in curves:
        report.dropped[lc.source] = lc.dropped
    base = _transit_shape(curves, ephemeris, options)
    report.shape = base
    t14, tau = base.durations()
    rows = []
    for lc in tqdm(curves, desc="light curves", disable=not progress or len(curves) < 2):
        windows = cut_windows(lc, ephemeris, t14, tau)
        if not windows:
            report.skipped.append({"source": lc.source, "epoch": None, "coverage": "no data",
                                   "reason": "no light-curve points near any predicted transit (the light curve "
                                             "covers no transit of this ephemeris)"})
            continue
        timed, untimed, info = time_light_curve(lc, windows, base, options.noise, options.baseline_order,
                                                options.time_partial)
        rows += timed
        report.skipped += untimed
        report.noise.append(info)
    if not rows:
        raise InputError("no transit could be timed: " + "; ".join(f"{s['source']} epoch {s['epoch']}: "
                                                                  f"{s['reason']}" for s in report.skipped[:5]))
    report.measured = len(rows)
    return _table(rows, ephemeris, options.target, options.standard), report


def _transit_shape(curves, ephemeris, options: MeasureOptions) -> TransitShape:
    """The given shape, or one fitted to every fully covered window."""
    base = options.shape
    if base is None:
        rough = [w for lc in curves for w in cut_windows(lc, ephemeris, 0.2 * ephemeris.period, 0.01,
                                                         half_width=0.15 * ephemeris.period) if w.time.size]
        if not rough:
            raise InputError("no light-curve points near any predicted transit: check the ephemeris")
        base = guess_shape(rough, ephemeris.period)
    if not options.fit_shape:
        return base
    t14, tau = base.durations()
    pairs = [(lc, w) for lc in curves for w in cut_windows(lc, ephemeris, t14, tau)]
    full = [w for _, w in pairs if w.coverage == "full"]
    if not full:
        raise InputError("no fully covered transit to fit the shape to; give --shape")
    exposure = max(lc.exposure_time for lc, _ in pairs)
    fitted = fit_shape(full, supersampled(base, exposure), options.baseline_order)
    return replace(fitted, exposure_time=0.0, supersample=1)


def _table(rows, ephemeris, target, standard=None) -> TimingTable:
    def column(name):
        return np.array([getattr(r, name) for r in rows])

    return TimingTable(column("time"), column("uncertainty"), epoch=column("epoch"), kind="transit",
                       source=column("source"), given_standard=_given(standard), target=target, ephemeris=ephemeris,
                       extra={name: column(name) for name in ("beta", "coverage", "white_uncertainty",
                                                              "error_source", "noise_ratio", "depth_snr")})


def _given(standard) -> str:
    """The standard the light curves' times were given in, as recorded in the table (BTJD stays BTJD)."""
    if standard is None:
        return "BJD_TDB"
    from ttvkit.timing.standards import parse_standard

    key = str(standard).strip().upper()
    return key if key in ("BTJD", "BKJD") else parse_standard(standard).name
