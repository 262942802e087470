"""Vapour pressure of ice and supercooled water (Murphy & Koop 2005) against IAPWS.

References
----------
* IAPWS R14-08(2011): sublimation pressure of ordinary water substance (Wagner,
  Riethmann, Feistel & Harvey 2011), through the ``iapws`` package's
  ``_Sublimation_Pressure``; valid 50-273.16 K.
* IAPWS-95 (Wagner & Pruss 2002) saturation pressure through ``iapws.IAPWS95``,
  valid from the triple point upwards.
* IAPWS triple point: 273.16 K, 611.657 Pa (IAPWS R14-08).
"""

import numpy as np
import pytest
from hypothesis import given, strategies as st
from iapws import IAPWS95
from iapws._iapws import _Sublimation_Pressure

from wetcycle import water
from wetcycle.errors import ValidityError


@pytest.mark.parametrize("T", np.arange(175.0, 273.16, 7.0))
def test_ice_vapour_pressure_matches_iapws_sublimation(T):
    # Mars-surface range: Murphy & Koop (2005) eq. (7) agrees with IAPWS R14-08 (2011)
    # within 0.1 % above 175 K (the tolerance asked of the project).
    ref = _Sublimation_Pressure(T) * 1e6
    assert water.saturation_vapor_pressure_ice(T) == pytest.approx(ref, rel=1e-3)


@pytest.mark.parametrize("T", [110.0, 130.0, 150.0, 170.0])
def test_ice_vapour_pressure_cold_end(T):
    # Below 175 K the two formulations diverge slowly (0.29 % at 110 K): MK2005 predates
    # R14-08 and weighs different low-T data.  0.5 % bounds that known difference.
    ref = _Sublimation_Pressure(T) * 1e6
    assert water.saturation_vapor_pressure_ice(T) == pytest.approx(ref, rel=5e-3)


@pytest.mark.parametrize("T", [273.16, 280.0, 293.15, 298.15, 310.0, 323.15, 330.0])
def test_liquid_vapour_pressure_matches_iapws95(T):
    # IAPWS-95 saturation pressure; common range with Murphy & Koop eq. (10): 273.16-332 K.
    ref = IAPWS95(T=T, x=0).P * 1e6
    assert water.saturation_vapor_pressure_liquid(T) == pytest.approx(ref, rel=1e-3)


def test_triple_point():
    # IAPWS R14-08: p_t = 611.657 Pa at 273.16 K; both branches meet there (0.01 %).
    assert water.saturation_vapor_pressure_ice(273.16) == pytest.approx(611.657, rel=1e-4)
    assert water.saturation_vapor_pressure_liquid(273.16) == pytest.approx(611.657, rel=1e-4)
    assert water.ice_water_activity(273.16) == pytest.approx(1.0, abs=1e-4)


def test_ice_water_activity_published_value():
    # Koop et al. (2000, Nature 406, 611) Fig. 1: a_w,ice ~ 0.82 at 253 K and ~0.62 at
    # 223 K (read off the figure; tolerance 0.01 for figure reading).
    assert water.ice_water_activity(253.15) == pytest.approx(0.82, abs=0.01)
    assert water.ice_water_activity(223.15) == pytest.approx(0.62, abs=0.01)


def test_arrays_and_scalars():
    T = np.array([200.0, 250.0, 270.0])
    arr = water.ice_water_activity(T)
    assert arr.shape == (3,)
    assert isinstance(water.ice_water_activity(250.0), float)
    assert np.allclose(arr, [water.ice_water_activity(t) for t in T])


@pytest.mark.parametrize("fn,T", [
    (water.saturation_vapor_pressure_ice, 100.0),
    (water.saturation_vapor_pressure_ice, 280.0),
    (water.saturation_vapor_pressure_liquid, 120.0),
    (water.saturation_vapor_pressure_liquid, 340.0),
    (water.ice_water_activity, 274.0),
])
def test_out_of_validity_raises(fn, T):
    # Murphy & Koop (2005) validity: ice T > 110 K; liquid 123-332 K.
    with pytest.raises(ValidityError, match="validity"):
        fn(T)


def test_kernels_flag_with_nan_outside_range():
    assert np.isnan(water.psat_ice_kernel(100.0))
    assert np.isnan(water.psat_liquid_kernel(400.0))
    assert np.isnan(water.ice_activity_kernel(280.0))
    assert water.psat_ice_kernel(250.0) == pytest.approx(water.saturation_vapor_pressure_ice(250.0), rel=1e-12)


@given(st.floats(min_value=123.0, max_value=273.16))
def test_invariant_ice_activity_in_unit_interval_and_increasing(T):
    # Invariant: ice is the stable phase below the triple point, so p_ice <= p_liq;
    # a_w,ice increases with T.
    a = water.ice_water_activity(T)
    assert 0.0 < a <= 1.0 + 1e-4
    assert water.ice_water_activity(min(T + 0.5, 273.16)) >= a
