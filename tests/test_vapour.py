"""Tests of wetcycle.forcing.vapour and wetcycle.forcing.pressure."""

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from iapws._iapws import _Sublimation_Pressure  # IAPWS R14-08(2011), Wagner et al. 2011 [MPa]
from scipy.optimize import brentq

from wetcycle.errors import ConfigError, ValidityError
from wetcycle.forcing import pressure, vapour
from wetcycle.orbit import EARTH, MARS


def p_sub_iapws(t):
    return _Sublimation_Pressure(t) * 1e6  # MPa -> Pa


def frost_point_iapws(e):
    return brentq(lambda t: p_sub_iapws(t) - e, 120.0, 273.16, xtol=1e-10)


# --- units and column conversion -------------------------------------------------------------

def test_precipitable_micron():
    # 1 pr-um = 1e-6 m of liquid water x 1000 kg m-3 = 1e-3 kg m-2 (common practice).
    assert vapour.PRECIPITABLE_MICRON_KG_M2 == pytest.approx(1e-6 * 1000.0, rel=1e-15)


def test_column_conversion_by_hand():
    # Hand computation from hydrostatics (Wallace & Hobbs 2006 sec. 3.2): column air mass p/g;
    # uniform mass mixing ratio q = W g / p; vmr = q M_air / M_w; e = vmr p.
    p, w = 610.0, 10e-3  # 10 pr-um
    q = w * MARS.gravity_m_s2 / p
    vmr = q * 43.34 / 18.015  # NASA Mars fact sheet mean molecular weight (from memory)
    e_hand = vmr * p
    # tolerance 1e-3 relative: the hand value uses 18.015 g/mol rounded to 5 digits
    assert vapour.column_to_vapor_pressure(w) == pytest.approx(e_hand, rel=1e-3)
    # ~10 pr-um well mixed at ~6 mbar is ~150 ppmv (common Mars rule of thumb, from memory);
    # tolerance 10%: a rule of thumb
    assert vmr == pytest.approx(150e-6, rel=0.1)
    assert vapour.column_to_vapor_pressure(w, confinement=2.0) == pytest.approx(2 * e_hand, rel=1e-3)
    # on Earth 25 mm of precipitable water ~ 25 kg m-2 well mixed gives e = W g M_air/M_w
    e_earth = vapour.column_to_vapor_pressure(25.0, planet=EARTH)
    assert e_earth == pytest.approx(25.0 * 9.80665 * 28.97 / 18.015, rel=1e-3)


def test_vmr_and_table():
    assert vapour.vapor_pressure_from_vmr(100e-6, 700.0) == pytest.approx(0.07, rel=1e-12)
    with pytest.raises(ValidityError, match="vmr"):
        vapour.vapor_pressure_from_vmr(-1e-6, 700.0)
    ls = np.array([0.0, 15.0, 345.0, 360.0])
    e = vapour.vapor_pressure_from_column_table(ls)
    w = vapour.DEMO_COLUMN_TABLE(ls)
    np.testing.assert_allclose(w, [8.0, 7.5, 9.0, 8.0])  # hand interpolation, periodic wrap
    np.testing.assert_allclose(e, vapour.column_to_vapor_pressure(w * 1e-3))


def test_rh_helpers_against_iapws():
    # IAPWS R14-08(2011) sublimation pressure vs Murphy & Koop (2005): they differ by < 0.2%
    # at 150-273 K (computed with both), so tolerance 0.3%.
    for t in (150.0, 190.0, 230.0, 260.0):
        assert vapour.relative_humidity_ice(p_sub_iapws(t), t) == pytest.approx(1.0, rel=3e-3)
    # at 273.16 K ice and liquid saturation coincide (triple point, IAPWS): RH = RH_ice
    e = 300.0
    assert vapour.relative_humidity(e, 273.16) == pytest.approx(vapour.relative_humidity_ice(e, 273.16), rel=1e-4)
    assert vapour.vapor_pressure_from_relative_humidity(0.5, 273.16) == pytest.approx(0.5 * 611.657, rel=1e-4)
    with pytest.raises(ValidityError, match="temperature"):
        vapour.relative_humidity(0.1, 100.0)


