"""Kinds of timed events and the linear reference ephemeris that numbers them.

A transit and a primary eclipse sit at phase 0, an occultation and a
secondary eclipse at phase ½ (circular orbit); :class:`Ephemeris` predicts
mid-times and assigns the nearest epoch to each observed time.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ttvkit.errors import EphemerisError, located

__all__ = ["KINDS", "kind_phase", "normalise_kind", "Ephemeris", "ephemeris_from_meta"]

#: Orbital phase of each kind of event (occultation and secondary eclipse at
#: half a period for a circular orbit; eccentric orbits shift them, which is
#: the apsidal-precession hypothesis's business, not the epoch count's).
KINDS = {"transit": 0.0, "occultation": 0.5, "primary": 0.0, "secondary": 0.5}
_KIND_ALIASES = {"tra": "transit", "occ": "occultation", "eclipse": "occultation",
                 "pri": "primary", "sec": "secondary", "p": "primary", "s": "secondary"}


def kind_phase(kinds) -> np.ndarray:
    """Phase offset (0 or 0.5) of each kind name."""
    return np.array([KINDS[k] for k in np.atleast_1d(kinds)], dtype=float)


def normalise_kind(text: str) -> str | None:
    """Canonical kind name, or None if unknown."""
    key = str(text).strip().lower()
    key = _KIND_ALIASES.get(key, key)
    return key if key in KINDS else None


@dataclass(frozen=True)
class Ephemeris:
    """A linear reference ephemeris ``T(E) = reference_time + period · E``.

    Parameters
    ----------
    reference_time : float
        Mid-time of epoch 0, BJD_TDB days.
    period : float
        Orbital period, days.
    """

    reference_time: float
    period: float

    def __post_init__(self):
        if not (np.isfinite(self.reference_time) and np.isfinite(self.period)):
            raise EphemerisError("ephemeris values must be finite numbers")
        if self.period <= 0:
            raise EphemerisError(f"ephemeris period must be positive, got {self.period}")

    @classmethod
    def parse(cls, text: str) -> "Ephemeris":
        """Read ``"T0,P"`` (BJD_TDB days, days)."""
        try:
            t0, period = (float(x) for x in str(text).split(","))
        except ValueError:
            raise EphemerisError(f"ephemeris {text!r} must be 'T0,P' in BJD_TDB days "
                                 "and days, e.g. 2455000.1234,2.7183") from None
        return cls(t0, period)

    def predict(self, epoch, kind="transit") -> np.ndarray:
        """Predicted mid-times (BJD_TDB) of ``epoch`` for events of ``kind``."""
        return self.reference_time + self.period * (np.asarray(epoch, float) + kind_phase(kind))

    def assign_epochs(self, time, kind="transit", tolerance: float = 0.25,
                      path=None, rows=None) -> np.ndarray:
        """Nearest epoch of each time; refuse if one sits ``tolerance`` periods off."""
        time = np.atleast_1d(np.asarray(time, float))
        kinds = np.broadcast_to(np.asarray(kind, dtype=object), time.shape)
        cycles = (time - self.reference_time) / self.period - kind_phase(kinds)
        epoch = np.rint(cycles)
        off = np.abs(cycles - epoch)
        bad = np.flatnonzero(off > tolerance)
        if bad.size:
            i = bad[0]
            row = rows[i] if rows is not None else i + 1
            raise EphemerisError(located(
                f"time {time[i]:.6f} lies {off[i]:.2f} of a period from the nearest "
                f"{kinds[i]} epoch of the ephemeris T0={self.reference_time}, "
                f"P={self.period}: the epoch is ambiguous; check the ephemeris, "
                "the kind or give the epoch", path, row, "time"))
        return epoch.astype(np.int64)


def ephemeris_from_meta(meta: dict) -> Ephemeris | None:
    """The ephemeris stored in an ECSV header by :meth:`TimingTable.write`."""
    eph = meta.get("ephemeris") if isinstance(meta, dict) else None
    if not isinstance(eph, dict):
        return None
    try:
        return Ephemeris(float(eph["reference_time_bjd_tdb"]), float(eph["period_days"]))
    except (KeyError, TypeError, ValueError):
        return None
