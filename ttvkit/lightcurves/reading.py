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
window around a predicted transit is classified ``full``, ``partial``
(ingress or egress missing) or ``sparse``.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from ttvkit.errors import InputError, located
from ttvkit.timing.standards import to_bjd_tdb

__all__ = ["LightCurve", "Window", "read_light_curve", "cut_windows", "PRESETS"]

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
    """

    time: np.ndarray
    flux: np.ndarray
    flux_err: np.ndarray
    source: str
    exposure_time: float = 0.0
    dropped: dict = field(default_factory=dict)

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
    std = standard or "BJD_TDB"
    if offset:
        from ttvkit.timing.standards import parse_standard

        base = parse_standard(std)
        t = t + offset
        std = base.name.split("-")[0].split("+")[0]
    t = to_bjd_tdb(t, std, target, observer) if std != "BJD_TDB" else t
    median = float(np.median(f))
    if not median > 0:
        raise InputError(located("the median flux is not positive; give a flux column, not magnitudes", path,
                                 None, names["flux"]))
    f, e = f / median, e / median
    keep = np.ones(t.size, bool)
    for _ in range(5):  # iterative clipping against a running median (robust to the transits)
        smooth = _running_median(f, 31)
        resid = f - smooth
        scale = 1.4826 * np.median(np.abs(resid[keep] - np.median(resid[keep])))
        new = np.abs(resid) < clip_sigma * max(scale, 1e-12)
        if np.array_equal(new, keep):
            break
        keep = new
    dropped["clipped"] = int((~keep).sum())
    t, f, e = t[keep], f[keep], e[keep]
    cadence = float(np.median(np.diff(t))) if t.size > 1 else 0.0
    return LightCurve(t, f, e, path.name, exposure_time if exposure_time is not None else cadence, dropped)


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


def cut_windows(lc: LightCurve, ephemeris, duration: float, ingress: float, half_width: float | None = None,
                min_points: int = 10) -> list[Window]:
    """One window per predicted transit that has data.

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
    min_points : int
        Fewer in-transit points than this: ``sparse``.

    Returns
    -------
    list of Window
        Classified ``full`` (both ingress and egress and some baseline on
        both sides covered), ``partial`` or ``sparse``.
    """
    half = half_width if half_width is not None else 1.5 * duration
    first = int(np.ceil((lc.time[0] - half - ephemeris.reference_time) / ephemeris.period))
    last = int(np.floor((lc.time[-1] + half - ephemeris.reference_time) / ephemeris.period))
    out = []
    gap = max(3 * lc.cadence, ingress)
    for epoch in range(first, last + 1):
        mid = ephemeris.reference_time + epoch * ephemeris.period
        lo, hi = np.searchsorted(lc.time, [mid - half, mid + half])
        if hi - lo == 0:
            continue
        t = lc.time[lo:hi]
        in_transit = np.abs(t - mid) < duration / 2
        edges = [mid - duration / 2, mid + duration / 2]
        covered = all(np.any(np.abs(t - x) < gap) for x in edges)
        before = np.any(t < mid - duration / 2 - ingress)
        after = np.any(t > mid + duration / 2 + ingress)
        if in_transit.sum() < min_points:
            coverage = "sparse"
        elif covered and before and after:
            coverage = "full"
        else:
            coverage = "partial"
        out.append(Window(epoch, mid, t, lc.flux[lo:hi], lc.flux_err[lo:hi], coverage, lc.source,
                          lc.exposure_time))
    return out
