"""Sunlight and sky radiation reaching a (sloped) surface on Mars.

Method
------
* Geometry: the cosine of the solar zenith angle is
  ``mu0 = sin(phi) sin(delta) + cos(phi) cos(delta) cos(h)`` for latitude phi,
  declination delta and hour angle h (spherical astronomy, common practice).
  For a surface of slope beta facing azimuth a (clockwise from north, the
  downhill direction), the cosine of the incidence angle is the dot product of
  the unit vector to the Sun and the surface normal, both written in local
  east-north-up axes (common practice).
* Top of atmosphere: ``F = S0 / r**2`` with S0 the total solar irradiance at
  1 AU, 1361 W m-2 (Kopp, G. and Lean, J. L. (2011), "A new, lower value of
  total solar irradiance: Evidence and climate significance", Geophys. Res.
  Lett. 38, L01706, doi:10.1029/2010GL045777; value from memory).
* Dust extinction of the direct beam along the slant path (Beer-Lambert,
  common practice): ``F mu0 exp(-tau / mu0)`` on a horizontal surface.
* Diffuse sky light: a fraction ``f_d`` of the light removed from the direct
  beam reaches the ground as isotropic sky light,
  ``D_h = f_d F mu0 (1 - exp(-tau / mu0))``; ``f_d = 0.5`` (half of the
  scattered light goes down, conservative single scattering) is common
  practice.  (The coupled Mars column, :mod:`wetcycle.forcing.column`, replaces this rule
  with the delta-Eddington dust layer of :mod:`wetcycle.forcing.scattering`, which puts
  most of the forward-scattered light on the ground; the rule remains for the dry reference
  kernel and its tests.)  A slope sees the fraction ``(1 + cos beta) / 2`` of an isotropic
  sky and ``(1 - cos beta) / 2`` of the surrounding flat ground, which
  reflects the global horizontal flux with the local albedo (isotropic-sky
  transposition of Liu, B. Y. H. and Jordan, R. C. (1960), "The
  interrelationship and characteristic distribution of direct, diffuse and
  total solar radiation", Solar Energy 4(3), 1-19; from memory).
* Downwelling infrared from the atmosphere: a fixed fraction ``f_IR`` of the
  noon insolation on a horizontal surface at the top of the atmosphere,
  ``L_down = f_IR F max(cos(phi - delta), 0)``, with ``f_IR = 0.04``, after
  Kieffer, H. H. et al. (1977), "Thermal and albedo mapping of Mars during the
  Viking primary mission", J. Geophys. Res. 82(28), 4249-4291,
  doi:10.1029/JS082i028p04249 (form and value from memory).  A slope
  receives the sky-view fraction ``(1 + cos beta) / 2`` of it.  There is no
  floor: in polar night this parameterisation gives no sky infrared.

Validity: any latitude, declination and hour angle; optical depth
0 <= tau <= 10; slope 0-90 deg.  Terrain shadowing by distant relief and
infrared from surrounding slopes are not modelled.

Conventions: angles in radians inside the functions (names end in ``_rad``),
hour angle zero at local true solar noon, positive in the afternoon; fluxes
in W m-2.  The NumPy functions here are the reference path; the ``*_kernel``
functions are scalar numba versions used inside the energy-balance kernel.
"""

from __future__ import annotations

import math

import numpy as np
from numba import njit

from ..errors import ValidityError

#: Total solar irradiance at 1 AU [W m-2] (Kopp & Lean 2011, GRL 38, L01706;
#: from memory).
SOLAR_CONSTANT_1AU = 1361.0
#: Default fraction of the extinguished direct beam reaching the ground as
#: diffuse light [-] (common practice: half of the scattered light goes down).
DEFAULT_DIFFUSE_FRACTION = 0.5
#: Default downwelling-infrared fraction of noon insolation [-] (after
#: Kieffer et al. 1977, from memory).
DEFAULT_IR_FRACTION = 0.04
#: Allowed range of the dust optical depth [-].
TAU_RANGE = (0.0, 10.0)


def _check_range(name, value, lo, hi):
    v = np.asarray(value, dtype=float)
    if v.size and (not np.all(np.isfinite(v)) or v.min() < lo or v.max() > hi):
        bad = v[~((v >= lo) & (v <= hi))].ravel()
        raise ValidityError(
            f"{name}: received {bad[0] if bad.size else v}; allowed range is {lo} to {hi}"
        )


