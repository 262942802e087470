"""Turbulent exchange of heat and water vapour between the ground and the near-surface air.

Method
------
Bulk-aerodynamic fluxes (common practice; e.g. Stull, R. B. (1988), An
Introduction to Boundary Layer Meteorology, Kluwer, sec. 7.4):

    H = rho c_p C_H U_eff (T_s - T_a)          sensible heat [W m-2], upward
    E = C_E U_eff (rho_v,a - rho_v,s)          water vapour [kg m-2 s-1], downward

between the ground (skin temperature ``T_s``, vapour density ``rho_v,s``) and
the air at the reference height ``z`` (``T_a``, ``rho_v,a``), with
``C_E = C_H`` (common practice).  The neutral transfer coefficient is
``C_HN = kappa**2 / (ln(z/z0) ln(z/z0h))`` (von Karman constant 0.4), and the
stability correction is the non-iterative bulk-Richardson form of Louis,
J.-F. (1979), Boundary-Layer Meteorol. 17, 187-202, with the constants
b = c = d = 5 of its later revision (Louis, Tiedtke & Geleyn 1982, ECMWF
workshop; both from memory):

    Ri_b = g z (T_a - T_s) / (T_mean U**2)
    stable   (Ri_b > 0):  F_h = 1 / (1 + 3 b Ri_b sqrt(1 + d Ri_b))
    unstable (Ri_b < 0):  F_h = 1 - 3 b Ri_b / (1 + 3 b c C_HN sqrt(-Ri_b z / z0))

Under light wind and strong heating the Mars surface layer is in free
convection (Clow & Haberle 1991, read as an abstract); a convective velocity
scale adds gustiness, ``U_eff = sqrt(U**2 + (beta w*)**2)`` with
``w* = (g h H / (rho c_p T))**(1/3)`` over a convective layer of depth h,
beta = 1 (Beljaars, A. C. M. (1995), Q. J. R. Meteorol. Soc. 121, 255-270;
from memory), so the exchange never vanishes with the wind.  (The
compositional free convection over a subliming ice surface, Ingersoll 1970,
is negligible beside it at Mars vapour densities, ~1e-4 of the air's, and
is left out.)

The wind is given at the sensor height (a setting) and carried to the
reference height by the neutral logarithmic law.

The air at the sensor height by similarity
------------------------------------------
Between the ground and an air temperature higher up, Monin-Obukhov
similarity gives the temperature at any height ``z`` of the surface layer
from the flux (:func:`sensor_temperature`):

    T(z) = T_s - (Q / (kappa u*)) [ln(z / z0h) - psi_h(z / L) + psi_h(z0h / L)]

with the kinematic heat flux ``Q = H / (rho c_p)``, the Obukhov length
``L = -u*^3 T / (kappa g Q)`` and the Businger-Dyer profile functions
(Dyer, A. J. (1974), Boundary-Layer Meteorol. 7, 363-372; integrated form of
Paulson, C. A. (1970), J. Appl. Meteorol. 9, 857-861; both from memory):

    unstable (L < 0):  psi_h = 2 ln((1 + x) / 2),  x = (1 - 16 z / L)**(1/2)
    stable   (L > 0):  psi_h = -5 z / L  (z / L capped at 1, the range of the fits)

This is the relation by which Sutton, Leovy & Tillman (1978, J. Atmos. Sci.
35, 2346) derived the Viking landers' heat flux from the ground-air
temperature difference and the wind.  The column kernel does not use it
yet: there the air at the sensor height is the one-node air layer
(:class:`wetcycle.forcing.column.WaterSettings` says why its noon flux is
~4x below Sutton et al.'s); the tests check the surface layer's constants
against their published numbers through it.

Validity: reference height 0.5-100 m, roughness 1e-5 to 0.5 m (below the
reference height), wind 0.1-50 m s-1, temperatures 100-400 K.
"""

from __future__ import annotations

import math

from numba import njit

#: von Karman constant (common practice).
KARMAN = 0.4
#: Louis (1979) / Louis, Tiedtke & Geleyn (1982) constants b, c, d (from memory).
LOUIS_B = 5.0
LOUIS_C = 5.0
LOUIS_D = 5.0
#: Gustiness factor beta (Beljaars 1995, from memory).
GUST_BETA = 1.0
#: Businger-Dyer constants: unstable gamma_h = 16, stable beta_h = 5 (Dyer 1974, from memory),
#: and the largest z / L the stable form is used at (its fits span z / L <= ~1).
DYER_GAMMA = 16.0
DYER_BETA = 5.0
STABLE_ZETA_MAX = 1.0


@njit(cache=True, fastmath=True, inline="always")
def neutral_coefficient(z_ref, z0, z0h):
    """Neutral transfer coefficient for heat, kappa^2 / (ln(z/z0) ln(z/z0h)) [-]."""
    return KARMAN * KARMAN / (math.log(z_ref / z0) * math.log(z_ref / z0h))


@njit(cache=True, fastmath=True, inline="always")
def stability_factor(ri, cn, z_ref, z0):
    """Louis-type stability factor F_h(Ri_b) multiplying the neutral coefficient [-]."""
    if ri >= 0.0:
        return 1.0 / (1.0 + 3.0 * LOUIS_B * ri * math.sqrt(1.0 + LOUIS_D * ri))
    return 1.0 - 3.0 * LOUIS_B * ri / (1.0 + 3.0 * LOUIS_B * LOUIS_C * cn * math.sqrt(-ri * z_ref / z0))


