"""Tests of wetcycle.orbit: Mars (Allison & McEwen 2000) and Earth solar geometry."""

import subprocess
import sys

import numpy as np
import pytest

from wetcycle import orbit
from wetcycle.errors import ConfigError, ValidityError
from wetcycle.timescales import jd_tt_to_utc, utc_to_jd_tt

# A dense sampling of Mars year 36 (2021-2022).
JD_MY36 = orbit.jd_tt_at_ls(0.0, mars_year=36)
T_YEAR = np.linspace(JD_MY36, JD_MY36 + 687.0, 100_001)  # 10-minute spacing


def test_perihelion_and_aphelion():
    # Perihelion r = 206.6e6 km = 1.381 AU at Ls ~ 251 deg; aphelion 249.2e6 km = 1.666 AU at
    # Ls ~ 71 deg: NASA Mars fact sheet (Williams) and AM2000 sec. 3, from memory.
    r = orbit.heliocentric_distance(T_YEAR)
    ls = orbit.solar_longitude(T_YEAR)
    # tolerance 0.001 AU: the fact-sheet distances are quoted to 4 significant figures
    assert r.min() == pytest.approx(1.381, abs=1e-3)
    assert r.max() == pytest.approx(1.666, abs=1e-3)
    # tolerance 0.5 deg: "~251" / "~71" are quoted to the degree (and drift 0.0064 deg/yr)
    assert ls[np.argmin(r)] == pytest.approx(251.0, abs=0.5)
    assert ls[np.argmax(r)] == pytest.approx(71.0, abs=0.5)


def test_declination_extremes_equal_obliquity():
    # Planetocentric solar declination peaks at +-obliquity = 25.19 deg (NASA Mars fact sheet);
    # AM2000 adds 0.25 deg sin Ls for planetographic declination.
    dec = orbit.solar_declination(T_YEAR)
    ls = orbit.solar_longitude(T_YEAR)
    # tolerance 0.005 deg: the obliquity is quoted to 0.01 deg
    assert dec.max() == pytest.approx(25.19, abs=0.005)
    assert dec.min() == pytest.approx(-25.19, abs=0.005)
    assert ls[np.argmax(dec)] == pytest.approx(90.0, abs=0.01)  # 10-min sampling ~ 0.004 deg
    dec_g = orbit.solar_declination(T_YEAR, planetographic=True)
    assert dec_g.max() == pytest.approx(25.19 + 0.25, abs=0.005)


def test_mars_year_length():
    # Tropical year 686.9726 d (AM2000 abstract) = 668.6 sols of 1.027491251 d.
    starts = np.array([orbit.jd_tt_at_ls(0.0, mars_year=y) for y in range(30, 41)])
    mean_year = np.mean(np.diff(starts))
    # tolerance 0.01 d: the planetary perturbations (< 0.03 deg of Ls) shift single years by
    # under an hour and average out over 10 years
    assert mean_year == pytest.approx(686.9726, abs=0.01)
    # tolerance 0.05 sol: "668.6 sols" is quoted to 0.1 sol
    assert mean_year / orbit.MARS.sol_s * 86400 == pytest.approx(668.6, abs=0.05)
    assert orbit.MARS.year_sols == pytest.approx(668.6, abs=0.05)


# Start dates of Mars years (Ls = 0), Piqueux et al. (2015, Icarus 251, 332) table after the
# Clancy et al. (2000) numbering -- from memory.
MY_STARTS = {24: "1998-07-14", 25: "2000-05-31", 28: "2006-01-21", 32: "2013-07-31",
             34: "2017-05-05", 35: "2019-03-23", 36: "2021-02-07", 37: "2022-12-26"}


@pytest.mark.parametrize("my,date", sorted(MY_STARTS.items()))
def test_mars_year_start_dates(my, date):
    jd = orbit.jd_tt_at_ls(0.0, mars_year=my)
    day = str(jd_tt_to_utc(jd)[0].astype("datetime64[D]"))
    assert day == date  # the table gives calendar days
    assert orbit.mars_year(jd + 1.0) == my
    assert orbit.mars_year(jd - 1.0) == my - 1


def test_ls_at_landings():
    # Ls at landing (from memory, quoted to the degree): Mars Pathfinder 1997-07-04 16:57 UTC,
    # Ls 143; Curiosity 2012-08-06 05:18 UTC, Ls 151.  Tolerance 0.6 deg: rounding of the quote.
    assert orbit.solar_longitude(utc_to_jd_tt("1997-07-04T16:57:00Z")[0]) == pytest.approx(143, abs=0.6)
    assert orbit.solar_longitude(utc_to_jd_tt("2012-08-06T05:18:00Z")[0]) == pytest.approx(151, abs=0.6)


def test_msd_increases_one_per_sol():
    # Definition of the Mars Sol Date (AM2000 sec. 5): one unit per mean solar day.
    jd = JD_MY36 + np.arange(0, 700, 7.3)
    d = orbit.mars_sol_date(jd + orbit.MARS.sol_s / 86400.0) - orbit.mars_sol_date(jd)
    np.testing.assert_allclose(d, 1.0, rtol=0, atol=1e-9)  # float64 rounding of JD ~ 1e-10 d
    # MSD epoch: mean solar midnight at Airy-0 on 2000 Jan 06 00:00 UTC (AM2000 abstract)
    msd = orbit.mars_sol_date(utc_to_jd_tt("2000-01-06T00:00:00Z")[0])
    assert msd == pytest.approx(44796.0, abs=1e-9)
    assert orbit.local_mean_solar_time(utc_to_jd_tt("2000-01-06T00:00:00Z")[0], 0.0) < 1e-6


