"""Mid-times in: time standards, timing tables, reading compiled tables, the mixed-standard check.

Everything that turns a user's times (JD/MJD/HJD/BJD in UTC/TT/TDB, mission
day counts) into BJD_TDB lives here; the rest of ttvkit works in BJD_TDB days.
"""

from ttvkit.timing.ephemeris import KINDS, Ephemeris, kind_phase
from ttvkit.timing.standards import (
                                     TimeStandard,
                                     bjd_tdb_to_utc,
                                     from_bjd_tdb,
                                     known_standards,
                                     make_observer,
                                     make_target,
                                     parse_standard,
                                     to_bjd_tdb,
)
from ttvkit.timing.standards_check import (
                                     SourceOffset,
                                     StandardSuspicion,
                                     source_offsets,
                                     suspect_standards,
)
from ttvkit.timing.table import TimingTable

__all__ = ["TimingTable", "Ephemeris", "KINDS", "kind_phase",
           "TimeStandard", "parse_standard", "known_standards", "to_bjd_tdb", "from_bjd_tdb",
           "bjd_tdb_to_utc", "make_target", "make_observer",
           "SourceOffset", "StandardSuspicion", "source_offsets", "suspect_standards"]
