"""Tests of wetcycle.orbit: Mars (Allison & McEwen 2000) and Earth solar geometry, the clock."""

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from wetcycle import orbit
from wetcycle.errors import ConfigError, UnknownNameError, ValidityError

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
    day = str(orbit.jd_tt_to_utc(jd)[0].astype("datetime64[D]"))
    assert day == date  # the table gives calendar days
    assert orbit.mars_year(jd + 1.0) == my
    assert orbit.mars_year(jd - 1.0) == my - 1


def test_ls_at_landings():
    # Ls at landing (from memory, quoted to the degree): Mars Pathfinder 1997-07-04 16:57 UTC,
    # Ls 143; Curiosity 2012-08-06 05:18 UTC, Ls 151.  Tolerance 0.6 deg: rounding of the quote.
    assert orbit.solar_longitude(orbit.utc_to_jd_tt("1997-07-04T16:57:00Z")[0]) == pytest.approx(143, abs=0.6)
    assert orbit.solar_longitude(orbit.utc_to_jd_tt("2012-08-06T05:18:00Z")[0]) == pytest.approx(151, abs=0.6)


def test_msd_increases_one_per_sol():
    # Definition of the Mars Sol Date (AM2000 sec. 5): one unit per mean solar day.
    jd = JD_MY36 + np.arange(0, 700, 7.3)
    d = orbit.mars_sol_date(jd + orbit.MARS.sol_s / 86400.0) - orbit.mars_sol_date(jd)
    np.testing.assert_allclose(d, 1.0, rtol=0, atol=1e-9)  # float64 rounding of JD ~ 1e-10 d
    # MSD epoch: mean solar midnight at Airy-0 on 2000 Jan 06 00:00 UTC (AM2000 abstract)
    msd = orbit.mars_sol_date(orbit.utc_to_jd_tt("2000-01-06T00:00:00Z")[0])
    assert msd == pytest.approx(44796.0, abs=1e-9)
    assert orbit.local_mean_solar_time(orbit.utc_to_jd_tt("2000-01-06T00:00:00Z")[0], 0.0) < 1e-6


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
    jan1 = orbit.utc_to_jd_tt("2024-01-01T00:00:00Z")[0]
    jd = orbit.jd_tt_at_ls(lam, after_jd_tt=jan1, planet="earth")
    ref = orbit.utc_to_jd_tt(when)[0]
    # tolerance 30 min: the Almanac low-precision Sun is good to 0.01 deg ~ 15 min of time
    assert abs(jd - ref) * 1440.0 < 30.0


def test_earth_eot_and_distance():
    # Earth: EOT from about -14.2 min (mid-Feb) to +16.4 min (early Nov); perihelion 0.98329 AU,
    # aphelion 1.01671 AU (common practice; Astronomical Almanac, from memory).
    jd0 = orbit.utc_to_jd_tt("2024-01-01T00:00:00Z")[0]
    jd = jd0 + np.linspace(0, 366, 20000)
    lam, r, dec, eot = orbit.earth_solar_coordinates(jd)
    eot_min = eot * 4.0
    assert eot_min.min() == pytest.approx(-14.2, abs=0.3)  # low-precision formula, ~0.2 min
    assert eot_min.max() == pytest.approx(16.4, abs=0.3)
    assert r.min() == pytest.approx(0.98329, abs=2e-4)  # R formula quoted to 1e-4 AU
    assert r.max() == pytest.approx(1.01671, abs=2e-4)
    assert dec.max() == pytest.approx(23.44, abs=0.01)


def test_earth_clock_noon_at_greenwich():
    # At Greenwich, LMST = UT (definition of mean solar time; common practice).
    c = orbit.make_clock("earth", steps_per_sol=24, n_sols=2, start_utc="2024-06-01T00:00:00Z")
    np.testing.assert_allclose(c.local_mean_solar_time(0.0)[:24], np.arange(24.0), atol=1e-6)
    assert c.dt_s == 3600.0
    assert c.year[0] == 2024


