"""Real compiled tables (Ivshina & Winn 2022, ApJS 259, 62) read as published and fitted.

Each check names its published value.  The tables are in tests/data (see its README).
"""

from __future__ import annotations

import warnings
from pathlib import Path

import pytest

from ttvkit.errors import EphemerisError, TimeStandardError
from ttvkit.inference.excess_noise import decide_excess_noise
from ttvkit.inference.fitting import compare, fit
from ttvkit.timing.intake_checks import IntakeWarning
from ttvkit.timing.table import Ephemeris, TimingTable

DATA = Path(__file__).parent.parent / "data"
COLUMNS = {"time": "t_mid", "uncertainty": "uncertainty_days", "standard": "time_system",
           "source": "reference"}
# The database's own linear ephemerides (Ivshina & Winn 2022), used only to number epochs.
EPHEMERIS = {"WASP-004": Ephemeris(2456576.675079, 1.338231371),
             "WASP-043": Ephemeris(2457423.449697, 0.813474037),
             "TrES-3": Ephemeris(2456824.4074, 1.30618627)}


def read(name, **kwargs):
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        table = TimingTable.read(DATA / f"ivshina_winn2022_{name}_transit_times.csv", columns=COLUMNS,
                                 ephemeris=EPHEMERIS[name], **kwargs)
    return table, [str(w.message) for w in caught if issubclass(w.category, IntakeWarning)]


def decay_rate(table):
    """dP/dt (ms/yr) and its error with the default excess-noise decision."""
    decision = decide_excess_noise(table)
    result = fit(table, "orbital-decay", decision.likelihood)
    est = result.estimate("dP_dt")
    return est.value, 0.5 * (est.lower + est.upper), decision


def test_wasp4_loads_with_repeats_and_decay_matches_bouma2020():
    table, _ = read("WASP-004")
    # repeats of one event are kept: all 122 rows (Ivshina & Winn 2022 list them as published)
    assert len(table) == 122
    value, error, _ = decay_rate(table)
    # Bouma et al. 2020, ApJL 893, L29: -8.64 +- 1.26 ms/yr; within 2 combined sigma
    # (the table extends past their data, so a somewhat smaller |dP/dt| is expected).
    assert abs(value - (-8.64)) < 2 * (error ** 2 + 1.26 ** 2) ** 0.5
    assert value < 0


def test_wasp43_no_decay_by_default_and_excess_noise_reported():
    table, _ = read("WASP-043")
    assert len(table) == 167
    value, error, decision = decay_rate(table)
    # the database's linear fit has chi2 = 449 for 167 points (Ivshina & Winn 2022): overdispersed
    assert decision.applied and decision.p_value < 0.01 and "excess-noise" in decision.message
    # Garai et al. 2021, MNRAS: -0.6 +- 1.2 ms/yr, consistent with a constant period: zero within 2 sigma
    assert abs(value) < 2 * error
    assert abs(value - (-0.6)) < 2 * (error ** 2 + 1.2 ** 2) ** 0.5


def test_tres3_names_bad_row_and_bare_bjd():
    with pytest.raises(TimeStandardError, match=r"row 12, column 'time_system'.*bare-bjd"):
        read("TrES-3")
    with pytest.raises(EphemerisError, match=r"row 188, column 'time'.*0\.44 of a period") as info:
        read("TrES-3", bare_bjd="BJD_TDB")
    assert "ivshina_winn2022_TrES-3_transit_times.csv" in str(info.value)


def test_tres3_without_bad_row_fits_constant_period():
    table, messages = read("TrES-3", bare_bjd="BJD_TDB", drop_rows=[188])
    assert any("19 row(s) labelled only 'BJD'" in m for m in messages)
    assert len(table) == 248
    value, error, decision = decay_rate(table)
    assert decision.applied
    # Mannaday et al. 2020, AJ 160, 47: -4.1 +- 3.1 ms/yr, the linear ephemeris most plausible
    assert abs(value) < 2 * error
    comparison = compare(table, ["constant-period", "orbital-decay"], decision.likelihood)
    assert comparison.best.name == "constant-period"
