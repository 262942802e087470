"""Tests of wetcycle.clock (the run clock) and wetcycle.timescales (UTC <-> TT)."""

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from wetcycle import orbit
from wetcycle.clock import make_clock
from wetcycle.errors import ConfigError, UnknownNameError, ValidityError
from wetcycle.timescales import jd_tt_to_utc, tt_minus_utc_days, utc_to_jd_tt

JD_MY36 = orbit.jd_tt_at_ls(0.0, mars_year=36)


# --- Time scales ---------------------------------------------------------------------------

def test_utc_tt_offset():
    # TT - UTC = 69.184 s since 2017-01-01 (IERS Bulletin C; 37 leap s + 32.184 s).
    jd = utc_to_jd_tt("2024-01-01T00:00:00Z")[0]
    assert (jd - 2460310.5) * 86400.0 == pytest.approx(69.184, abs=1e-4)  # float64 JD ~ 40 us

def test_leap_second_2016():
    # IERS Bulletin C 52 (2016): a leap second at the end of 2016 December 31, TAI - UTC = 36 s
    # before it and 37 s after; TT - TAI = 32.184 s (IAU 1991).  Exact table values, so the
    # tolerance is float64 resolution of a JD near 2.46e6 d (~40 us).
    before = utc_to_jd_tt("2016-12-31T23:59:30Z")[0]
    after = utc_to_jd_tt("2017-01-01T00:00:10Z")[0]
    assert (after - before) * 86400.0 == pytest.approx(41.0, abs=1e-4)  # 40 s + the leap second
    # TT - UTC from a TT date: right on both sides, also in the minute before the leap second
    for utc, offset in (("2016-12-31T23:59:00Z", 68.184), ("2016-12-31T23:59:59Z", 68.184),
                        ("2017-01-01T00:00:00Z", 69.184), ("2017-01-01T00:00:20Z", 69.184)):
        jd = utc_to_jd_tt(utc)
        assert tt_minus_utc_days(jd)[0] * 86400.0 == pytest.approx(offset, abs=1e-9)  # table value
        back = jd_tt_to_utc(jd)[0]
        assert abs((back - np.datetime64(utc.rstrip("Z"), "ns")) / np.timedelta64(1, "us")) < 50


def test_time_scales_refuse_dates_before_1960():
    # UTC starts 1960-01-01 (ERFA's table; IERS); earlier civil times are refused, not guessed.
    with pytest.raises(ValidityError, match="1960"):
        utc_to_jd_tt("1959-12-31T23:00:00Z")
    with pytest.raises(ValidityError, match="jd_tt"):
        jd_tt_to_utc(2436000.0)  # 1957
    with pytest.raises(ValidityError, match="ISO-8601"):
        utc_to_jd_tt("31/01/2024")


def test_earth_clock_noon_at_greenwich():
    # At Greenwich, LMST = UT (definition of mean solar time; common practice).
    c = make_clock("earth", steps_per_sol=24, n_sols=2, start_utc="2024-06-01T00:00:00Z")
    np.testing.assert_allclose(c.local_mean_solar_time(0.0)[:24], np.arange(24.0), atol=1e-6)
    assert c.dt_s == 3600.0
    assert c.year[0] == 2024


# --- Clock ---------------------------------------------------------------------------------

def test_clock_validation():
    with pytest.raises(ConfigError, match="steps_per_sol"):
        make_clock(steps_per_sol=0, n_sols=1)
    with pytest.raises(ConfigError, match="steps_per_sol"):
        make_clock(steps_per_sol=2.5, n_sols=1)
    with pytest.raises(ConfigError, match="exactly one of them"):
        make_clock(steps_per_sol=2)
    with pytest.raises(ConfigError, match="clock start"):
        make_clock(steps_per_sol=2, n_sols=1, start_ls=10.0, start_jd_tt=JD_MY36)
    with pytest.raises(UnknownNameError, match="venus"):
        make_clock("venus", steps_per_sol=2, n_sols=1)