# --- frost kernel ------------------------------------------------------------------------------

def test_frost_forms_below_and_not_above_frost_point():
    e_air = 0.1  # Pa
    tf = frost_point_iapws(e_air)  # ~196 K; frost point from IAPWS (outside the project)
    t = np.array([[tf + 1.0, tf - 1.0]])
    r = vapour.frost_exchange(np.full_like(t, e_air), t, [0.0, 0.0], 600.0)
    assert r.frost_kg_m2[0, 0] == 0.0 and r.surface_vapor_pressure_pa[0, 0] == e_air
    assert r.frost_kg_m2[0, 1] > 0.0
    # with frost present the surface is held at saturation over ice (Murphy & Koop 2005),
    # checked against IAPWS with the 0.3% agreement above
    assert r.surface_vapor_pressure_pa[0, 1] == pytest.approx(p_sub_iapws(tf - 1.0), rel=3e-3)


def test_frost_hand_computed_step():
    # dM = (e_air - p_ice) / (R_v T) * w dt, R_v = 8.314462618 / 0.018015268 (CODATA, IAPWS)
    t, e_air, dt, w = 180.0, 0.05, 100.0, 0.01
    r = vapour.frost_exchange(np.array([[e_air]]), np.array([[t]]), [0.0], dt, w, 100.0)
    es = p_sub_iapws(t)
    dm = (e_air - es) / (8.314462618 / 0.018015268 * t) * w * dt
    assert r.exchange_kg_m2[0, 0] == pytest.approx(dm, rel=3e-3)  # 0.3%: MK vs IAPWS p_ice


def test_frost_cycle_conserves_water():
    # a sol of a sinusoidal surface temperature crossing the frost point: frost forms at night
    # and sublimes by day; vapour removed from the air equals frost gained (water budget).
    n = 96
    hours = np.arange(n) * 24.0 / n
    t = 200.0 + 25.0 * np.cos(2 * np.pi * (hours - 14.0) / 24.0)
    e_air = np.full(n, 0.08)
    r = vapour.frost_exchange(e_air, t, 0.0, MARS.sol_s / n, transfer_velocity_m_s=0.002)
    fr = r.frost_kg_m2[:, 0]
    assert fr.max() > 0.0
    assert fr[np.argmin(np.abs(hours - 14.0))] == 0.0  # none in the afternoon
    # conservation to rounding: 1e-18 kg m-2 is ~1e-6 of the frost mass
    d = np.diff(np.concatenate([[0.0], fr]))
    np.testing.assert_allclose(d, r.exchange_kg_m2[:, 0], rtol=0, atol=1e-18)
    assert np.all(fr >= 0.0)


def test_frost_step_independent_when_rate_limited():
    # the bulk flux is linear in time while w dt <= h: one step of 2 dt = two steps of dt
    t = np.full((2, 1), 170.0)
    e = np.full((2, 1), 0.05)
    a = vapour.frost_exchange(e, t, 0.0, 100.0, 0.01, 100.0).final_frost_kg_m2
    b = vapour.frost_exchange(e[:1], t[:1], 0.0, 200.0, 0.01, 100.0).final_frost_kg_m2
    np.testing.assert_allclose(a, b, rtol=1e-14)  # rounding


def test_frost_validation():
    with pytest.raises(ValidityError, match="t_surface_k"):
        vapour.frost_exchange([0.1], [100.0], 0.0, 10.0)
    with pytest.raises(ValidityError, match="frost0_kg_m2"):
        vapour.frost_exchange([0.1], [180.0], -1.0, 10.0)
    with pytest.raises(ConfigError, match="dt_s"):
        vapour.frost_exchange([0.1], [180.0], 0.0, 0.0)