def top_of_atmosphere_flux(distance_au, solar_constant=SOLAR_CONSTANT_1AU):
    """Solar flux normal to the beam at the top of the atmosphere.

    Parameters
    ----------
    distance_au : array_like [AU]
        Heliocentric distance, > 0.
    solar_constant : float [W m-2]
        Irradiance at 1 AU (default 1361, Kopp & Lean 2011).

    Returns
    -------
    ndarray [W m-2]
        ``S0 / r**2`` (inverse-square law).

    Examples
    --------
    >>> round(float(top_of_atmosphere_flux(1.5)), 1)
    604.9
    """
    r = np.asarray(distance_au, dtype=float)
    _check_range("distance_au", r, 1e-3, 1e3)
    return solar_constant / r**2


def cos_solar_zenith(latitude_rad, declination_rad, hour_angle_rad):
    """Cosine of the solar zenith angle (negative when the Sun is down).

    Parameters
    ----------
    latitude_rad, declination_rad, hour_angle_rad : array_like [rad]
        Broadcast together.  Hour angle zero at local true solar noon.

    Returns
    -------
    ndarray [-]
        ``sin(phi) sin(delta) + cos(phi) cos(delta) cos(h)``.
    """
    phi = np.asarray(latitude_rad, dtype=float)
    dec = np.asarray(declination_rad, dtype=float)
    h = np.asarray(hour_angle_rad, dtype=float)
    return np.sin(phi) * np.sin(dec) + np.cos(phi) * np.cos(dec) * np.cos(h)


def cos_incidence(latitude_rad, declination_rad, hour_angle_rad, slope_rad, slope_azimuth_rad):
    """Cosine of the angle between the Sun and the normal of a sloped surface.

    Parameters
    ----------
    latitude_rad, declination_rad, hour_angle_rad : array_like [rad]
    slope_rad : array_like [rad]
        Slope from horizontal, 0 to pi/2.
    slope_azimuth_rad : array_like [rad]
        Direction the slope faces (downhill), clockwise from north
        (0 north-facing, pi/2 east-facing).

    Returns
    -------
    ndarray [-]
        Dot product of the unit Sun vector (east, north, up) =
        ``(-cos d sin h, cos phi sin d - sin phi cos d cos h, mu0)`` with the
        normal ``(sin b sin a, sin b cos a, cos b)``.  Negative when the Sun
        is behind the surface.  Not zeroed when the Sun is below the horizon:
        combine with :func:`cos_solar_zenith`.
    """
    phi = np.asarray(latitude_rad, dtype=float)
    dec = np.asarray(declination_rad, dtype=float)
    h = np.asarray(hour_angle_rad, dtype=float)
    b = np.asarray(slope_rad, dtype=float)
    a = np.asarray(slope_azimuth_rad, dtype=float)
    east = -np.cos(dec) * np.sin(h)
    north = np.cos(phi) * np.sin(dec) - np.sin(phi) * np.cos(dec) * np.cos(h)
    up = np.sin(phi) * np.sin(dec) + np.cos(phi) * np.cos(dec) * np.cos(h)
    return east * np.sin(b) * np.sin(a) + north * np.sin(b) * np.cos(a) + up * np.cos(b)


def shortwave_on_slope(latitude_rad, declination_rad, hour_angle_rad, distance_au, tau,
                       slope_rad=0.0, slope_azimuth_rad=0.0, albedo=0.25,
                       diffuse_fraction=DEFAULT_DIFFUSE_FRACTION,
                       solar_constant=SOLAR_CONSTANT_1AU):
    """Direct and diffuse solar flux incident on a sloped surface.

    Method: see the module docstring (Beer-Lambert direct beam, diffuse
    fraction ``f_d`` of the extinguished beam, Liu & Jordan 1960 isotropic
    transposition with ground reflection).

    Parameters
    ----------
    latitude_rad, declination_rad, hour_angle_rad : array_like [rad]
    distance_au : array_like [AU]
    tau : array_like [-]
        Dust optical depth at visible wavelengths, 0-10.
    slope_rad, slope_azimuth_rad : array_like [rad]
        Slope and the direction it faces (clockwise from north).
    albedo : array_like [-]
        Albedo of the surrounding ground (for the reflected part on a slope).
    diffuse_fraction : float [-]
        Fraction of the extinguished beam reaching the ground, 0-1.
    solar_constant : float [W m-2]

    Returns
    -------
    direct, diffuse : ndarray [W m-2]
        Incident (not absorbed) fluxes on the surface; ``diffuse`` includes
        the light reflected onto a slope by the surrounding ground.
    """
    _check_range("tau", tau, *TAU_RANGE)
    _check_range("slope_rad", slope_rad, 0.0, 0.5 * np.pi + 1e-12)
    _check_range("diffuse_fraction", diffuse_fraction, 0.0, 1.0)
    flux = top_of_atmosphere_flux(distance_au, solar_constant)
    mu0 = cos_solar_zenith(latitude_rad, declination_rad, hour_angle_rad)
    cosi = cos_incidence(latitude_rad, declination_rad, hour_angle_rad, slope_rad,
                         slope_azimuth_rad)
    up = mu0 > 0.0
    mu_safe = np.where(up, mu0, 1.0)
    trans = np.where(up, np.exp(-np.asarray(tau, dtype=float) / mu_safe), 0.0)
    beam = flux * trans
    direct = np.where(up & (cosi > 0.0), beam * cosi, 0.0)
    diff_h = np.where(up, diffuse_fraction * flux * mu0 * (1.0 - trans), 0.0)
    glob_h = np.where(up, beam * mu0, 0.0) + diff_h
    cb = np.cos(np.asarray(slope_rad, dtype=float))
    diffuse = diff_h * 0.5 * (1.0 + cb) + np.asarray(albedo, dtype=float) * glob_h * 0.5 * (1.0 - cb)
    return direct, diffuse


