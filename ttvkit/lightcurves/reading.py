"""Light curves: reading them, cleaning them, and cutting a window around each transit.

Readers take CSV/ECSV (columns ``time``, ``flux``, ``flux_err`` read with no
options) and FITS binary tables, with the columns chosen by the user or by a
preset for a common mission layout: ``tess`` and ``kepler`` (columns
``TIME``, ``PDCSAP_FLUX``, ``PDCSAP_FLUX_ERR``, ``QUALITY``; time as BJD_TDB
minus the offset the header's ``BJDREFI`` + ``BJDREFF`` state; rows with a
non-zero quality flag dropped — mission data-product conventions, common
practice).  Times become BJD_TDB at the edge (:mod:`ttvkit.timing.standards`).

Cleaning: NaN removal, normalisation by the median, iterative sigma
clipping of outliers; every dropped point is counted and reported.  Each
window around a predicted transit is classified by what it covers in time
(:func:`coverage`).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from ttvkit.errors import InputError, located
from ttvkit.timing.standards import to_bjd_tdb

__all__ = ["LightCurve", "Window", "read_light_curve", "cut_windows", "coverage", "PRESETS"]

#: Mission layouts: column names and where the time offset lives.
PRESETS = {
    "tess": {"time": "TIME", "flux": "PDCSAP_FLUX", "flux_err": "PDCSAP_FLUX_ERR", "quality": "QUALITY",
             "default_offset": 2457000.0},
    "kepler": {"time": "TIME", "flux": "PDCSAP_FLUX", "flux_err": "PDCSAP_FLUX_ERR", "quality": "QUALITY",
               "default_offset": 2454833.0},
}


@dataclass
class LightCurve:
    """A cleaned, normalised light curve in BJD_TDB.

    Attributes
    ----------
    time, flux, flux_err : ndarray
    source : str
        The file it came from.
    exposure_time : float
        Integration time of one point (days); 0 if unknown.
    dropped : dict
        Counts of points removed: ``nan``, ``quality``, ``clipped``.
    span : (float, float), optional
        First and last time in the file, rows later dropped included (BJD_TDB):
        a transit inside the span with no points left fell into a gap.
    """

    time: np.ndarray
    flux: np.ndarray
    flux_err: np.ndarray
    source: str
    exposure_time: float = 0.0
    dropped: dict = field(default_factory=dict)
    span: tuple | None = None

    @property
    def cadence(self) -> float:
        """Median spacing of the points (days)."""
        return float(np.median(np.diff(self.time))) if self.time.size > 1 else 0.0


@dataclass
class Window:
    """The points around one predicted transit."""

    epoch: int
    predicted: float
    time: np.ndarray
    flux: np.ndarray
    flux_err: np.ndarray
    coverage: str
    source: str
    exposure_time: float = 0.0


def _fits_columns(path: Path, hdu: int):
    from astropy.io import fits

    try:
        with fits.open(path, memmap=False) as hdul:
            if len(hdul) <= hdu or not hasattr(hdul[hdu], "columns"):
                raise InputError(f"{path}: HDU {hdu} is not a binary table")
            data = hdul[hdu].data
            header = hdul[hdu].header
            cols = {name.upper(): np.asarray(data[name], dtype=float) for name in data.columns.names}
            return cols, dict(header)
    except (OSError, ValueError) as exc:
        raise InputError(f"{path}: not a readable FITS file ({exc})") from None


def read_light_curve(path, standard: str | None = None, columns: dict | None = None, preset: str | None = None,
                     target=None, observer=None, hdu: int = 1, exposure_time: float | None = None,
                     clip_sigma: float = 5.0) -> LightCurve:
    """Read, convert to BJD_TDB, clean and normalise one light curve.

    Parameters
    ----------
    path : str or Path
        CSV, ECSV or FITS file.
    standard : str, optional
        Time standard of the time column (default BJD_TDB; for FITS the
        header's offset is applied first).
    columns : dict, optional
        ``{"time": ..., "flux": ..., "flux_err": ..., "quality": ...}``.
    preset : {"tess", "kepler"}, optional
    target, observer
        For JD and HJD time standards.
    hdu : int
        FITS extension with the table.
    exposure_time : float, optional
        Integration time (days); default: the median cadence.
    clip_sigma : float
        Outlier threshold for iterative sigma clipping.

    Returns
    -------
    LightCurve
    """
    path = Path(path)
    if preset is not None and preset not in PRESETS:
        raise InputError(f"unknown preset {preset!r}; known presets: {', '.join(PRESETS)}")
    names = dict(PRESETS[preset]) if preset else {}
    names.update(columns or {})
    raw, names, offset = _read_columns(path, names, preset, hdu)
    if "mag" in str(names["flux"]).lower():
        raise InputError(located("this column looks like magnitudes; ttvkit times fluxes: convert "
                                 "(flux = 10**(-0.4 mag)) or choose a flux column", path, None, names["flux"]))
    t, f, e, dropped = _usable_rows(raw, names, path)
    std = standard or "BJD_TDB"
    if offset:
        from ttvkit.timing.standards import parse_standard

        std = parse_standard(std).name.split("-")[0].split("+")[0]
    finite_t = raw["time"][np.isfinite(raw["time"])]
    ends = np.array([finite_t.min(), finite_t.max()]) + offset
    t = t + offset
    if std != "BJD_TDB":
        t, ends = to_bjd_tdb(t, std, target, observer), to_bjd_tdb(ends, std, target, observer)
    median = float(np.median(f))
    if not median > 0:
        raise InputError(located("the median flux is not positive; give a flux column, not magnitudes", path,
                                 None, names["flux"]))
    f, e = f / median, e / median
    keep = _clip(f, clip_sigma)
    dropped["clipped"] = int((~keep).sum())
    t, f, e = t[keep], f[keep], e[keep]
    cadence = float(np.median(np.diff(t))) if t.size > 1 else 0.0
    return LightCurve(t, f, e, path.name, exposure_time if exposure_time is not None else cadence, dropped,
                      (float(ends[0]), float(ends[1])))


def _read_columns(path: Path, names: dict, preset, hdu: int):
    """The raw columns (time, flux, flux_err, quality) of a FITS or text table, and the time offset."""
    offset = 0.0
    if path.suffix.lower() in (".fits", ".fit", ".fz") or _starts_with(path, b"SIMPLE"):
        cols, header = _fits_columns(path, hdu)
        names = {k: v.upper() if isinstance(v, str) else v for k, v in names.items()}
        names.setdefault("time", "TIME")
        names.setdefault("flux", "FLUX")
        names.setdefault("flux_err", "FLUX_ERR")
        if "BJDREFI" in header:
            offset = float(header["BJDREFI"]) + float(header.get("BJDREFF", 0.0))
        elif preset:
            offset = PRESETS[preset]["default_offset"]
        raw = {k: cols.get(str(v).upper()) for k, v in names.items() if k != "default_offset"}
        missing_from = sorted(cols)
    else:
        from ttvkit.io.readers import read_raw_table

        table = read_raw_table(path)
        names = {k: str(v).lower() for k, v in names.items() if k != "default_offset"}
        for k in ("time", "flux", "flux_err"):
            names.setdefault(k, k)
        raw = {}
        for k, v in names.items():
            if v in table.columns:
                try:
                    raw[k] = np.array([np.nan if x in (None, "") else float(x) for x in table.columns[v]])
                except (TypeError, ValueError):
                    bad = next(i for i, x in enumerate(table.columns[v]) if not _is_number(x))
                    raise InputError(located(f"{table.columns[v][bad]!r} is not a number", path, bad + 1, v)) from None
            else:
                raw[k] = None
        missing_from = list(table.columns)
    for k in ("time", "flux", "flux_err"):
        if raw.get(k) is None:
            raise InputError(located(f"missing column '{names.get(k, k)}'; the file has: "
                                     f"{', '.join(missing_from)}; choose columns or a preset", path))
    return raw, names, offset


def _usable_rows(raw: dict, names: dict, path: Path):
    """Rows with finite time, flux and error and no quality flag; positive errors, increasing times."""
    t, f, e = raw["time"], raw["flux"], raw["flux_err"]
    dropped = {"nan": 0, "quality": 0, "clipped": 0}
    keep = np.ones(t.size, bool)
    if raw.get("quality") is not None:
        bad_q = np.nan_to_num(raw["quality"], nan=1) != 0
        dropped["quality"] = int(bad_q.sum())
        keep &= ~bad_q
    finite = np.isfinite(t) & np.isfinite(f) & np.isfinite(e)
    dropped["nan"] = int((keep & ~finite).sum())
    keep &= finite
    if not keep.any():
        raise InputError(located("no usable points: every row is NaN or flagged", path, None, names["flux"]))
    t, f, e = t[keep], f[keep], e[keep]
    if np.any(e <= 0):
        i = int(np.flatnonzero(e <= 0)[0])
        raise InputError(located(f"flux errors must be positive (found {e[i]!r})", path, None, names["flux_err"]))
    if np.any(np.diff(t) <= 0):
        raise InputError(located("times are not strictly increasing (sort the file, remove duplicates)",
                                 path, int(np.flatnonzero(np.diff(t) <= 0)[0]) + 2, names["time"]))
    return t, f, e, dropped


def _clip(f: np.ndarray, clip_sigma: float) -> np.ndarray:
    """Iterative clipping against a running median (robust to the transits): the points kept."""
    keep = np.ones(f.size, bool)
    for _ in range(5):
        resid = f - _running_median(f, 31)
        scale = 1.4826 * np.median(np.abs(resid[keep] - np.median(resid[keep])))
        new = np.abs(resid) < clip_sigma * max(scale, 1e-12)
        if np.array_equal(new, keep):
            break
        keep = new
    return keep


def _starts_with(path: Path, magic: bytes) -> bool:
    """True if the file begins with ``magic`` (reads only that many bytes)."""
    try:
        with open(path, "rb") as handle:
            return handle.read(len(magic)) == magic
    except OSError:
        raise InputError(f"{path}: cannot be read") from None


def _is_number(x) -> bool:
    try:
        float(x)
        return True
    except (TypeError, ValueError):
        return False


def _running_median(x: np.ndarray, size: int) -> np.ndarray:
    from scipy.ndimage import median_filter

    return median_filter(x, size=min(size, max(1, x.size | 1)), mode="nearest")


def cut_windows(lc: LightCurve, ephemeris, duration: float, ingress: float,
                half_width: float | None = None) -> list[Window]:
    """One window per predicted transit inside the light curve's span.

    Parameters
    ----------
    lc : LightCurve
    ephemeris : Ephemeris
        Reference ephemeris (BJD_TDB).
    duration : float
        Total transit duration T14 (days).
    ingress : float
        Ingress duration τ (days).
    half_width : float, optional
        Half-width of the window (default 1.5 × T14).

    Returns
    -------
    list of Window
        Classified by :func:`coverage` (``full``, ``partial``, ``no ingress
        or egress``, ``no points in transit``); a predicted transit inside
        the file's span with no points left (a gap, NaN rows) is a window
        with no points, ``no data``.
    """
    half = half_width if half_width is not None else 1.5 * duration
    start, end = lc.span if lc.span is not None else (lc.time[0], lc.time[-1])
    first = int(np.ceil((start - half - ephemeris.reference_time) / ephemeris.period))
    last = int(np.floor((end + half - ephemeris.reference_time) / ephemeris.period))
    reach = 0.5 * max(lc.cadence, lc.exposure_time)
    out = []
    for epoch in range(first, last + 1):
        mid = ephemeris.reference_time + epoch * ephemeris.period
        lo, hi = np.searchsorted(lc.time, [mid - half, mid + half])
        if hi == lo and not start <= mid <= end:
            continue        # beyond the ends of the file: not in this light curve
        t = lc.time[lo:hi]
        label = coverage(t - mid, duration, ingress, reach) if hi > lo else "no data"
        out.append(Window(epoch, mid, t, lc.flux[lo:hi], lc.flux_err[lo:hi], label, lc.source, lc.exposure_time))
    return out


#: Fraction of the ingress (egress) that must be sampled for it to count as covered (common practice, no source).
COVERED_FRACTION = 0.5


def coverage(dt: np.ndarray, duration: float, ingress: float, reach: float) -> str:
    """Classify a window by what its points cover in time (not by how many there are).

    A point samples the instants within ``reach`` (half its cadence or
    exposure, whichever is longer) of its time.  Ingress (egress) is covered
    when at least :data:`COVERED_FRACTION` of it is sampled; ``full`` needs
    both plus baseline before and after, ``partial`` one of them.

    Parameters
    ----------
    dt : ndarray
        Times relative to the predicted mid-time (days), sorted.
    duration, ingress, reach : float
        T14, τ and the sampling reach (days).
    """
    if dt.size == 0:
        return "no data"
    centre = 0.5 * (duration - ingress)
    probe = np.linspace(-0.5, 0.5, 21) * ingress

    def sampled(x):
        i = np.clip(np.searchsorted(dt, x), 1, dt.size - 1) if dt.size > 1 else np.zeros(x.size, int)
        nearest = np.minimum(np.abs(dt[i] - x), np.abs(dt[i - 1] - x)) if dt.size > 1 else np.abs(dt[0] - x)
        return float(np.mean(nearest <= reach + 1e-12)) >= COVERED_FRACTION

    ing, egr = sampled(probe - centre), sampled(probe + centre)
    before = np.any(dt < -duration / 2 - ingress / 2)
    after = np.any(dt > duration / 2 + ingress / 2)
    if ing and egr and before and after:
        return "full"
    if ing or egr:
        return "partial"
    if np.any(np.abs(dt) < duration / 2):
        return "no ingress or egress"
    return "no points in transit"
