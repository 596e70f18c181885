"""Time-standard conversions, checked against published constants and astropy.

Sources are named beside each check.
"""

import astropy.units as u
import numpy as np
import pytest
from astropy.coordinates import SkyCoord
from astropy.time import Time

from ttvkit import (
    TimeStandardError,
    from_bjd_tdb,
    make_observer,
    make_target,
    parse_standard,
    to_bjd_tdb,
)
from ttvkit.timing.standards import GEOCENTRE

DAY = 86400.0


def test_tt_minus_utc_after_2017():
    # IERS Bulletin C: TAI-UTC = 37 s since 2017-01-01; TT - TAI = 32.184 s
    # exactly (IAU 1991 Resolution A4) -> TT - UTC = 69.184 s.
    jd_utc = np.array([2457755.5, 2459000.5, 2460500.5])  # 2017-01-02 onwards
    # tolerance 1e-4 s: float64 days resolve ~40 us at JD 2.46e6
    same_instant_in_tt = from_bjd_tdb(to_bjd_tdb(jd_utc, "BJD_UTC"), "BJD_TT")
    assert np.allclose((same_instant_in_tt - jd_utc) * DAY, 69.184, atol=1e-4)


def test_tt_minus_tai_definition():
    # TT - TAI = 32.184 s exactly (IAU 1991 Resolution A4); before 1972 leap
    # seconds were not integers, so test at 2000-01-01 where TAI-UTC = 32 s
    # (IERS Bulletin C) -> TT - UTC = 64.184 s.
    jd = np.array([2451544.5])
    ours = (from_bjd_tdb(to_bjd_tdb(jd, "BJD_UTC"), "BJD_TT") - jd)[0] * DAY
    assert ours == pytest.approx(32.0 + 32.184, abs=1e-4)


def test_tdb_minus_tt_amplitude():
    # TDB - TT is periodic with amplitude ~1.66 ms (Fairhead & Bretagnon 1990):
    # over two years it must reach beyond +-1.5 ms but never +-1.7 ms.
    jd = np.linspace(2459000.5, 2459000.5 + 730, 2000)
    diff = (to_bjd_tdb(jd, "BJD_TT") - jd) * DAY
    assert np.max(np.abs(diff)) < 1.7e-3
    assert diff.max() > 1.5e-3 and diff.min() < -1.5e-3


def test_barycentric_swing_is_one_au_over_c():
    # A star on the ecliptic: BJD - JD swings by +-(1 au / c) = +-499.005 s
    # (IAU 2012 au) times the Earth's distance (0.983-1.017 au) over a year.
    target = SkyCoord(lon=0 * u.deg, lat=0 * u.deg, frame="geocentrictrueecliptic").icrs
    jd = np.linspace(2459000.5, 2459365.5, 2000)
    delta = (to_bjd_tdb(jd, "JD_TDB", target) - jd) * DAY
    assert 499.005 * 0.98 < delta.max() < 499.005 * 1.02
    assert -499.005 * 1.02 < delta.min() < -499.005 * 0.98


@pytest.mark.parametrize("ra,dec", [(0.0, 0.0), (83.6, 22.0), (201.3, -43.0), (287.41, 31.18), (10.0, 89.0)])
def test_agrees_with_direct_astropy(ra, dec):
    # Direct astropy.time computation, written out here: JD_UTC at the
    # geocentre -> TDB + barycentric light-travel time.  Goal < 1 ms.
    target = SkyCoord(ra * u.deg, dec * u.deg)
    jd = np.linspace(2451545.0, 2461000.0, 25)
    t = Time(jd, format="jd", scale="utc", location=GEOCENTRE)
    expected = (t.tdb + t.light_travel_time(target, kind="barycentric")).jd
    assert np.max(np.abs(to_bjd_tdb(jd, "JD_UTC", target) - expected)) * DAY < 1e-3


def test_topocentric_observer_agrees_with_astropy():
    target = SkyCoord(287.41 * u.deg, 31.18 * u.deg)
    site = make_observer(-70.73, -29.26, 2400.0)
    jd = np.linspace(2455000.0, 2460000.0, 15)
    t = Time(jd, format="jd", scale="utc", location=site)
    expected = (t.tdb + t.light_travel_time(target, kind="barycentric")).jd
    assert np.max(np.abs(to_bjd_tdb(jd, "JD_UTC", target, site) - expected)) * DAY < 1e-3
    # and the observer matters: the Earth's radius is ~21 ms of light time
    geo = to_bjd_tdb(jd, "JD_UTC", target)
    assert np.max(np.abs(geo - expected)) * DAY > 1e-3


