"""Keep astropy off the network.

ttvkit must run without network access.  astropy would otherwise try to
download a fresh IERS-A Earth-orientation table; here the auto-download is
switched off and the IERS-B table and leap-second list bundled with astropy
(the ``astropy-iers-data`` package) are used.  For dates past the bundled
table, UT1−UTC is held at its last value, which moves a topocentric
observer's position by far less than a metre — microseconds in time.
Leap seconds announced after the bundled table was made are not known; the
docs say so.
"""

from __future__ import annotations

import warnings

from astropy.utils import iers

__all__ = ["configure_offline"]


def configure_offline() -> None:
    """Switch astropy's IERS downloads off (idempotent)."""
    iers.conf.auto_download = False
    iers.conf.auto_max_age = None
    iers.conf.iers_degraded_accuracy = "ignore"
    try:  # "dubious year": ERFA's note that leap seconds past today are unknown
        import erfa

        warnings.filterwarnings("ignore", category=erfa.ErfaWarning,
                                message=".*dubious year.*")
    except ImportError:  # pragma: no cover - erfa ships with astropy
        pass
    try:
        from astropy.utils.exceptions import AstropyWarning

        warnings.filterwarnings("ignore", category=AstropyWarning,
                                message=".*polar motions.*")
    except ImportError:  # pragma: no cover
        pass


configure_offline()
