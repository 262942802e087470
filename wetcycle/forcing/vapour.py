"""Near-surface water vapour: mixing ratio, seasonal column abundance, surface frost.

Three sources of the near-surface vapour partial pressure e [Pa]:

* a constant volume mixing ratio: e = vmr * p_surface;
* a seasonal column abundance W(Ls) [precipitable microns] converted to a
  near-surface partial pressure under the assumption of uniform mixing through
  the column (below), times a near-surface confinement factor;
* a file (see :mod:`wetcycle.forcing.files`).

Then :func:`frost_exchange` lets water frost form on, and sublime from, the
surface: a numba kernel over cells, stepped through time, that tracks the
frost mass per area [kg m-2] (an output: salts touching frost can melt at
their eutectic) and returns the vapour pressure the surface sees.

Column conversion (hydrostatic, uniform mixing)
-----------------------------------------------
If water has the same mass mixing ratio q at all heights, the column of
water is W = q p_s / g (the column mass of air is p_s / g, hydrostatic
balance).  The volume mixing ratio is vmr = q M_air / M_w, so the partial
pressure e = vmr p_s = W g M_air / M_w, independent of p_s.  Water on Mars
is usually confined below the well-mixed value near the surface at night and
in the cold seasons and can be enriched near the surface elsewhere; the
*confinement factor* c multiplies the well-mixed value:
e_surface = c W g M_air / M_w (c = 1: well mixed).  Units: one precipitable
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

import math
from dataclasses import dataclass

import numpy as np
from numba import njit

from ..errors import ConfigError, ValidityError, shown
from ..orbit import MARS, get_planet
from ..water import (MOLAR_MASS_WATER, psat_ice_kernel, psat_liquid_kernel,
                     saturation_vapor_pressure_ice, saturation_vapor_pressure_liquid)
from .pressure import PeriodicTable

__all__ = [
    "PRECIPITABLE_MICRON_KG_M2", "R_VAPOUR", "DEMO_COLUMN_TABLE",
    "vapor_pressure_from_vmr", "column_to_vapor_pressure", "vapor_pressure_from_column_table",
    "relative_humidity", "relative_humidity_ice", "vapor_pressure_from_relative_humidity",
    "FrostResult", "frost_exchange", "frost_kernel",
    "DEFAULT_TRANSFER_VELOCITY_M_S", "DEFAULT_LAYER_THICKNESS_M",
]

#: One precipitable micron [kg m-2]: 1e-6 m of liquid water at 1000 kg m-3 (common practice).
PRECIPITABLE_MICRON_KG_M2 = 1.0e-3
#: Molar gas constant [J mol-1 K-1] (CODATA 2018, exact).
_R_GAS = 8.314462618
#: Specific gas constant of water vapour [J kg-1 K-1] = R / M_w.
R_VAPOUR = _R_GAS / MOLAR_MASS_WATER

#: Default bulk transfer velocity for frost exchange [m s-1]: a bulk transfer coefficient
#: ~1e-3 times a wind ~5 m s-1 (order of magnitude, common practice in bulk formulas).
DEFAULT_TRANSFER_VELOCITY_M_S = 5.0e-3
#: Default thickness of the near-surface air layer whose excess vapour may deposit in
#: one step [m] (an order-of-magnitude setting of this project, not a measured value).
DEFAULT_LAYER_THICKNESS_M = 100.0

#: INVENTED demonstration table: column water [pr-um] against Ls for an imaginary
#: mid-latitude site.  Values are made up for the demo, not a measurement.
DEMO_COLUMN_TABLE = PeriodicTable(
    ls_deg=[0, 30, 60, 90, 120, 150, 180, 210, 240, 270, 300, 330],
    values=[8.0, 7.0, 9.0, 12.0, 14.0, 13.0, 10.0, 9.0, 11.0, 13.0, 12.0, 10.0],
    name="DEMO_COLUMN_TABLE (invented, pr-um)",
    lower=0.0,
)


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


def vapor_pressure_from_column_table(ls_deg, table=DEMO_COLUMN_TABLE, planet=MARS, confinement=1.0):
    """Near-surface vapour pressure from a seasonal column table in precipitable microns [Pa].

    The table (:class:`~wetcycle.forcing.pressure.PeriodicTable`, pr-um against
    Ls) is interpolated linearly and periodically in Ls, converted to kg m-2
    (1 pr-um = 1e-3 kg m-2) and then with :func:`column_to_vapor_pressure`.

    Parameters
    ----------
    ls_deg : float or array [deg]   e.g. ``clock.ls_deg``
    table : PeriodicTable [pr-um]
    planet : str or Planet
    confinement : float [-], > 0

    Returns
    -------
    float or ndarray [Pa], shape of ``ls_deg``
    """
    w = np.asarray(table(ls_deg)) * PRECIPITABLE_MICRON_KG_M2
    return column_to_vapor_pressure(w if np.ndim(ls_deg) else float(w), planet, confinement)


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


# --------------------------------------------------------------------------------------
# Surface water frost
# --------------------------------------------------------------------------------------

@njit(cache=True)
def _psat_surface(t):
    # Over ice up to the triple point; above it frost cannot persist and the liquid curve
    # (continuous with the ice curve at 273.16 K) sets the sublimation/evaporation target.
    if t <= 273.16:
        return psat_ice_kernel(t)
    return psat_liquid_kernel(t)


@njit(cache=True, nogil=True)
def frost_kernel(e_air, t_surface, frost0, dt_s, transfer_velocity, layer_thickness,
                 e_surface_out, frost_out, exchange_out):
    """Surface water-frost exchange, stepped through a block (numba kernel).

    Method (this project's bulk scheme, stated): per step and cell, with
    e_s = p_ice(T_s) (Murphy & Koop 2005; p_liq above 273.16 K) and the vapour
    density difference d = (e_air - e_s) / (R_v T_s) (near-surface air taken at
    the surface temperature), the water moved from air to frost in the step is

        dM = d * min(w dt, h)                         [kg m-2]

    -- a bulk transfer flux w d, limited to the excess vapour held in a
    near-surface layer of thickness h -- for deposition (d > 0) or, when frost
    is present, sublimation (d < 0, at most the frost present).  Frost never
    goes negative.  Surface vapour pressure: e_s where frost remains at the end
    of the step or deposits; if the last frost vanishes within the step, the
    time-weighted mean f e_s + (1 - f) e_air with f the fraction of the step
    frost lasted; otherwise e_air.  Latent heat is not fed back to T_s.
    Results do not depend on dt while w dt <= h.

    Parameters
    ----------
    e_air : float64[n_steps, n_cells] [Pa]    air vapour pressure (>= 0)
    t_surface : float64[n_steps, n_cells] [K]  surface temperature, 110-332 K
    frost0 : float64[n_cells] [kg m-2]        frost at the start of the block
    dt_s : float [s]; transfer_velocity : float [m s-1]; layer_thickness : float [m]
    e_surface_out, frost_out, exchange_out : float64[n_steps, n_cells]
        Filled with the surface vapour pressure [Pa], frost at the end of each
        step [kg m-2] and the water moved from vapour to frost in the step
        [kg m-2] (negative for sublimation).

    Flags: a temperature outside 110-332 K (or a NaN input) gives NaN in all
    three outputs from that step on for that cell.
    """
    n_t, n_c = e_air.shape
    eff = min(transfer_velocity * dt_s, layer_thickness)
    frost = frost0.copy()
    for k in range(n_t):
        for j in range(n_c):
            t = t_surface[k, j]
            ea = e_air[k, j]
            m = frost[j]
            es = math.nan
            if t >= 110.0 and t <= 332.0:
                es = _psat_surface(t)
            if not (es == es) or not (ea == ea) or not (m == m):
                frost[j] = math.nan
                e_surface_out[k, j] = math.nan
                exchange_out[k, j] = math.nan
                frost_out[k, j] = math.nan
                continue
            dm = (ea - es) / (R_VAPOUR * t) * eff
            if dm >= 0.0:
                # deposition (or exact saturation)
                frost[j] = m + dm
                e_surface_out[k, j] = es if dm > 0.0 or m > 0.0 else ea
                exchange_out[k, j] = dm
            elif m > 0.0:
                if m + dm > 0.0:
                    frost[j] = m + dm
                    e_surface_out[k, j] = es
                    exchange_out[k, j] = dm
                else:
                    f = m / (-dm)
                    frost[j] = 0.0
                    e_surface_out[k, j] = f * es + (1.0 - f) * ea
                    exchange_out[k, j] = -m
            else:
                e_surface_out[k, j] = ea
                exchange_out[k, j] = 0.0
            frost_out[k, j] = frost[j]


@dataclass(frozen=True)
class FrostResult:
    """Output of :func:`frost_exchange`; arrays of shape (n_steps, n_cells).

    Attributes
    ----------
    surface_vapor_pressure_pa : ndarray [Pa]
    frost_kg_m2 : ndarray [kg m-2]   frost at the end of each step
    exchange_kg_m2 : ndarray [kg m-2]  vapour -> frost in each step (negative: sublimation)
    final_frost_kg_m2 : ndarray [kg m-2], shape (n_cells,)  state to carry into the next block
    """

    surface_vapor_pressure_pa: np.ndarray
    frost_kg_m2: np.ndarray
    exchange_kg_m2: np.ndarray
    final_frost_kg_m2: np.ndarray


def frost_exchange(e_air_pa, t_surface_k, frost0_kg_m2, dt_s,
                   transfer_velocity_m_s=DEFAULT_TRANSFER_VELOCITY_M_S,
                   layer_thickness_m=DEFAULT_LAYER_THICKNESS_M):
    """Form and sublime surface water frost through a block of steps; see :func:`frost_kernel`.

    Parameters
    ----------
    e_air_pa : array [Pa], shape (n_steps, n_cells) or (n_steps,); >= 0, finite
    t_surface_k : array [K], same shape; 110-332 K
    frost0_kg_m2 : float or array [kg m-2], shape (n_cells,); >= 0
    dt_s : float [s], > 0   (``clock.dt_s``)
    transfer_velocity_m_s : float [m s-1], > 0
    layer_thickness_m : float [m], > 0

    Returns
    -------
    FrostResult   (2-D arrays; a 1-D input is treated as one cell)

    Raises
    ------
    ValidityError  temperature outside 110-332 K, negative or non-finite vapour or frost.
    ConfigError    bad dt or exchange parameters, or mismatched shapes.
    """
    e = _finite_nonneg("e_air_pa", e_air_pa, "Pa")
    t = np.asarray(t_surface_k, dtype=float)
    if e.ndim == 1:
        e = e[:, None]
    if t.ndim == 1:
        t = t[:, None]
    if e.ndim != 2 or e.shape != t.shape:
        raise ConfigError(f"frost_exchange: e_air_pa shape {np.shape(e_air_pa)} and t_surface_k shape "
                          f"{np.shape(t_surface_k)} must match, (n_steps, n_cells)")
    bad = ~((t >= 110.0) & (t <= 332.0))
    if np.any(bad):
        raise ValidityError(f"t_surface_k: {float(t[bad][0])!r} K is outside 110-332 K "
                            "(Murphy & Koop 2005 ice/liquid vapour pressure)")
    m0 = np.broadcast_to(_finite_nonneg("frost0_kg_m2", frost0_kg_m2, "kg m-2"), (e.shape[1],)).astype(float)
    dt = _positive("dt_s", dt_s, "s")
    w = _positive("transfer_velocity_m_s", transfer_velocity_m_s, "m s-1")
    h = _positive("layer_thickness_m", layer_thickness_m, "m")
    e = np.ascontiguousarray(e)
    t = np.ascontiguousarray(t)
    es, fr, ex = (np.empty_like(e) for _ in range(3))
    frost_kernel(e, t, m0, dt, w, h, es, fr, ex)
    final = fr[-1].copy() if fr.shape[0] else m0.copy()
    return FrostResult(es, fr, ex, final)
