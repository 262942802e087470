"""Humidity conversions: vapour pressure, mixing ratio, relative humidity.

Small helpers shared by the forcing kinds and the phase model's callers:

* a constant volume mixing ratio to a partial pressure, e = vmr * p (Dalton's law);
* a water column of uniform mixing ratio to a near-surface partial pressure
  (below), the fully mixed limit of :mod:`wetcycle.forcing.supply`'s vertical
  distribution;
* relative humidity with respect to liquid water and to ice, and back.

Column conversion (hydrostatic, uniform mixing)
-----------------------------------------------
If water has the same mass mixing ratio q at all heights, the column of
water is W = q p_s / g (the column mass of air is p_s / g, hydrostatic
balance).  The volume mixing ratio is vmr = q M_air / M_w, so the partial
pressure e = vmr p_s = W g M_air / M_w, independent of p_s.  One precipitable
micron is a 1 um layer of liquid water, 1e-6 m * 1000 kg m-3 = 1e-3 kg m-2
(common practice).

References
----------
1. Wallace, J. M. and Hobbs, P. V. (2006), Atmospheric Science, 2nd ed.,
   Academic Press, sec. 3.2 (hydrostatic balance, mixing ratios).
2. Murphy, D. M. and Koop, T. (2005), Q. J. R. Meteorol. Soc. 131, 1539,
   doi:10.1256/qj.04.94 (saturation over ice and liquid, via wetcycle.water).
"""

from __future__ import annotations

import numpy as np

from ..errors import ConfigError, ValidityError, shown
from ..orbit import MARS, get_planet
from ..water import (LIQUID_T_RANGE, MOLAR_MASS_WATER, saturation_vapor_pressure_ice,
                     saturation_vapor_pressure_liquid)

__all__ = [
    "PRECIPITABLE_MICRON_KG_M2", "R_VAPOUR", "vapor_pressure_from_vmr", "column_to_vapor_pressure",
    "relative_humidity", "relative_humidity_ice", "vapor_pressure_from_relative_humidity",
    "relative_humidity_for_salt",
]

#: One precipitable micron [kg m-2]: 1e-6 m of liquid water at 1000 kg m-3 (common practice).
PRECIPITABLE_MICRON_KG_M2 = 1.0e-3
#: Molar gas constant [J mol-1 K-1] (CODATA 2018, exact).
_R_GAS = 8.314462618
#: Specific gas constant of water vapour [J kg-1 K-1] = R / M_w.
R_VAPOUR = _R_GAS / MOLAR_MASS_WATER

def _finite_nonneg(name, x, unit):
    a = np.asarray(x, dtype=float)
    bad = ~(np.isfinite(a) & (a >= 0))
    if np.any(bad):
        raise ValidityError(f"{name}: {float(a[bad].flat[0]) if a.ndim else float(a)!r} {unit} is not allowed; allowed: finite, >= 0")
    return a


def _positive(name, x, unit):
    if isinstance(x, bool) or not (np.isfinite(x) and x > 0):
        raise ConfigError(f"{name}: {shown(x)} {unit} is not allowed; allowed: a finite number > 0")
    return float(x)


def vapor_pressure_from_vmr(vmr, surface_pressure_pa):
    """Vapour partial pressure from a volume mixing ratio, e = vmr * p [Pa] (Dalton's law).

    Parameters
    ----------
    vmr : float or array [mol mol-1], 0 <= vmr <= 1
    surface_pressure_pa : float or array [Pa], >= 0; broadcast with vmr.

    Returns
    -------
    float or ndarray [Pa]

    Examples
    --------
    >>> round(vapor_pressure_from_vmr(150e-6, 650.0), 4)
    0.0975
    """
    v = _finite_nonneg("vmr", vmr, "mol/mol")
    if np.any(v > 1):
        raise ValidityError(f"vmr: {float(np.max(v))!r} is not allowed; allowed: 0-1 mol/mol")
    p = _finite_nonneg("surface_pressure_pa", surface_pressure_pa, "Pa")
    e = v * p
    return float(e) if e.ndim == 0 else e