def test_utc_tt_offset():
    # TT - UTC = 69.184 s since 2017-01-01 (IERS Bulletin C; 37 leap s + 32.184 s).
    jd = orbit.utc_to_jd_tt("2024-01-01T00:00:00Z")[0]
    assert (jd - 2460310.5) * 86400.0 == pytest.approx(69.184, abs=1e-4)  # float64 JD ~ 40 us


# --- Clock ---------------------------------------------------------------------------------

def test_clock_validation():
    with pytest.raises(ConfigError, match="steps_per_sol"):
        orbit.make_clock(steps_per_sol=0, n_sols=1)
    with pytest.raises(ConfigError, match="steps_per_sol"):
        orbit.make_clock(steps_per_sol=2.5, n_sols=1)
    with pytest.raises(ConfigError, match="n_sols or n_years"):
        orbit.make_clock(steps_per_sol=2)
    with pytest.raises(ConfigError, match="clock start"):
        orbit.make_clock(steps_per_sol=2, n_sols=1, start_ls=10.0, start_jd_tt=JD_MY36)
    with pytest.raises(UnknownNameError, match="venus"):
        orbit.make_clock("venus", steps_per_sol=2, n_sols=1)


def test_clock_n_years_and_ls_start():
    c = orbit.make_clock(steps_per_sol=4, n_years=1)
    assert c.n_sols == 669  # round(668.59)
    # the start moves to the next prime-meridian midnight: < 1 sol later than Ls 0 of MY 36,
    # i.e. by < 0.7 deg of Ls (Ls rate ~ 0.5-0.7 deg/sol, AM2000)
    assert 0.0 <= c.ls_deg[0] < 0.7
    assert c.year[0] == 36
    # 669 sols > one year of 668.59 sols: the run ends just inside MY 37
    assert c.year[-1] == 37 and c.ls_deg[-1] < 1.0
    assert np.all(np.diff(c.year) >= 0)


@settings(max_examples=25, deadline=None)
@given(steps=st.integers(1, 96), n_sols=st.integers(1, 4), ls=st.floats(0.0, 359.0),
       lon=st.floats(-180.0, 360.0))
def test_clock_invariants(steps, n_sols, ls, lon):
    c = orbit.make_clock("mars", steps_per_sol=steps, n_sols=n_sols, start_ls=ls, year=35)
    assert c.n_steps == steps * n_sols
    assert c.dt_s * steps == pytest.approx(orbit.MARS.sol_s, rel=1e-15)
    np.testing.assert_allclose(np.diff(c.time_s), c.dt_s, rtol=1e-12)
    np.testing.assert_allclose(c.time_s, (c.sol + c.sol_fraction) * orbit.MARS.sol_s, rtol=1e-12, atol=1e-6)
    assert np.all((c.sol_fraction >= 0) & (c.sol_fraction < 1))
    # aligned to prime-meridian mean midnight: mean solar time = 24 x sol fraction
    d = (c.mean_solar_time_h - 24.0 * c.sol_fraction + 12.0) % 24.0 - 12.0
    assert np.max(np.abs(d)) < 1e-5  # hours; float64 JD resolution ~ 4e-5 s
    ltst = c.local_true_solar_time(np.array([lon, 0.0]))
    assert ltst.shape == (c.n_steps, 2)
    assert np.all((ltst >= 0) & (ltst < 24))
    h = c.hour_angle_rad(lon)
    assert np.all((h >= -np.pi) & (h < np.pi))
    # the clock agrees with the stand-alone functions
    np.testing.assert_allclose(ltst[:, 0], orbit.local_true_solar_time(c.jd_tt, lon), atol=1e-9)
    assert np.all(np.diff(np.unwrap(np.deg2rad(c.ls_deg))) > 0)
    with pytest.raises(ValueError):
        c.time_s[0] = 1.0  # read-only arrays