def test_ltst_minus_lmst_is_eot():
    # AM2000 eq. 23: LTST = LMST + EOT (EOT in degrees / 15 = hours).
    jd = T_YEAR[::997]
    for lon in (0.0, 137.4, -90.0):
        d = orbit.local_true_solar_time(jd, lon) - orbit.local_mean_solar_time(jd, lon)
        d = (d + 12.0) % 24.0 - 12.0
        np.testing.assert_allclose(d, orbit.equation_of_time(jd) / 15.0, atol=1e-9)


def test_mars_eot_range():
    # Mars equation of time spans about -51 to +40 min over a year (AM2000 Fig. 3; from memory).
    eot_min = orbit.equation_of_time(T_YEAR) / 15.0 * 60.0
    assert eot_min.min() == pytest.approx(-51.0, abs=1.5)  # read off a figure: +-1.5 min
    assert eot_min.max() == pytest.approx(40.0, abs=1.5)


def test_perturbations_are_small():
    # AM2000 Table 5: the 7 amplitudes sum to 0.0263 deg.
    p = orbit.perturbations(T_YEAR[::100])
    assert np.max(np.abs(p)) <= 0.0263 + 1e-12


def test_out_of_range_dates_raise():
    with pytest.raises(ValidityError, match="jd_tt"):
        orbit.solar_longitude(2300000.0)


def test_jd_at_ls_roundtrip_and_after():
    for ls in (0.0, 45.5, 180.0, 270.0, 359.9):
        jd = orbit.jd_tt_at_ls(ls, mars_year=36)
        assert orbit.solar_longitude(jd) == pytest.approx(ls, abs=1e-6)
        assert orbit.mars_year(jd) == 36
    after = JD_MY36 + 100.0
    jd = orbit.jd_tt_at_ls(10.0, after_jd_tt=after)
    assert jd >= after and jd - after < 687.0
    assert orbit.solar_longitude(jd) == pytest.approx(10.0, abs=1e-6)
    with pytest.raises(ConfigError, match="ls_deg"):
        orbit.jd_tt_at_ls(360.0, mars_year=36)


# --- Earth ---------------------------------------------------------------------------------

# 2024 equinoxes and solstices (USNO Data Services "Earth's Seasons", from memory), UTC.
EARTH_2024 = [(0.0, "2024-03-20T03:06"), (90.0, "2024-06-20T20:51"),
              (180.0, "2024-09-22T12:44"), (270.0, "2024-12-21T09:21")]


@pytest.mark.parametrize("lam,when", EARTH_2024)
def test_earth_seasons(lam, when):
    jan1 = utc_to_jd_tt("2024-01-01T00:00:00Z")[0]
    jd = orbit.jd_tt_at_ls(lam, after_jd_tt=jan1, planet="earth")
    ref = utc_to_jd_tt(when)[0]
    # tolerance 30 min: the Almanac low-precision Sun is good to 0.01 deg ~ 15 min of time
    assert abs(jd - ref) * 1440.0 < 30.0


def test_earth_eot_and_distance():
    # Earth: EOT from about -14.2 min (mid-Feb) to +16.4 min (early Nov); perihelion 0.98329 AU,
    # aphelion 1.01671 AU (common practice; Astronomical Almanac, from memory).
    jd0 = utc_to_jd_tt("2024-01-01T00:00:00Z")[0]
    jd = jd0 + np.linspace(0, 366, 20000)
    lam, r, dec, eot = orbit.earth_solar_coordinates(jd)
    eot_min = eot * 4.0
    assert eot_min.min() == pytest.approx(-14.2, abs=0.3)  # low-precision formula, ~0.2 min
    assert eot_min.max() == pytest.approx(16.4, abs=0.3)
    assert r.min() == pytest.approx(0.98329, abs=2e-4)  # R formula quoted to 1e-4 AU
    assert r.max() == pytest.approx(1.01671, abs=2e-4)
    assert dec.max() == pytest.approx(23.44, abs=0.01)


def test_earth_out_of_range_dates_raise():
    # The Almanac formulas are accepted for 1900-2100 only (module docstring); NaN is refused too.
    with pytest.raises(ValidityError, match="jd_tt: 2400000.0"):
        orbit.earth_solar_coordinates(2400000.0)
    with pytest.raises(ValidityError, match="jd_tt"):
        orbit.earth_solar_coordinates(np.array([2451545.0, np.nan]))


# --- One-pass series and module structure ----------------------------------------------------

def test_mars_solar_coordinates_equals_single_functions():
    # Consistency, no outside source (the outside checks are above): the one-pass series must be
    # the single-quantity functions bit for bit, so exact equality, no tolerance.
    jd = T_YEAR[::37]
    ls, r, dec, eot, my = orbit.mars_solar_coordinates(jd)
    np.testing.assert_array_equal(ls, orbit.solar_longitude(jd))
    np.testing.assert_array_equal(r, orbit.heliocentric_distance(jd))
    np.testing.assert_array_equal(dec, orbit.solar_declination(jd))
    np.testing.assert_array_equal(eot, orbit.equation_of_time(jd))
    np.testing.assert_array_equal(my, orbit.mars_year(jd))
    with pytest.raises(ValidityError, match="jd_tt"):
        orbit.mars_solar_coordinates(np.array([JD_MY36, np.nan]))


def test_orbit_does_not_import_clock():
    # The clock imports orbit; orbit reaches make_clock/Clock only on demand (no import cycle).
    code = ("import sys, wetcycle.orbit as o; assert 'wetcycle.clock' not in sys.modules; "
            "from wetcycle.orbit import make_clock, Clock; import wetcycle.clock as c; "
            "assert make_clock is c.make_clock and Clock is c.Clock")
    subprocess.run([sys.executable, "-c", code], check=True)
    with pytest.raises(AttributeError, match="no_such_name"):
        orbit.no_such_name  # noqa: B018
