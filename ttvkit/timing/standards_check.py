"""Catch time-standard mix-ups in compiled timing tables.

A source whose times were really BJD_UTC but are labelled BJD_TDB sits about
a minute (32.184 s plus the leap seconds: 66.184 s in 2009–2012, 69.184 s
since 2017) early against everyone else; an HJD labelled BJD is off by up to
about 4 s (Eastman, Siverd & Gaudi 2010, PASP 122, 935).  Such an offset is
easily taken for a timing variation.  The check here compares each source
with a smooth ephemeris fitted to *all the other sources* and asks whether
its offset is significant and matches what relabelling its standard would
do.

Method (ours): for each source, all mid-times are fitted with a smooth
ephemeris (a cubic B-spline in epoch, its number of knots chosen by BIC, so
that genuine timing variations of years are followed) plus one constant
offset for that source.  The offset's error comes from the fit's covariance,
inflated by √χ²_red when that exceeds one.  An offset is only measurable
where the source overlaps others in time.  Every alternative labelling
(UTC ↔ TDB, HJD ↔ BJD, and both) is tried by re-converting the source's
original numbers; a suspicion is raised when the offset is significant
(> ``threshold`` σ) and the best alternative explains it (remaining offset
< 2 σ).
"""

from __future__ import annotations

import copy
import warnings
from dataclasses import asdict, dataclass

import numpy as np

from ttvkit._linear import weighted_line, weighted_lstsq
from ttvkit.constants import DAY_S
from ttvkit.errors import TimeStandardWarning
from ttvkit.timing.ephemeris import KINDS
from ttvkit.timing.standards import (
    TimeStandard,
    from_bjd_tdb,
    parse_standard,
    to_bjd_tdb,
)

__all__ = ["SourceOffset", "StandardSuspicion", "source_offsets", "suspect_standards",
           "warn_suspicions"]



@dataclass(frozen=True)
class SourceOffset:
    """How far one source sits from the ephemeris of all the others (seconds)."""

    source: str
    n_points: int
    offset_s: float
    error_s: float

    @property
    def significance(self) -> float:
        """Absolute offset divided by its error."""
        return abs(self.offset_s) / self.error_s


@dataclass(frozen=True)
class StandardSuspicion:
    """A source whose offset matches a relabelled time standard."""

    source: str
    offset_s: float
    error_s: float
    significance: float
    given_standard: str
    likely_standard: str
    relabel_shift_s: float

    def message(self) -> str:
        """One sentence for a warning or a report."""
        return (f"source {self.source!r} sits {self.offset_s:+.1f} ± {self.error_s:.1f} s "
                f"({self.significance:.1f}σ) from the other sources; its times look like "
                f"{self.likely_standard}, not {self.given_standard} as labelled "
                f"(relabelling would move them by {self.relabel_shift_s:+.1f} s)")

    def to_dict(self) -> dict:
        """Plain-JSON form."""
        d = asdict(self)
        d["message"] = self.message()
        return d


def _spline_basis(x: np.ndarray, interior: int) -> np.ndarray:
    """Cubic B-spline design matrix with ``interior`` knots at quantiles of ``x``."""
    from scipy.interpolate import BSpline

    lo, hi = float(x.min()), float(x.max())
    inner = np.quantile(x, np.linspace(0, 1, interior + 2)[1:-1]) if interior else np.array([])
    knots = np.concatenate([[lo] * 4, inner, [hi] * 4])
    return BSpline.design_matrix(np.clip(x, lo, hi), knots, 3).toarray()


def _offset_fit(x, y, sigma, mine, max_interior: int):
    """Smooth ephemeris + one offset for ``mine``; knots chosen by BIC.

    Returns (offset, error, reduced chi2) of the BIC-preferred model.
    """
    best = None
    for interior in range(0, max_interior + 1):
        design = np.column_stack([_spline_basis(x, interior), mine.astype(float)])
        if design.shape[1] >= x.size:
            break
        coef = weighted_lstsq(design, y, sigma)
        a = design / sigma[:, None]
        resid = (y - design @ coef) / sigma
        chi2 = float(resid @ resid)
        bic = chi2 + design.shape[1] * np.log(x.size)
        if best is None or bic < best[0]:
            cov = np.linalg.pinv(a.T @ a)
            dof = max(x.size - design.shape[1], 1)
            best = (bic, coef[-1], float(np.sqrt(cov[-1, -1])), chi2 / dof)
    return best[1], best[2], best[3]


