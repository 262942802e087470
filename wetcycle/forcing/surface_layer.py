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
