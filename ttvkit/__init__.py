"""ttvkit: transit and eclipse timing, from mid-times to a physical verdict.

Measure mid-times, put every timing in BJD_TDB, fit every explanation of a
timing drift and test each against the physics of the star and planet.
See the README and the user guide in ``docs/``.
"""

from ttvkit import _offline  # noqa: F401  (no network: switch IERS downloads off first)
from ttvkit._version import __version__
from ttvkit.errors import (
                     ConvergenceError,
                     EphemerisError,
                     InputError,
                     MissingValueError,
                     OutputExistsError,
                     TimeStandardError,
                     TimeStandardWarning,
                     TtvkitError,
                     TtvkitWarning,
)
from ttvkit.timing.ephemeris import KINDS, Ephemeris
from ttvkit.timing.standards import (
                     bjd_tdb_to_utc,
                     from_bjd_tdb,
                     make_observer,
                     make_target,
                     parse_standard,
                     to_bjd_tdb,
)
from ttvkit.timing.standards_check import (
                     StandardSuspicion,
                     source_offsets,
                     suspect_standards,
)
from ttvkit.timing.table import TimingTable

__all__ = [
    "__version__",
    "TimingTable", "Ephemeris", "KINDS",
    "to_bjd_tdb", "from_bjd_tdb", "bjd_tdb_to_utc", "parse_standard", "make_target",
    "make_observer",
    "suspect_standards", "source_offsets", "StandardSuspicion",
    "TtvkitError", "InputError", "TimeStandardError", "EphemerisError", "MissingValueError",
    "ConvergenceError", "OutputExistsError", "TtvkitWarning", "TimeStandardWarning",
]