@njit(cache=True, fastmath=True, inline="always")
def transfer_velocity(ri_coef, t_s, t_a, u, w_star, cn, louis_u):
    """``C_H U_eff`` [m s-1] in the branch-free form the column kernel runs.

    Parameters
    ----------
    ri_coef : float [m2 s-2]  ``g z_ref``
    t_s, t_a : float [K]      ground skin and air (reference height) temperature
    u : float [m s-1]         wind at the reference height (> 0)
    w_star : float [m s-1]    convective velocity scale (0 when stable)
    cn : float [-]            :func:`neutral_coefficient`
    louis_u : float [-]       ``3 b c C_HN sqrt(z_ref / z0)``, the unstable branch's constant

    Both branches of :func:`stability_factor` are evaluated and one is selected, so the loop
    over cells stays SIMD; the result equals ``cn * stability_factor(...) * U_eff``.
    """
    ueff = math.sqrt(u * u + (GUST_BETA * w_star) * (GUST_BETA * w_star))
    ri = ri_coef * (t_a - t_s) / (0.5 * (t_a + t_s) * ueff * ueff)
    fst = 1.0 / (1.0 + 3.0 * LOUIS_B * ri * math.sqrt(1.0 + LOUIS_D * max(ri, 0.0)))
    fun = 1.0 - 3.0 * LOUIS_B * ri / (1.0 + louis_u * math.sqrt(max(-ri, 0.0)))
    return cn * (fst if ri >= 0.0 else fun) * ueff


def unstable_constant(z_ref, z0, z0h):
    """``3 b c C_HN sqrt(z_ref / z0)`` of Louis's unstable branch [-] (see :func:`transfer_velocity`)."""
    return 3.0 * LOUIS_B * LOUIS_C * neutral_coefficient(z_ref, z0, z0h) * math.sqrt(z_ref / z0)


@njit(cache=True, fastmath=True, inline="always")
def heat_transfer_velocity(t_s, t_a, u, z_ref, z0, z0h, g, w_star):
    """``C_H U_eff`` [m s-1] for the bulk fluxes (see the module notes).

    Parameters
    ----------
    t_s, t_a : float [K]     ground skin and air (reference height) temperature
    u : float [m s-1]        wind at the reference height (> 0)
    z_ref, z0, z0h : float [m]
    g : float [m s-2]
    w_star : float [m s-1]   convective velocity scale (0 when stable)
    """
    cn = neutral_coefficient(z_ref, z0, z0h)
    louis_u = 3.0 * LOUIS_B * LOUIS_C * cn * math.sqrt(z_ref / z0)
    return transfer_velocity(g * z_ref, t_s, t_a, u, w_star, cn, louis_u)


@njit(cache=True, fastmath=True, inline="always")
def convective_velocity(h_flux, rho, cp, t_a, g, depth):
    """Deardorff convective velocity w* = (g depth H / (rho c_p T))^(1/3) [m s-1]; 0 if H <= 0."""
    if h_flux <= 0.0:
        return 0.0
    return (g * depth * h_flux / (rho * cp * t_a)) ** (1.0 / 3.0)


@njit(cache=True, fastmath=True, inline="always")
def sensor_temperature(t_s, t_layer, q_kin, u_star, g, z_s, z0h, ln_s):
    """Air temperature [K] at the sensor height ``z_s`` by Monin-Obukhov similarity.

    Parameters
    ----------
    t_s : float [K]            ground skin temperature
    t_layer : float [K]        mean temperature of the near-surface air layer (bounds the result)
    q_kin : float [K m s-1]    kinematic sensible heat flux H / (rho c_p), upward positive
    u_star : float [m s-1]     friction velocity (> 0)
    g : float [m s-2]
    z_s, z0h : float [m]       sensor height, thermal roughness length (z0h < z_s)
    ln_s : float [-]           ``ln(z_s / z0h)``

    Method: the Businger-Dyer profile of the module notes (Dyer 1974; Paulson 1970; from
    memory), with the Obukhov length from the flux and ``u*``.  The fits span about
    -2 <= z / L <= 1; stable z / L is capped at 1.  Far into free convection (-z / L >> 1) the
    form keeps phi_h ~ (-16 z / L)^(-1/2), so the temperature excess falls as z^(-1/2), steeper
    than the z^(-1/3) of free-convection scaling (Priestley 1954, from memory).  The result is
    held between ``t_s`` and ``t_layer`` (a monotonic profile).  Branch-free (one logarithm).
    """
    ref = 0.5 * (t_s + t_layer)
    inv_l = -KARMAN * g * q_kin / (u_star * u_star * u_star * ref)
    zs = z_s * inv_l
    z0 = z0h * inv_l
    xs = math.sqrt(1.0 - DYER_GAMMA * min(zs, 0.0))
    x0 = math.sqrt(1.0 - DYER_GAMMA * min(z0, 0.0))
    dpsi = (2.0 * math.log((1.0 + xs) / (1.0 + x0))
            - DYER_BETA * (min(max(zs, 0.0), STABLE_ZETA_MAX) - min(max(z0, 0.0), STABLE_ZETA_MAX)))
    t = t_s - q_kin * (ln_s - dpsi) / (KARMAN * u_star)
    lo = min(t_s, t_layer)
    hi = max(t_s, t_layer)
    return min(max(t, lo), hi)
