"""Tests of wetcycle.forcing.vapour (humidity conversions) and the periodic tables of wetcycle.forcing.pressure."""

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


def test_vmr():
    # Dalton's law (common practice): e = vmr p
    assert vapour.vapor_pressure_from_vmr(100e-6, 700.0) == pytest.approx(0.07, rel=1e-12)
    with pytest.raises(ValidityError, match="vmr"):
        vapour.vapor_pressure_from_vmr(-1e-6, 700.0)


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

# --- surface pressure -----------------------------------------------------------------------

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
    with pytest.raises(ValidityError, match="strictly increasing"):
        pressure.interp_periodic(5.0, [0.0, 180.0, 90.0], [1.0, 2.0, 3.0])