def downwelling_infrared(latitude_rad, declination_rad, distance_au, slope_rad=0.0,
                         ir_fraction=DEFAULT_IR_FRACTION, solar_constant=SOLAR_CONSTANT_1AU):
    """Infrared flux emitted by the atmosphere onto the surface.

    Method: ``f_IR F max(cos(phi - delta), 0) (1 + cos beta) / 2``, a fixed
    fraction of the noon top-of-atmosphere insolation on a horizontal surface
    (after Kieffer et al. 1977, JGR 82, 4249; form and ``f_IR = 0.04`` from
    memory), times the sky-view fraction of the slope.

    Parameters
    ----------
    latitude_rad, declination_rad : array_like [rad]
    distance_au : array_like [AU]
    slope_rad : array_like [rad]
    ir_fraction : float [-]
        0-1.
    solar_constant : float [W m-2]

    Returns
    -------
    ndarray [W m-2]
        Incident infrared flux (absorbed fraction = emissivity).
    """
    _check_range("ir_fraction", ir_fraction, 0.0, 1.0)
    flux = top_of_atmosphere_flux(distance_au, solar_constant)
    mu_noon = np.maximum(np.cos(np.asarray(latitude_rad) - np.asarray(declination_rad)), 0.0)
    return ir_fraction * flux * mu_noon * 0.5 * (1.0 + np.cos(np.asarray(slope_rad, dtype=float)))


def daily_mean_toa_insolation(latitude_rad, declination_rad, distance_au,
                              solar_constant=SOLAR_CONSTANT_1AU):
    """Diurnal mean insolation on a horizontal surface at the top of the atmosphere.

    Method: closed-form integral over the hour angle from sunrise to sunset,
    ``Q = F / pi (h0 sin phi sin d + cos phi cos d sin h0)`` with
    ``cos h0 = -tan phi tan d`` clipped to [-1, 1] (polar day h0 = pi, polar
    night h0 = 0); e.g. Berger, A. L. (1978), J. Atmos. Sci. 35, 2362-2367
    (common practice).  Neglects the change of declination and distance
    within the sol.

    Parameters
    ----------
    latitude_rad, declination_rad : array_like [rad]
    distance_au : array_like [AU]
    solar_constant : float [W m-2]

    Returns
    -------
    ndarray [W m-2]
    """
    phi = np.asarray(latitude_rad, dtype=float)
    dec = np.asarray(declination_rad, dtype=float)
    flux = top_of_atmosphere_flux(distance_au, solar_constant)
    with np.errstate(invalid="ignore", divide="ignore"):
        x = -np.tan(phi) * np.tan(dec)
    h0 = np.arccos(np.clip(np.nan_to_num(x, nan=0.0), -1.0, 1.0))
    return flux / np.pi * (h0 * np.sin(phi) * np.sin(dec) + np.cos(phi) * np.cos(dec) * np.sin(h0))


# --------------------------------------------------------------------------------------
# Scalar numba versions (inside the energy-balance kernel)
# --------------------------------------------------------------------------------------
@njit(cache=True, fastmath=True)
def shortwave_kernel(flux, mu0, cosi, tau, cos_slope, albedo, diffuse_fraction):
    """Direct + diffuse + ground-reflected solar flux on a slope [W m-2].

    Scalar numba form of :func:`shortwave_on_slope` taking the precomputed
    top-of-atmosphere flux ``flux`` [W m-2], ``mu0`` and ``cosi`` [-].
    """
    if mu0 <= 0.0:
        return 0.0
    trans = math.exp(-tau / mu0)
    beam = flux * trans
    direct = beam * cosi if cosi > 0.0 else 0.0
    diff_h = diffuse_fraction * flux * mu0 * (1.0 - trans)
    glob_h = beam * mu0 + diff_h
    return direct + 0.5 * (diff_h * (1.0 + cos_slope) + albedo * glob_h * (1.0 - cos_slope))