def column_to_vapor_pressure(column_kg_m2, planet=MARS, confinement=1.0):
    """Near-surface vapour pressure from a water column, uniform mixing: e = c W g M_air / M_w [Pa].

    See the module notes for the derivation (hydrostatic column, uniform mass
    mixing ratio; Wallace & Hobbs 2006 sec. 3.2).

    Parameters
    ----------
    column_kg_m2 : float or array [kg m-2], >= 0
        Column water; multiply precipitable microns by
        :data:`PRECIPITABLE_MICRON_KG_M2` (1e-3 kg m-2 per pr-um).
    planet : str or Planet
        Supplies gravity [m s-2] and the mean molar mass of the air [kg mol-1].
    confinement : float [-], > 0
        Ratio of the near-surface to the column-mean mixing ratio (1 = well mixed).

    Returns
    -------
    float or ndarray [Pa]

    Examples
    --------
    >>> round(column_to_vapor_pressure(10 * PRECIPITABLE_MICRON_KG_M2), 4)  # 10 pr-um on Mars
    0.0893
    """
    planet = get_planet(planet)
    c = _positive("confinement", confinement, "")
    w = _finite_nonneg("column_kg_m2", column_kg_m2, "kg m-2")
    e = c * w * planet.gravity_m_s2 * planet.molar_mass_air_kg_mol / MOLAR_MASS_WATER
    return float(e) if e.ndim == 0 else e


def relative_humidity(vapor_pressure_pa, temperature_k):
    """Relative humidity with respect to (supercooled) liquid water, e / p_liq(T) [-].

    Murphy & Koop (2005) eq. (10) via :func:`wetcycle.water.saturation_vapor_pressure_liquid`;
    valid 123-332 K (ValidityError outside).

    Parameters
    ----------
    vapor_pressure_pa : float or array [Pa], >= 0
    temperature_k : float or array [K]

    Returns
    -------
    float or ndarray [-]
    """
    e = _finite_nonneg("vapor_pressure_pa", vapor_pressure_pa, "Pa")
    rh = e / saturation_vapor_pressure_liquid(temperature_k)
    return float(rh) if np.ndim(rh) == 0 else rh


def relative_humidity_ice(vapor_pressure_pa, temperature_k):
    """Relative humidity with respect to ice, e / p_ice(T) [-].

    Murphy & Koop (2005) eq. (7) via :func:`wetcycle.water.saturation_vapor_pressure_ice`;
    valid 110-273.16 K (ValidityError outside).

    Parameters
    ----------
    vapor_pressure_pa : float or array [Pa], >= 0
    temperature_k : float or array [K]

    Returns
    -------
    float or ndarray [-]
    """
    e = _finite_nonneg("vapor_pressure_pa", vapor_pressure_pa, "Pa")
    rh = e / saturation_vapor_pressure_ice(temperature_k)
    return float(rh) if np.ndim(rh) == 0 else rh


def vapor_pressure_from_relative_humidity(rh, temperature_k):
    """Vapour pressure from relative humidity w.r.t. liquid water, e = RH p_liq(T) [Pa].

    Parameters
    ----------
    rh : float or array [-], 0-1
    temperature_k : float or array [K], 123-332 K (Murphy & Koop 2005 eq. 10)

    Returns
    -------
    float or ndarray [Pa]
    """
    r = _finite_nonneg("relative_humidity", rh, "")
    if np.any(r > 1):
        raise ValidityError(f"relative_humidity: {float(np.max(r))!r} is not allowed; allowed: 0-1 (fraction)")
    e = r * saturation_vapor_pressure_liquid(temperature_k)
    return float(e) if np.ndim(e) == 0 else e


def relative_humidity_for_salt(vapor_pressure_pa, temperature_k):
    """Relative humidity w.r.t. liquid water that a salt sees in a forcing series, in [0, 1] [-].

    RH = e / p_liq(T) with Murphy & Koop (2005) eq. (10), the saturation pressure taken at T
    clamped to the formula's range 123-332 K (the phase kernel clamps water's own properties there
    too and flags such steps, bit 1 of its validity flag), and the result clipped to [0, 1]: air
    supersaturated over liquid water is not a state the salt can see (it would deposit frost or
    dew first).  This is the conversion of the scenario runner's series forcing and of
    :func:`wetcycle.run_dataset`.

    Parameters
    ----------
    vapor_pressure_pa : array [Pa]
    temperature_k : array [K], the salt's temperature

    Returns
    -------
    ndarray [-]
    """
    Tc = np.clip(temperature_k, *LIQUID_T_RANGE)
    return np.clip(vapor_pressure_pa / saturation_vapor_pressure_liquid(Tc), 0.0, 1.0)
