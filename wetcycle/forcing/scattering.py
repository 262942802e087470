"""Sunlight through the dusty atmosphere: delta-Eddington two-stream fluxes.

The dust of Mars scatters most of the sunlight it intercepts, and mostly forward: a
fixed "half of the scattered light goes down" (the earlier rule here) puts too little
light on the ground at noon and too much into the atmosphere.  This module treats the
atmosphere as one homogeneous layer of dust of visible optical depth ``tau``,
single-scattering albedo ``omega`` and asymmetry parameter ``g`` and solves for its
reflection and transmission of the direct beam and of diffuse light with the
delta-Eddington approximation:

* Delta scaling (Joseph, J. H., Wiscombe, W. J. and Weinman, J. A. (1976), "The
  delta-Eddington approximation for radiative flux transfer", J. Atmos. Sci. 33,
  2452-2459): the forward peak ``f = g**2`` of the phase function is counted as
  unscattered, ``tau' = (1 - omega f) tau``, ``omega' = (1 - f) omega / (1 - omega f)``,
  ``g' = g / (1 + g)``.
* The Eddington two-stream equations for the diffuse fluxes up ``U`` and down ``D``
  (optical depth ``t`` downward, direct beam ``exp(-t / mu0)`` per unit flux normal to
  the beam) in the generalised form of Meador, W. E. and Weaver, W. R. (1980),
  "Two-stream approximations to radiative transfer in planetary atmospheres: a unified
  description of existing methods and a new improvement", J. Atmos. Sci. 37, 630-643
  (their Table 1, Eddington row):

      dU/dt = g1 U - g2 D - omega' g3 exp(-t / mu0)
      dD/dt = g2 U - g1 D + omega' g4 exp(-t / mu0)

      g1 = (7 - omega' (4 + 3 g')) / 4,  g2 = -(1 - omega' (4 - 3 g')) / 4,
      g3 = (2 - 3 g' mu0) / 4,           g4 = 1 - g3,

  solved exactly for a homogeneous layer (eigenvalues ``+-k``, ``k**2 = g1**2 - g2**2``,
  plus the particular solution of the beam source) with no diffuse light entering at
  the top and none coming up from below (a black surface).  The same equations with
  unit diffuse flux entering one face give the layer's diffuse reflectance ``r_d`` and
  transmittance ``t_d`` (the same from either side for a homogeneous layer).
* A Lambertian ground of albedo ``A`` below: light bounces between ground and sky, so
  the flux reaching the ground is ``mu0 F (T_dir + T_dif) / (1 - A r_d)`` (adding
  method, common practice); the atmosphere absorbs ``1 - R - T_dir - T_dif`` of the
  beam and ``1 - r_d - t_d`` of what the ground reflects.

Validity: ``0 <= tau <= 10``; ``0 <= omega <= 0.999`` (conservative scattering, where
``k = 0``, is excluded) and ``0 <= g < 1`` with ``omega' (4 - 3 g') >= 1`` (strongly
absorbing or strongly forward-scattering particles give the Eddington closure a negative
backscatter, ``gamma_2 < 0``, and are refused; Mars dust is far from it); ``mu0 > 0``.  Errors of the delta-Eddington
fluxes are a few per cent of the incident flux against exact solutions for smooth
aerosol phase functions, larger at grazing sun (Joseph et al. 1976; checked in the
tests against an independent Monte Carlo solution of the same slab).  The tangent
singularity of the beam's particular solution at ``k mu0 = 1`` is removable; there
``mu0`` is moved by one part in 10**4.

Default optical properties of Mars dust in sunlight (band-averaged over the solar
spectrum): ``omega = 0.93``, ``g = 0.68`` (CRISM/Pancam-era retrievals give ~0.97 in the
red and near infrared and ~0.65-0.8 in the near ultraviolet, asymmetry 0.63-0.70:
Wolff et al. 2009, J. Geophys. Res. 114, E00D04, and earlier Pathfinder and TES work;
the band averages are from memory, settable).
"""

from __future__ import annotations

import math

import numpy as np
from numba import njit

from ..errors import ConfigError, ValidityError

#: Band-averaged single-scattering albedo of Mars dust in sunlight [-] (from memory; a setting).
DUST_SOLAR_SINGLE_SCATTERING_ALBEDO = 0.93
#: Band-averaged asymmetry parameter of Mars dust in sunlight [-] (from memory; a setting).
DUST_SOLAR_ASYMMETRY = 0.68
#: Largest single-scattering albedo accepted (conservative scattering has k = 0).
OMEGA_MAX = 0.999


def layer_constants(omega, g):
    """Delta-scaled Eddington constants of a dust layer: ``(omega', g', s, g1, g2, k)``.

    ``s = 1 - omega f`` scales the optical depth (``tau' = s tau``).  Raises
    :class:`~wetcycle.errors.ConfigError` outside ``0 <= omega <= 0.999``, ``0 <= g < 1``.
    """
    if not (np.isfinite(omega) and 0.0 <= omega <= OMEGA_MAX):
        raise ConfigError(f"forcing.dust_single_scattering_albedo: {omega!r} not allowed; allowed 0 to {OMEGA_MAX}")
    if not (np.isfinite(g) and 0.0 <= g < 1.0):
        raise ConfigError(f"forcing.dust_asymmetry: {g!r} not allowed; allowed 0 to <1")
    f = g * g
    s = 1.0 - omega * f
    w = (1.0 - f) * omega / s
    gp = g / (1.0 + g)
    g1 = (7.0 - w * (4.0 + 3.0 * gp)) / 4.0
    g2 = -(1.0 - w * (4.0 - 3.0 * gp)) / 4.0
    if g2 < 0.0:
        raise ConfigError(f"forcing.dust_single_scattering_albedo: {omega!r} with dust_asymmetry {g!r} not allowed: "
                          f"the Eddington closure then scatters negative light back; allowed omega' (4 - 3 g') >= 1 "
                          f"after delta scaling, e.g. omega >= 0.6 for g <= 0.7")
    k = math.sqrt((g1 - g2) * (g1 + g2))
    return w, gp, s, g1, g2, k