def test_clock_n_years_and_ls_start():
    c = make_clock(steps_per_sol=4, n_years=1)
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
    c = make_clock("mars", steps_per_sol=steps, n_sols=n_sols, start_ls=ls, year=35)
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


@settings(max_examples=20, deadline=None)
@given(i0=st.integers(0, 200), n=st.integers(0, 150), lon=st.lists(st.floats(-180.0, 360.0), min_size=1, max_size=5))
def test_local_times_slices_equal_the_whole(i0, n, lon):
    # Invariant, no outside source (the whole series is checked against orbit's functions above):
    # the on-demand local times a streamed run slices by blocks equal the whole series bit for bit.
    c = make_clock("mars", steps_per_sol=48, n_sols=4, start_ls=100.0, year=35)
    whole = c.local_true_solar_time(np.array(lon))
    lt = c.local_times(lon)
    assert lt.shape == whole.shape and len(lt) == c.n_steps
    np.testing.assert_array_equal(lt[i0:i0 + n], whole[i0:i0 + n])
    np.testing.assert_array_equal(np.asarray(lt), whole)
    with pytest.raises(TypeError, match="slice"):
        lt[[0, 2]]


def test_clock_series_equal_single_functions():
    # Consistency, no outside source (orbit's outside checks are in test_orbit.py): the clock's
    # one-pass series must equal the single-quantity functions exactly (same formulas), so no
    # tolerance.
    c = make_clock("mars", steps_per_sol=96, n_sols=30, start_ls=250.0, year=36)
    jd = c.jd_tt
    np.testing.assert_array_equal(c.ls_deg, orbit.solar_longitude(jd))
    np.testing.assert_array_equal(c.declination_rad, np.deg2rad(orbit.solar_declination(jd)))
    np.testing.assert_array_equal(c.distance_au, orbit.heliocentric_distance(jd))
    np.testing.assert_array_equal(c.equation_of_time_h, orbit.equation_of_time(jd) / 15.0)
    np.testing.assert_array_equal(c.year, orbit.mars_year(jd))
    np.testing.assert_array_equal(c.mean_solar_time_h, orbit.local_mean_solar_time(jd, 0.0))
    e = make_clock("earth", steps_per_sol=48, n_sols=10, start_utc="2016-12-28T00:00:00Z")
    lam, r, dec, eot = orbit.earth_solar_coordinates(e.jd_tt)
    np.testing.assert_array_equal(e.ls_deg, lam)
    np.testing.assert_array_equal(e.distance_au, r)
    np.testing.assert_array_equal(e.declination_rad, np.deg2rad(dec))
    np.testing.assert_array_equal(e.equation_of_time_h, eot / 15.0)
    np.testing.assert_array_equal(e.year, jd_tt_to_utc(e.jd_tt).astype("datetime64[Y]").astype(int) + 1970)
    assert e.year[0] == 2016 and e.year[-1] == 2017


def test_earth_clock_before_1960_is_refused():
    # Mean solar time needs UTC, defined from 1960 on (ERFA).
    with pytest.raises(ValidityError, match="jd_tt"):
        make_clock("earth", steps_per_sol=4, n_sols=1, start_jd_tt=2436000.5)


def test_clock_bad_arguments_are_one_line_config_errors():
    # Error contract (wetcycle.errors): field named, value shown, what is allowed.
    for kw, field in ((dict(n_years="two"), "n_years"), (dict(n_years=-1.0), "n_years"),
                      (dict(n_sols=1, start_jd_tt="soon"), "start_jd_tt"),
                      (dict(n_sols=1, start_jd_tt=float("nan")), "start_jd_tt")):
        with pytest.raises(ConfigError, match=f"^{field}: .* allowed: ") as e:
            make_clock("mars", steps_per_sol=2, **kw)
        assert "\n" not in str(e.value)
    with pytest.raises(ConfigError, match="^year: 'MMXXIV'"):
        make_clock("earth", steps_per_sol=2, n_sols=1, year="MMXXIV")