def source_offsets(table, max_interior_knots: int = 12) -> list[SourceOffset]:
    """Offset of each source from a smooth ephemeris shared by all sources.

    Parameters
    ----------
    table : TimingTable
    max_interior_knots : int
        Most interior knots of the cubic-spline ephemeris tried; the number
        used is chosen by BIC for each source.

    Returns
    -------
    list of SourceOffset
        One per source that has at least three points of other sources to
        compare with.  An offset is only measurable where other sources
        overlap in time; elsewhere its error is large.
    """
    phase = np.array([KINDS[k] for k in table.kind])
    x_all = table.epoch + phase
    y_all = (table.time - weighted_line(x_all, table.time, table.uncertainty)(x_all)) * DAY_S
    s_all = table.uncertainty * DAY_S
    out = []
    for source in table.sources:
        mine = table.source == source
        if (~mine).sum() < 3:
            continue
        offset, error, chi2_red = _offset_fit(x_all, y_all, s_all, mine, max_interior_knots)
        error *= np.sqrt(max(chi2_red, 1.0))
        out.append(SourceOffset(source, int(mine.sum()), float(offset), float(error)))
    return out


def _alternatives(std: TimeStandard, have_target: bool) -> list[TimeStandard]:
    frames = ("BJD", "HJD") if have_target else (std.frame,)
    scales = ("UTC", "TDB")
    given_scale = "UTC" if std.scale == "utc" else "TDB"
    alts = []
    for frame in frames:
        for scale in scales:
            if frame == std.frame and scale == given_scale:
                continue
            name = f"{frame}_{scale}"
            if std.offset and not (std.frame == "JD" and abs(std.offset - 2400000.5) < 1e-9):
                name += f"-{std.offset:.10g}" if std.offset > 0 else f"+{-std.offset:.10g}"
            try:
                alts.append(parse_standard(name))
            except Exception:  # pragma: no cover - names built above always parse
                continue
    return alts


def suspect_standards(table, threshold: float = 4.0) -> list[StandardSuspicion]:
    """Sources whose offset from the rest matches a time-standard mix-up.

    The most significant suspicion is taken first; its source is then
    relabelled in a working copy and the search repeated, so that one
    mislabelled source does not drag the others' offsets with it.

    Parameters
    ----------
    table : TimingTable
    threshold : float
        Significance (in σ) an offset must exceed to be examined.  The default
        of 4 keeps false alarms rare in tables of a dozen sources
        (common practice, no source).

    Returns
    -------
    list of StandardSuspicion
        Empty when nothing looks wrong.
    """
    work = copy.copy(table)
    work.time = table.time.copy()
    suspicions: list[StandardSuspicion] = []
    for _ in range(len(table.sources)):
        found = []
        for off in source_offsets(work):
            if off.significance < threshold or any(s.source == off.source for s in suspicions):
                continue
            hit = _explain(work, off)
            if hit is not None:
                found.append(hit)
        if not found:
            break
        worst = max(found, key=lambda h: h[0].significance)
        suspicions.append(worst[0])
        mine = work.source == worst[0].source
        work.time[mine] = worst[1]
    return suspicions


def _explain(table, off: SourceOffset):
    """The relabelling that best explains ``off``, or None."""
    mine = table.source == off.source
    givens = np.unique(table.given_standard[mine])
    if givens.size != 1:
        return None  # a source that mixes standards itself: relabelling it as one is meaningless
    std = parse_standard(str(givens[0]))
    original = table.time[mine] if std.name == "BJD_TDB" else \
        from_bjd_tdb(table.time[mine], std, table.target)
    candidates = []
    for alt in _alternatives(std, table.target is not None):
        if alt.needs_target and table.target is None:
            continue
        relabelled = to_bjd_tdb(original, alt, table.target)
        shift = float(np.mean(relabelled - table.time[mine]) * DAY_S)
        remaining = abs(off.offset_s + shift) / off.error_s
        changes = int(alt.frame != std.frame) + int((alt.scale == "utc") != (std.scale == "utc"))
        candidates.append((remaining, changes, alt, shift, relabelled))
    if not candidates:
        return None
    floor = min(c[0] for c in candidates)
    if floor >= 2.0:
        return None
    # Among relabellings the data cannot tell apart (within 1 sigma of the
    # best), the simplest mistake -- one change of frame or scale -- is named.
    best = min((c for c in candidates if c[0] < floor + 1.0), key=lambda c: (c[1], c[0]))
    best = (best[0], best[2], best[3], best[4])
    return (StandardSuspicion(off.source, off.offset_s, off.error_s, off.significance,
                              std.name, best[1].name, best[2]), best[3])


def warn_suspicions(suspicions: list[StandardSuspicion]) -> None:
    """Emit one :class:`~ttvkit.errors.TimeStandardWarning` per suspicion."""
    for s in suspicions:
        warnings.warn(s.message(), TimeStandardWarning, stacklevel=2)