@njit(cache=True, fastmath=True, error_model="numpy", inline="always")
def diffuse_layer_kernel(e, g1, g2, k):
    """Diffuse reflectance and transmittance ``(r_d, t_d)`` of the layer, ``e = exp(-k tau')``."""
    a = g1 + k
    idet = 1.0 / (g2 * g2 * e * e - a * a)
    return g2 * a * (e * e - 1.0) * idet, e * (g2 * g2 - a * a) * idet


@njit(cache=True, fastmath=True, error_model="numpy", inline="always")
def beam_layer_kernel(mu0, t_dir, e, w, gp, g1, g2, k):
    """Reflectance and diffuse transmittance ``(R, T_dif)`` of the layer for the beam.

    ``mu0`` > 0 cosine of the solar zenith angle, ``t_dir = exp(-tau' / mu0)``,
    ``e = exp(-k tau')``; the rest from :func:`layer_constants`.  Per unit flux on a
    horizontal surface at the top (divide the fluxes by ``mu0``).
    """
    m = mu0 if abs(1.0 - k * k * mu0 * mu0) > 1e-4 else mu0 * 1.0001
    g3 = (2.0 - 3.0 * gp * m) / 4.0
    g4 = 1.0 - g3
    im = 1.0 / m
    # particular solution (Z1 up, Z2 down) of the beam source, per unit flux normal to the beam
    wdp = w / (im * im - k * k)
    z1 = ((im - g1) * g3 - g2 * g4) * wdp
    z2 = (-(g1 + im) * g4 - g2 * g3) * wdp
    # homogeneous parts C1 (g1 + k, g2) exp(-k (tau' - t)) + C2 (g2, g1 + k) exp(-k t):
    # no diffuse light down at the top, none up at the (black) bottom
    a = g1 + k
    idet = 1.0 / (g2 * g2 * e * e - a * a)
    c1 = (a * z1 * t_dir - g2 * e * z2) * idet
    c2 = (a * z2 - g2 * e * z1 * t_dir) * idet
    refl = c1 * a * e + c2 * g2 + z1
    tdif = c1 * g2 + c2 * a * e + z2 * t_dir
    return refl * im, tdif * im


def dust_layer_shortwave(mu0, tau, albedo, omega=DUST_SOLAR_SINGLE_SCATTERING_ALBEDO, g=DUST_SOLAR_ASYMMETRY):
    """Sunlight at the ground and in the atmosphere per unit top-of-atmosphere flux [-].

    Delta-Eddington layer over a Lambertian ground (see the module notes).

    Parameters
    ----------
    mu0 : array [-], > 0        cosine of the solar zenith angle
    tau : array [-], 0-10       visible dust optical depth
    albedo : array [-], 0-1     ground albedo
    omega, g : float [-]        dust single-scattering albedo (<= 0.999) and asymmetry

    Returns
    -------
    dict of ndarray, each per unit flux on a horizontal surface at the top of the
    atmosphere: ``direct`` and ``diffuse`` (down at the ground, bounces included),
    ``absorbed_atmosphere``, ``reflected`` (to space, ground included); with the
    ground's absorption ``(1 - A)(direct + diffuse)`` they add up to 1.

    Examples
    --------
    >>> r = dust_layer_shortwave(1.0, 0.0, 0.2)
    >>> float(r["direct"]), float(r["diffuse"]), float(r["absorbed_atmosphere"])
    (1.0, 0.0, 0.0)
    """
    mu0, tau, alb = np.broadcast_arrays(np.asarray(mu0, float), np.asarray(tau, float), np.asarray(albedo, float))
    if np.any(~(mu0 > 0.0)) or np.any(mu0 > 1.0):
        raise ValidityError("dust_layer_shortwave: mu0 must lie in (0, 1]")
    if np.any(~((tau >= 0.0) & (tau <= 10.0))):
        raise ValidityError("dust_layer_shortwave: optical depth outside 0-10")
    if np.any(~((alb >= 0.0) & (alb <= 1.0))):
        raise ValidityError("dust_layer_shortwave: albedo outside 0-1")
    w, gp, s, g1, g2, k = layer_constants(omega, g)
    out = {key: np.empty(mu0.shape) for key in ("direct", "diffuse", "absorbed_atmosphere", "reflected")}
    for i in np.ndindex(mu0.shape):
        m, tp, a = float(mu0[i]), s * float(tau[i]), float(alb[i])
        t_dir = math.exp(-tp / m)
        e = math.exp(-k * tp)
        r, td = _beam_py(m, t_dir, e, w, gp, g1, g2, k)
        rd, tdd = _diffuse_py(e, g1, g2, k)
        down = (t_dir + td) / (1.0 - a * rd)
        out["direct"][i] = t_dir
        out["diffuse"][i] = down - t_dir
        out["absorbed_atmosphere"][i] = (1.0 - r - t_dir - td) + a * down * (1.0 - rd - tdd)
        out["reflected"][i] = r + a * down * tdd
    return out


_beam_py = beam_layer_kernel.py_func
_diffuse_py = diffuse_layer_kernel.py_func