def test_hjd_undone_exactly():
    # HJD_UTC -> BJD_TDB, checked by building HJD from a known observed time
    # with astropy directly, then converting back.
    target = SkyCoord(287.41 * u.deg, 31.18 * u.deg)
    jd = np.linspace(2452000.0, 2461000.0, 30)
    t = Time(jd, format="jd", scale="utc", location=GEOCENTRE)
    hjd = jd + t.light_travel_time(target, kind="heliocentric").to_value(u.day)
    bjd = (t.tdb + t.light_travel_time(target, kind="barycentric")).jd
    assert np.max(np.abs(to_bjd_tdb(hjd, "HJD_UTC", target) - bjd)) * DAY < 1e-3


def test_hjd_bjd_difference_is_a_few_seconds():
    # Eastman, Siverd & Gaudi 2010 (PASP 122, 935), abstract: HJD and BJD
    # (same time scale) differ by up to ~4 s.  We allow 4.5 s because the
    # Sun-barycentre distance varies with the planets' configuration.
    rng = np.random.default_rng(1)
    jd = np.linspace(2448000.0, 2462000.0, 60)
    worst = 0.0
    for _ in range(6):
        target = SkyCoord(rng.uniform(0, 360) * u.deg, np.degrees(np.arcsin(rng.uniform(-1, 1))) * u.deg)
        diff = (to_bjd_tdb(jd, "HJD_TDB", target) - to_bjd_tdb(jd, "BJD_TDB")) * DAY
        worst = max(worst, np.max(np.abs(diff)))
    assert 0.5 < worst < 4.5


def test_mission_day_counts():
    # BTJD = BJD_TDB - 2457000, BKJD = BJD_TDB - 2454833 (mission data-product
    # conventions; common practice, no source).
    assert to_bjd_tdb([1500.25], "BTJD")[0] == pytest.approx(2458500.25, abs=1e-9)
    assert to_bjd_tdb([100.0], "BKJD")[0] == pytest.approx(2454933.0, abs=1e-9)
    assert to_bjd_tdb([1500.25], "BJD_TDB-2457000")[0] == pytest.approx(2458500.25, abs=1e-9)
    assert to_bjd_tdb([58500.0], "MJD_TDB", SkyCoord(0 * u.deg, 0 * u.deg))[0] != 2458500.5


@pytest.mark.parametrize("standard", ["JD_UTC", "HJD_UTC", "HJD_TDB", "BJD_UTC", "MJD_UTC", "BTJD"])
def test_round_trip(standard):
    target = make_target("19:09:38.4", "+31:10:48")
    bjd = np.linspace(2453000.0, 2461000.0, 12)
    back = to_bjd_tdb(from_bjd_tdb(bjd, standard, target), standard, target)
    assert np.max(np.abs(back - bjd)) * DAY < 1e-5


@pytest.mark.parametrize("name", ["BJD", "HJD", "JD", "bjd"])
def test_ambiguous_standards_are_errors(name):
    with pytest.raises(TimeStandardError, match="ambiguous"):
        parse_standard(name)


@pytest.mark.parametrize("name", ["XJD_UTC", "BJD_TCB", "", "HJD_UTC+", "MJD_UTC-5"])
def test_unknown_standards_list_the_known_ones(name):
    with pytest.raises(TimeStandardError, match="BJD_TDB"):
        parse_standard(name)


def test_jd_and_hjd_need_a_target():
    with pytest.raises(TimeStandardError, match="coordinates"):
        to_bjd_tdb([2455000.0], "HJD_UTC")


def test_sexagesimal_target():
    c = make_target("19:09:38.4", "+31:10:48")
    assert c.ra.deg == pytest.approx(287.41, abs=1e-6)
    assert c.dec.deg == pytest.approx(31.18, abs=1e-6)


def test_proper_motion_moves_the_light_time():
    # 1 arcsec/yr over 20 yr shifts the direction by 20" -> up to
    # 499 s * 20 * 4.85e-6 ~ 48 ms of light time: measurable, and small.
    still = make_target(287.41, 31.18)
    moving = make_target(287.41, 31.18, pm_ra_cosdec=1000.0, pm_dec=1000.0)
    jd = np.linspace(2458000.0, 2458365.0, 40)
    diff = np.abs(to_bjd_tdb(jd, "JD_UTC", moving) - to_bjd_tdb(jd, "JD_UTC", still)) * DAY
    assert 1e-3 < diff.max() < 0.1
