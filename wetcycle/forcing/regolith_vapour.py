"""Water in the regolith pores: vapour diffusion, adsorption on grains, pore ice.

Method
------
Water per unit bulk volume at a node, ``W = phi rho_v + a(rho_v, T) + i``
[kg m-3]: pore vapour (porosity ``phi``, vapour density ``rho_v``), water
adsorbed on the grains ``a`` and pore ice ``i``.  Adsorption is taken to be in
equilibrium with the pore vapour at every step (Langmuir isotherm, below);
ice forms where the pore vapour would pass ice saturation,
``rho_v <= rho_sat(T) = p_ice(T) / (R_v T)`` (Murphy & Koop 2005).  The total
``W`` moves by Fickian diffusion of the pore vapour,

    d W / d t = d/dz ( D_eff d rho_v / dz ),

the standard form of 1-D Mars regolith-atmosphere exchange models (e.g.
Zent, A. P. et al. (1993), J. Geophys. Res. 98, 3319; Jakosky, B. M. et al.
(1997), Icarus 130, 87-95; Savijärvi, H. et al. (2016), Icarus 265, 63-69;
form common practice), with the effective diffusivity of a porous medium in
the transition regime, ``D_eff = (phi / tau) (1/D_m + 1/D_K)**-1`` (tortuosity
``tau``; molecular diffusivity of H2O in CO2
``D_m = 1.387e-5 (T / 273.15)**1.5 (1e5 / p)`` m2 s-1, the fit commonly
attributed to Hecht, M. H. (2002), Icarus 156, 373-386, from memory; Knudsen
diffusivity ``D_K = (2/3) r_p sqrt(8 R T / (pi M_w))`` for pores of radius
``r_p``, common practice).

Langmuir isotherm (Langmuir, I. (1918), J. Am. Chem. Soc. 40, 1361; common
practice), with a heat of adsorption ``q``:

    a = A K p / (1 + K p),   K(T) = K_ref exp[(q / R) (1/T - 1/T_ref)],   p = rho_v R_v T,

``A`` [kg m-3] the water held by a full monolayer per bulk volume.  For a given
``W`` and ``T`` the partition is closed-form (a quadratic in ``rho_v``; see
:func:`partition`), and the storage capacity ``dW/drho_v = phi + A k / (1 + k
rho_v)**2`` (``k = K R_v T``) is what the implicit diffusion step uses.

Time stepping (in :mod:`wetcycle.forcing.column`): backward Euler on the
linearised storage: each node is first re-partitioned at its new
temperature (so warming releases adsorbed water), the tridiagonal system in
``rho_v`` is solved, and ``W`` is then updated from the fluxes of the solved
field -- exactly conservative: what leaves one node enters its neighbour.

Validity: 110-300 K (the table of ice saturation), pore radius 1e-8 to 1e-3 m,
porosity 0.01-0.9.
"""

from __future__ import annotations

import math

import numpy as np
from numba import njit

from ..water import MOLAR_MASS_WATER, psat_ice_kernel, psat_liquid_kernel

#: Molar gas constant [J mol-1 K-1] (CODATA 2018, exact).
R_GAS = 8.314462618
#: Specific gas constant of water vapour [J kg-1 K-1].
R_VAPOUR = R_GAS / MOLAR_MASS_WATER
#: Molecular diffusivity of H2O in CO2 at 273.15 K and 1e5 Pa [m2 s-1] (Hecht 2002, from memory).
D_H2O_CO2_REF = 1.387e-5
#: Storage capacity standing for "pore ice present" (vapour pinned at saturation) [-].
ICE_CAPACITY = 1.0e12

#: Table of the vapour density at ice saturation (liquid above the triple point), for use
#: inside kernels: rho_sat(T) = p_sat(T) / (R_v T) on 100.0 ... 320.0 K every 0.05 K; linear
#: interpolation errs by < 1e-4 relative at 110 K and < 1e-5 above 180 K (checked in the tests
#: against Murphy & Koop).
RHO_SAT_T0 = 100.0
RHO_SAT_DT = 0.05
_n_tab = int(round((320.0 - RHO_SAT_T0) / RHO_SAT_DT)) + 2
TABLE_T = RHO_SAT_T0 + RHO_SAT_DT * np.arange(_n_tab)


def _rho_sat_table():
    out = np.empty(_n_tab)
    for i, ti in enumerate(TABLE_T):
        tc = max(ti, 110.0)     # Murphy & Koop's ice formula holds from 110 K; below, the
        p = psat_ice_kernel(tc) if tc <= 273.16 else psat_liquid_kernel(tc)
        if ti < 110.0:          # 100-110 K: Clausius-Clapeyron continuation (flagged range)
            p = p * math.exp(-6140.0 * (1.0 / ti - 1.0 / 110.0))
        out[i] = p / (R_VAPOUR * ti)
    return out


RHO_SAT_TABLE = _rho_sat_table()
RHO_SAT_TABLE.setflags(write=False)