@settings(max_examples=60, deadline=None)
@given(
    e=st.lists(st.floats(0.0, 5.0), min_size=1, max_size=20),
    t0=st.floats(150.0, 280.0), amp=st.floats(0.0, 40.0),
    m0=st.floats(0.0, 1e-2), w=st.floats(1e-4, 0.1), dt=st.floats(1.0, 1e4),
)
def test_frost_invariants(e, t0, amp, m0, w, dt):
    e = np.array(e)[:, None]
    n = e.shape[0]
    t = np.clip(t0 + amp * np.sin(np.arange(n))[:, None], 110.0, 332.0)
    r = vapour.frost_exchange(e, t, m0, dt, w, 50.0)
    fr = r.frost_kg_m2
    assert np.all(fr >= 0.0)
    # water budget: frost change equals vapour moved (to rounding of the running sum)
    total = m0 + np.cumsum(r.exchange_kg_m2[:, 0])
    np.testing.assert_allclose(fr[:, 0], total, rtol=1e-12, atol=1e-18)
    # where frost remains at the end of a step the surface is at, not above, ice saturation
    has = fr[:, 0] > 0
    cold = t[:, 0] <= 273.16
    if np.any(has & cold):
        rh_ice = vapour.relative_humidity_ice(r.surface_vapor_pressure_pa[has & cold, 0], t[has & cold, 0])
        assert np.all(rh_ice <= 1.0 + 1e-12)


# --- surface pressure -----------------------------------------------------------------------

def test_pressure_elevation_and_season():
    # isothermal barometric law (Wallace & Hobbs 2006 eq. 3.29): one scale height -> p_ref / e
    assert pressure.pressure_at_elevation(MARS.scale_height_m) == pytest.approx(
        MARS.mean_surface_pressure_pa / np.e, rel=1e-14)
    p = pressure.surface_pressure(np.array([0.0, 150.0, 345.0]), np.array([0.0, -2000.0]),
                                  seasonal=pressure.DEMO_CO2_CYCLE)
    assert p.shape == (3, 2)
    # hand-computed: table values at the nodes; midway between 330 (1.00) and 360=0 (1.02)
    np.testing.assert_allclose(p[:, 0], 636.0 * np.array([1.02, 0.89, 1.01]), rtol=1e-12)
    np.testing.assert_allclose(p[:, 1] / p[:, 0], np.exp(2000.0 / 11100.0), rtol=1e-12)
    # the invented demo cycle has an annual mean (over Ls) of 1 to within 1%
    assert pressure.DEMO_CO2_CYCLE.annual_mean_over_ls() == pytest.approx(1.0, abs=0.01)


def test_periodic_table_validation():
    with pytest.raises(ConfigError, match="strictly increasing"):
        pressure.PeriodicTable([0, 10, 10], [1, 2, 3], name="t")
    with pytest.raises(ConfigError, match="value"):
        pressure.PeriodicTable([0, 10], [1, -2], name="t", lower=0.0)
    with pytest.raises(ValidityError, match="elevation_m"):
        pressure.pressure_at_elevation(1e6)


def test_periodic_interpolation_wraps_and_refuses_bad_input():
    # Linear interpolation across the Ls = 360/0 seam, by hand (common practice for periodic tables):
    # halfway between Ls 350 (value 3) and Ls 10 (value 1) lies Ls 0 with value 2.
    assert pressure.interp_periodic(0.0, [10.0, 180.0, 350.0], [1.0, 5.0, 3.0]) == pytest.approx(2.0)
    assert pressure.interp_periodic(-360.0 + 95.0, [10.0, 180.0, 350.0], [1.0, 5.0, 3.0]) == pytest.approx(3.0)
    # NaN Ls must not pass through silently as NaN forcing
    with pytest.raises(ValidityError, match="non-finite"):
        pressure.interp_periodic(np.array([10.0, np.nan]), [0.0, 180.0], [1.0, 2.0])
    with pytest.raises(ValidityError, match="non-finite"):
        vapour.vapor_pressure_from_column_table(np.array([np.nan]))
    with pytest.raises(ValidityError, match="strictly increasing"):
        pressure.interp_periodic(5.0, [0.0, 180.0, 90.0], [1.0, 2.0, 3.0])
