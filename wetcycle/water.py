"""Vapour pressure of ice and (supercooled) liquid water; water activity of ice.

Method
------
Murphy, D. M. and Koop, T. (2005), "Review of the vapour pressures of ice and
supercooled water for atmospheric applications", Q. J. R. Meteorol. Soc. 131,
1539-1565, doi:10.1256/qj.04.94:

* eq. (7), ice Ih:  ln p = 9.550426 - 5723.265/T + 3.53068 ln T - 0.00728332 T,
  valid for T > 110 K (we stop at the triple point, 273.16 K, above which ice
  is not a stable phase);
* eq. (10), liquid water including supercooled water: valid 123 K < T < 332 K.

The water activity of ice is a_w,ice(T) = p_ice(T) / p_liq(T): a brine in
equilibrium with ice has exactly this activity, and air saturated over frost
has a relative humidity with respect to liquid water of a_w,ice(T).

Conventions
-----------
Temperatures in K, pressures in Pa.  The public functions accept scalars or
arrays and raise :class:`wetcycle.errors.ValidityError` when any temperature
lies outside the validity range.  The numba kernels (``*_kernel``) are for use
inside other kernels: they return NaN outside the range (the documented flag),
never an extrapolated value.
"""

from __future__ import annotations

import math

import numpy as np
from numba import njit

from .errors import ValidityError

#: Validity range of Murphy & Koop (2005) eq. (7) for ice [K]; upper end is the
#: triple point (ice is not stable above it).
ICE_T_RANGE = (110.0, 273.16)
#: Validity range of Murphy & Koop (2005) eq. (10) for liquid water [K].
LIQUID_T_RANGE = (123.0, 332.0)
#: Validity range of the ice water activity: where both formulas hold [K].
ICE_ACTIVITY_T_RANGE = (123.0, 273.16)

#: Triple point of water (BIPM/IAPWS definition) [K] and its pressure [Pa]
#: (IAPWS R14-08(2011), 611.657 Pa).
TRIPLE_POINT_T = 273.16
TRIPLE_POINT_P = 611.657

#: Molar mass of water [kg mol-1] (IAPWS-95, 18.015268 g/mol).
MOLAR_MASS_WATER = 0.018015268


#: Murphy & Koop (2005) eq. (7) over ice Ih: ln p [Pa] = A - B / T + C ln T - D T, as (A, B, C, D).
MK05_ICE = (9.550426, 5723.265, 3.53068, 0.00728332)


@njit(cache=True)
def psat_ice_kernel(T):
    """Saturation vapour pressure over ice Ih [Pa]; NaN outside 110-273.16 K.

    Murphy & Koop (2005) eq. (7).  Scalar numba kernel.
    """
    if not (T >= 110.0 and T <= 273.16):
        return math.nan
    a, b, c, d = MK05_ICE
    return math.exp(a - b / T + c * math.log(T) - d * T)


@njit(cache=True)
def psat_liquid_kernel(T):
    """Saturation vapour pressure over (supercooled) liquid water [Pa]; NaN outside 123-332 K.

    Murphy & Koop (2005) eq. (10).  Scalar numba kernel.
    """
    if not (T >= 123.0 and T <= 332.0):
        return math.nan
    lnT = math.log(T)
    return math.exp(
        54.842763
        - 6763.22 / T
        - 4.210 * lnT
        + 0.000367 * T
        + math.tanh(0.0415 * (T - 218.8)) * (53.878 - 1331.22 / T - 9.44523 * lnT + 0.014025 * T)
    )


@njit(cache=True)
def ice_activity_kernel(T):
    """Water activity of ice, p_ice/p_liq [-]; NaN outside 123-273.16 K.

    Murphy & Koop (2005) eqs. (7) and (10).  Scalar numba kernel.
    """
    if not (T >= 123.0 and T <= 273.16):
        return math.nan
    return psat_ice_kernel(T) / psat_liquid_kernel(T)


def _check_range(T, lo, hi, what):
    arr = np.asarray(T, dtype=float)
    bad = ~((arr >= lo) & (arr <= hi))
    if np.any(bad):
        first = arr[bad].flat[0] if arr.ndim else float(arr)
        raise ValidityError(
            f"temperature: {first!r} K is outside the validity range of {what} "
            f"({lo:g}-{hi:g} K)"
        )
    return arr


def _as_output(arr, like):
    return float(arr) if np.ndim(like) == 0 else arr


def saturation_vapor_pressure_ice(T):
    """Saturation vapour pressure over hexagonal ice.

    Method: Murphy & Koop (2005), Q. J. R. Meteorol. Soc. 131, 1539, eq. (7),
    doi:10.1256/qj.04.94.

    Parameters
    ----------
    T : float or array [K]
        Temperature, 110 K <= T <= 273.16 K.

    Returns
    -------
    float or ndarray [Pa]

    Raises
    ------
    ValidityError
        If any temperature lies outside 110-273.16 K.

    Examples
    --------
    >>> round(saturation_vapor_pressure_ice(273.16), 2)
    611.66
    """
    arr = _check_range(T, *ICE_T_RANGE, "Murphy & Koop (2005) ice vapour pressure")
    a, b, c, d = MK05_ICE
    out = np.exp(a - b / arr + c * np.log(arr) - d * arr)
    return _as_output(out, T)


def saturation_vapor_pressure_liquid(T):
    """Saturation vapour pressure over liquid water, including supercooled water.

    Method: Murphy & Koop (2005), Q. J. R. Meteorol. Soc. 131, 1539, eq. (10),
    doi:10.1256/qj.04.94.

    Parameters
    ----------
    T : float or array [K]
        Temperature, 123 K <= T <= 332 K.

    Returns
    -------
    float or ndarray [Pa]

    Raises
    ------
    ValidityError
        If any temperature lies outside 123-332 K.

    Examples
    --------
    >>> round(saturation_vapor_pressure_liquid(298.15), 0)
    3170.0
    """
    arr = _check_range(T, *LIQUID_T_RANGE, "Murphy & Koop (2005) liquid-water vapour pressure")
    lnT = np.log(arr)
    out = np.exp(
        54.842763
        - 6763.22 / arr
        - 4.210 * lnT
        + 0.000367 * arr
        + np.tanh(0.0415 * (arr - 218.8)) * (53.878 - 1331.22 / arr - 9.44523 * lnT + 0.014025 * arr)
    )
    return _as_output(out, T)


def ice_water_activity(T):
    """Water activity of ice, a_w,ice(T) = p_ice(T) / p_liq(T).

    A brine in equilibrium with ice has this water activity; air saturated
    over frost has this relative humidity with respect to liquid water.
    Method: Murphy & Koop (2005) eqs. (7) and (10); the ratio definition is
    standard (e.g. Koop et al. 2000, Nature 406, 611).

    Parameters
    ----------
    T : float or array [K]
        Temperature, 123 K <= T <= 273.16 K.

    Returns
    -------
    float or ndarray [-], in (0, 1]; equal to 1 at the triple point.

    Raises
    ------
    ValidityError
        If any temperature lies outside 123-273.16 K.

    Examples
    --------
    >>> round(ice_water_activity(253.15), 3)
    0.823
    """
    _check_range(T, *ICE_ACTIVITY_T_RANGE, "the ice water activity (Murphy & Koop 2005)")
    return saturation_vapor_pressure_ice(T) / saturation_vapor_pressure_liquid(T)