@njit(cache=True, fastmath=True, inline="always")
def rho_sat(t, table):
    """Vapour density at ice saturation [kg m-3] from :data:`RHO_SAT_TABLE` (T clamped to 100-320 K)."""
    x = (t - RHO_SAT_T0) * (1.0 / RHO_SAT_DT)
    x = min(max(x, 0.0), table.size - 2.0)
    i = int(x)
    f = x - i
    return table[i] + f * (table[i + 1] - table[i])


def water_tables(k_ref, q_over_r, t_ref):
    """Kernel tables on :data:`TABLE_T`: row 0 rho_sat(T) [kg m-3], row 1 the Langmuir
    k(T) = K(T) R_v T [m3 kg-1] for the given isotherm (linear interpolation; < 1e-5 relative)."""
    tab = np.empty((2, _n_tab))
    tab[0] = RHO_SAT_TABLE
    tab[1] = k_ref * np.exp(q_over_r * (1.0 / TABLE_T - 1.0 / t_ref)) * R_VAPOUR * TABLE_T
    return tab


@njit(cache=True, fastmath=True, inline="always")
def table_lookup(t, tab):
    """(rho_sat, k) at temperature ``t`` from :func:`water_tables` (T clamped to 100-320 K)."""
    x = (t - RHO_SAT_T0) * (1.0 / RHO_SAT_DT)
    x = min(max(x, 0.0), tab.shape[1] - 2.0)
    i = int(x)
    f = x - i
    return (tab[0, i] + f * (tab[0, i + 1] - tab[0, i]), tab[1, i] + f * (tab[1, i + 1] - tab[1, i]))


@njit(cache=True, fastmath=True, inline="always")
def langmuir_k(t, k_ref, q_over_r, t_ref):
    """``k = K(T) R_v T`` [m3 kg-1]: the Langmuir constant per unit vapour density."""
    return k_ref * math.exp(q_over_r * (1.0 / t - 1.0 / t_ref)) * R_VAPOUR * t


@njit(cache=True, fastmath=True, inline="always")
def partition(w, t, phi, cap_a, k, rsat):
    """Split water ``w`` [kg m-3] at temperature ``t`` into vapour, adsorbate and ice.

    Parameters
    ----------
    w : float [kg m-3]     total water per bulk volume, >= 0
    t : float [K]
    phi : float [-]        porosity
    cap_a : float [kg m-3] monolayer capacity A (0: no adsorption)
    k : float [m3 kg-1]    from :func:`langmuir_k`
    rsat : float [kg m-3]  vapour density at ice saturation

    Returns
    -------
    rho_v [kg m-3], adsorbed [kg m-3], ice [kg m-3], capacity dW/drho_v [-]
    """
    if w <= 0.0:                                       # (only transiently, within an implicit step)
        return w / phi, 0.0, 0.0, phi + cap_a * k
    w_sat = phi * rsat + cap_a * k * rsat / (1.0 + k * rsat)
    if w >= w_sat:
        return rsat, cap_a * k * rsat / (1.0 + k * rsat), w - w_sat, ICE_CAPACITY
    b = phi + cap_a * k - w * k
    x = 2.0 * w / (b + math.sqrt(b * b + 4.0 * phi * k * w))
    den = 1.0 + k * x
    return x, w - phi * x, 0.0, phi + cap_a * k / (den * den)


#: ``D_m = _DM_COEF T**1.5 / p`` and ``D_K = _DK_COEF r_p sqrt(T)`` (SI units; the two
#: diffusivities of the module notes with their constants gathered).
_DM_COEF = D_H2O_CO2_REF * 1.0e5 / 273.15 ** 1.5
_DK_COEF = (2.0 / 3.0) * math.sqrt(8.0 * R_GAS / (math.pi * MOLAR_MASS_WATER))


@njit(cache=True, fastmath=True, inline="always")
def effective_diffusivity(t, p, phi_over_tau, pore_radius):
    """``D_eff`` [m2 s-1]: (phi/tau) times molecular and Knudsen diffusion in series.

    ``D_m D_K / (D_m + D_K)`` with ``D_m = a T sqrt(T) / p`` and ``D_K = b r_p sqrt(T)`` is
    evaluated as ``sqrt(T) (a T)(b r_p) / (a T + b r_p p)``: the same expression with one
    square root and one division (it runs per node and step in the column kernel)."""
    st = math.sqrt(t)
    at = _DM_COEF * t
    br = _DK_COEF * pore_radius
    return phi_over_tau * st * at * br / (at + br * p)


def water_content(rho_v, t, phi, cap_a, k_ref, q_over_r, t_ref):
    """Total water [kg m-3] holding pore vapour ``rho_v`` at ``t`` (NumPy; for set-up and tests)."""
    rho_v = np.asarray(rho_v, dtype=float)
    t = np.asarray(t, dtype=float)
    k = k_ref * np.exp(q_over_r * (1.0 / t - 1.0 / t_ref)) * R_VAPOUR * t
    return phi * rho_v + cap_a * k * rho_v / (1.0 + k * rho_v)
