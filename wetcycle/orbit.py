"""Planet constants and orbital geometry of the Sun as seen from Mars or Earth.

Mars: solar longitude Ls, heliocentric distance, solar declination, equation
of time and local solar times from the analytic recipe of Allison & McEwen
(2000).  Earth (for analog sites): the low-precision solar coordinates of the
Astronomical Almanac.  The per-step geometry of a run is held by the clock,
:class:`wetcycle.clock.Clock` (built by :func:`wetcycle.clock.make_clock`,
also reachable as ``wetcycle.orbit.make_clock``).

Conventions
-----------
* Times are Julian dates in Terrestrial Time, ``jd_tt`` [d]; use
  :func:`wetcycle.timescales.utc_to_jd_tt` to convert civil UTC time stamps.
* Angles in degrees.  Local times in hours, 0-24.  Longitudes are
  east-positive.
* The equation of time (EOT) is true minus mean solar time:
  LTST = LMST + EOT.  :func:`equation_of_time` returns degrees of hour angle
  (divide by 15 for hours).
* A scalar ``jd_tt`` gives floats, an array gives arrays.  Mars functions
  raise ValidityError outside 1874-2127, Earth ones outside 1900-2100.

References
----------
1. Allison, M. and McEwen, M. (2000), "A post-Pathfinder evaluation of
   areocentric solar coordinates with improved timing recipes for Mars
   seasonal/diurnal climate studies", Planet. Space Sci. 48, 215-235,
   doi:10.1016/S0032-0633(99)00092-6.  (Cited below as AM2000.)
2. Clancy, R. T. et al. (2000), J. Geophys. Res. 105(E4), 9553-9571,
   doi:10.1029/1999JE001089 -- Mars year numbering (MY 1 begins at Ls = 0
   on 1955 April 11).
3. U.S. Naval Observatory / HM Nautical Almanac Office, The Astronomical
   Almanac, Section C, "Low precision formulas for the Sun" (accuracy 0.01 deg,
   1950-2050).
4. Williams, D. R., NASA Planetary Fact Sheets (Mars, Earth), NSSDCA/GSFC.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.optimize import brentq

from .errors import ConfigError, UnknownNameError, ValidityError
from .timescales import J2000

__all__ = [
    "Planet", "MARS", "EARTH", "PLANETS", "get_planet", "J2000",
    "mean_anomaly", "fictitious_mean_sun", "perturbations", "equation_of_center",
    "solar_longitude", "heliocentric_distance", "solar_declination", "equation_of_time",
    "mars_sol_date", "local_mean_solar_time", "local_true_solar_time",
    "mars_year", "jd_tt_at_ls", "mars_solar_coordinates",
    "earth_solar_coordinates",
]

#: Names that moved to :mod:`wetcycle.clock`, still reachable here (imported on first use,
#: so that this module never imports the clock at import time: the clock imports orbit).
_FROM_CLOCK = ("Clock", "make_clock")


def __getattr__(name):
    if name in _FROM_CLOCK:
        from . import clock
        return getattr(clock, name)
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")


# --- Planet constants --------------------------------------------------------------------


@dataclass(frozen=True)
class Planet:
    """Constants of a planet used by the forcing driver.

    Attributes
    ----------
    name : str
    sol_s : float [s]            mean solar day
    year_sols : float [sol]      tropical year in local mean solar days
    year_days : float [d]        tropical year in Earth days (86400 s)
    obliquity_deg : float [deg]
    eccentricity : float [-]
    ls_perihelion_deg : float [deg]  solar longitude at perihelion
    semi_major_axis_au : float [AU]
    gravity_m_s2 : float [m s-2]     mean surface gravity
    mean_surface_pressure_pa : float [Pa]
    scale_height_m : float [m]       atmospheric scale height
    molar_mass_air_kg_mol : float [kg mol-1]  mean molar mass of the air
    """

    name: str
    sol_s: float
    year_sols: float
    year_days: float
    obliquity_deg: float
    eccentricity: float
    ls_perihelion_deg: float
    semi_major_axis_au: float
    gravity_m_s2: float
    mean_surface_pressure_pa: float
    scale_height_m: float
    molar_mass_air_kg_mol: float


#: Mars.  Sol 1.027491251 d and tropical year 686.9726 d: AM2000 abstract;
#: year in sols = 686.9726 / 1.027491251 = 668.59.  Obliquity 25.19 deg,
#: eccentricity 0.0935, gravity 3.71 m s-2, surface pressure 6.36 mbar at mean
#: radius, scale height 11.1 km, mean molecular weight 43.34 g/mol: NASA Mars
#: fact sheet (Williams), from memory.  Ls of perihelion 251.0 deg at J2000 =
#: alpha_FMS - M at J2000 (AM2000 eqs. 16-17; it grows 0.0064 deg per year);
#: a = 1.52367934 AU: AM2000 eq. 25, from memory.
MARS = Planet(
    name="mars",
    sol_s=1.027491251 * 86400.0,
    year_sols=686.9726 / 1.027491251,
    year_days=686.9726,
    obliquity_deg=25.19,
    eccentricity=0.0935,
    ls_perihelion_deg=251.0,
    semi_major_axis_au=1.52367934,
    gravity_m_s2=3.71,
    mean_surface_pressure_pa=636.0,
    scale_height_m=11100.0,
    molar_mass_air_kg_mol=0.04334,
)

#: Earth.  Day 86400 s by definition; tropical year 365.2422 d, obliquity
#: 23.44 deg, eccentricity 0.0167, solar ecliptic longitude at perihelion
#: ~283 deg (early January): common practice / Astronomical Almanac, from
#: memory.  Standard gravity 9.80665 m s-2 (CGPM 1901), standard sea-level
#: pressure 101325 Pa (ISO 2533), scale height 8.5 km and molar mass of dry
#: air 28.97 g/mol: NASA Earth fact sheet (Williams), from memory.
EARTH = Planet(
    name="earth",
    sol_s=86400.0,
    year_sols=365.2422,
    year_days=365.2422,
    obliquity_deg=23.44,
    eccentricity=0.0167,
    ls_perihelion_deg=283.0,
    semi_major_axis_au=1.00000261,
    gravity_m_s2=9.80665,
    mean_surface_pressure_pa=101325.0,
    scale_height_m=8500.0,
    molar_mass_air_kg_mol=0.02897,
)

#: Registry of planets by name.
PLANETS = {"mars": MARS, "earth": EARTH}


def get_planet(name):
    """Look a planet up by name (``"mars"`` or ``"earth"``); a Planet passes through."""
    if isinstance(name, Planet):
        return name
    try:
        return PLANETS[str(name).lower()]
    except KeyError:
        raise UnknownNameError(
            f"planet: {name!r} is not known; allowed: {', '.join(sorted(PLANETS))}"
        ) from None


# --- Mars: Allison & McEwen (2000) -------------------------------------------------------

#: Span of the AM2000 fit of the fictitious mean sun, calendar years 1874-2127 (AM2000
#: abstract) [JD]: 1874-01-01 to 2128-01-01.
AM2000_JD_RANGE = (2405524.5, 2498295.5)

#: Mars mean solar day [d] (AM2000 abstract).
_SOL_DAYS = 1.027491251
#: Mean solar midnight at the Mars prime meridian (Airy-0) on 2000 Jan 06 00:00 UTC
#: (AM2000 abstract), expressed in TT: TT - UTC = 32 s + 32.184 s in January 2000.
_MSD_EPOCH_JD_TT = 2451549.5 + 64.184 / 86400.0
#: Mars Sol Date of that midnight (AM2000 sec. 5; sol count from 1873 Dec 29), from memory.
_MSD_AT_EPOCH = 44796.0

#: Planetary perturbation terms of Ls, AM2000 Table 5 / eq. 18 (from memory):
#: amplitude A [deg], period tau [Julian years], phase phi [deg].
_PBS_TERMS = np.array([
    (0.0071, 2.2353, 49.409),
    (0.0057, 2.7543, 168.173),
    (0.0039, 1.1177, 191.837),
    (0.0037, 15.7866, 21.736),
    (0.0021, 2.1354, 15.704),
    (0.0020, 2.4694, 95.528),
    (0.0018, 32.8493, 49.095),
])

_MY1_START_JD = 2435208.5  # 1955 April 11 (Clancy et al. 2000); used only to number years


def _mars_dt(jd_tt, name="jd_tt"):
    """Days from J2000 (TT) [d]; ValidityError outside the AM2000 span (NaN included)."""
    jd = np.asarray(jd_tt, dtype=float)
    lo, hi = AM2000_JD_RANGE
    bad = ~((jd >= lo) & (jd <= hi))
    if np.any(bad):
        raise ValidityError(
            f"{name}: {float(jd[bad].flat[0] if jd.ndim else jd)!r} is not allowed; allowed: "
            f"JD {lo} to {hi} (years 1874-2127, the span of the Allison & McEwen (2000) fit)"
        )
    return jd - J2000


def _out(x, like):
    return float(x) if np.ndim(like) == 0 else x


# Each formula is written once, of dt [d from J2000] or Ls [rad]: the public functions and the
# one-pass mars_solar_coordinates() share them and agree bit for bit.

def _mean_anomaly_of_dt(dt):
    return 19.3870 + 0.52402075 * dt                                    # AM2000 eq. 16


def _fms_of_dt(dt):
    return 270.3863 + 0.52403840 * dt - 4.0e-13 * dt * dt               # AM2000 eq. 17


def _pbs_of_dt(dt):
    a, tau, phi = _PBS_TERMS.T                                          # AM2000 eq. 18
    arg = np.deg2rad(0.985626 * np.asarray(dt)[..., None] / tau + phi)
    return np.sum(a * np.cos(arg), axis=-1)


def _eoc_of_dt(dt):
    dt = np.asarray(dt)                                                 # AM2000 eq. 19
    m = np.deg2rad(_mean_anomaly_of_dt(dt))
    eoc = ((10.691 + 3.0e-7 * dt) * np.sin(m) + 0.623 * np.sin(2 * m) + 0.050 * np.sin(3 * m)
           + 0.005 * np.sin(4 * m) + 0.0005 * np.sin(5 * m))
    return eoc + _pbs_of_dt(dt)


def _distance_of_dt(dt):
    m = np.deg2rad(_mean_anomaly_of_dt(np.asarray(dt)))                 # AM2000 eq. 25
    return MARS.semi_major_axis_au * (1.00436 - 0.09309 * np.cos(m) - 0.004336 * np.cos(2 * m)
                                      - 0.00031 * np.cos(3 * m) - 0.00003 * np.cos(4 * m))


def _declination_of_ls(ls_rad, planetographic=False):
    dec = np.rad2deg(np.arcsin(0.42565 * np.sin(ls_rad)))
    if planetographic:
        dec = dec + 0.25 * np.sin(ls_rad)
    return dec


def _eot_of_ls(ls_rad, eoc):
    return (2.861 * np.sin(2 * ls_rad) - 0.071 * np.sin(4 * ls_rad) + 0.002 * np.sin(6 * ls_rad)
            - eoc)                                                      # AM2000 eq. 20


def _year_of_unwrapped(ls_unwrapped):
    return np.floor(ls_unwrapped / 360.0).astype(int) - _my_offset() + 1


def mean_anomaly(jd_tt):
    """Mars mean anomaly M [deg], AM2000 eq. 16: M = 19.3870 + 0.52402075 dt (dt days from J2000).

    Parameters
    ----------
    jd_tt : float or array [d]  Julian date (TT), years 1874-2127.

    Returns
    -------
    float or ndarray [deg]  (not reduced to 0-360)
    """
    return _out(_mean_anomaly_of_dt(_mars_dt(jd_tt)), jd_tt)


def fictitious_mean_sun(jd_tt):
    """Right ascension of the Mars fictitious mean sun alpha_FMS [deg], not reduced.

    AM2000 eq. 17 and abstract: alpha_FMS = 270.3863 + 0.52403840 dt - 4e-13 dt^2
    (dt in days from J2000, TT), a fit to the equinox and solstice passages of
    1874-2127.

    Parameters
    ----------
    jd_tt : float or array [d]

    Returns
    -------
    float or ndarray [deg]
    """
    return _out(_fms_of_dt(_mars_dt(jd_tt)), jd_tt)


def perturbations(jd_tt):
    """Planetary perturbations of Ls, PBS [deg], AM2000 eq. 18 with the 7 terms of Table 5.

    PBS = sum_i A_i cos(0.985626 deg * dt / tau_i + phi_i), dt days from J2000
    (0.985626 deg/d = 360 deg per Julian year).

    Parameters
    ----------
    jd_tt : float or array [d]

    Returns
    -------
    float or ndarray [deg]   (|PBS| < 0.03 deg)
    """
    return _out(_pbs_of_dt(_mars_dt(jd_tt)), jd_tt)


def equation_of_center(jd_tt):
    """Equation of centre nu - M [deg] including perturbations, AM2000 eq. 19.

    nu - M = (10.691 + 3.0e-7 dt) sin M + 0.623 sin 2M + 0.050 sin 3M
             + 0.005 sin 4M + 0.0005 sin 5M + PBS

    Parameters
    ----------
    jd_tt : float or array [d]

    Returns
    -------
    float or ndarray [deg]
    """
    return _out(_eoc_of_dt(_mars_dt(jd_tt)), jd_tt)


def _mars_ls_unwrapped(jd_tt):
    """alpha_FMS + (nu - M) [deg], continuous and increasing (AM2000 eq. 19 before reduction)."""
    dt = _mars_dt(jd_tt)
    return _fms_of_dt(dt) + _eoc_of_dt(dt)


def solar_longitude(jd_tt):
    """Areocentric solar longitude Ls [deg, 0-360), AM2000 eq. 19: Ls = alpha_FMS + (nu - M).

    Parameters
    ----------
    jd_tt : float or array [d]  Julian date (TT), years 1874-2127.

    Returns
    -------
    float or ndarray [deg]

    Examples
    --------
    >>> 0.0 <= solar_longitude(2451545.0) < 360.0
    True
    """
    return _out(np.mod(_mars_ls_unwrapped(jd_tt), 360.0), jd_tt)


def heliocentric_distance(jd_tt):
    """Mars-Sun distance r [AU], AM2000 eq. 25 (from memory).

    r = 1.52367934 (1.00436 - 0.09309 cos M - 0.004336 cos 2M - 0.00031 cos 3M
        - 0.00003 cos 4M)

    Parameters
    ----------
    jd_tt : float or array [d]

    Returns
    -------
    float or ndarray [AU]   (1.381 at perihelion, 1.666 at aphelion)
    """
    return _out(_distance_of_dt(_mars_dt(jd_tt)), jd_tt)


def solar_declination(jd_tt, planetographic=False):
    """Solar declination at Mars [deg], AM2000 eq. 19/sec. 3.

    Planetocentric: delta = arcsin(0.42565 sin Ls), 0.42565 = sin(25.19 deg);
    planetographic (for planetographic latitudes): add 0.25 deg sin Ls (AM2000).

    Parameters
    ----------
    jd_tt : float or array [d]
    planetographic : bool
        False (default) for a spherical planet and planetocentric latitudes.

    Returns
    -------
    float or ndarray [deg], within +-25.19 (planetocentric)
    """
    ls = np.deg2rad(np.mod(_mars_ls_unwrapped(jd_tt), 360.0))
    return _out(_declination_of_ls(ls, planetographic), jd_tt)


def equation_of_time(jd_tt):
    """Mars equation of time EOT = LTST - LMST [deg of hour angle; divide by 15 for hours].

    AM2000 eq. 20: EOT = 2.861 sin 2Ls - 0.071 sin 4Ls + 0.002 sin 6Ls - (nu - M).

    Parameters
    ----------
    jd_tt : float or array [d]

    Returns
    -------
    float or ndarray [deg]   (range about -12 to +12 deg, i.e. about +-50 min)
    """
    dt = _mars_dt(jd_tt)
    eoc = _eoc_of_dt(dt)
    ls = np.deg2rad(np.mod(_fms_of_dt(dt) + eoc, 360.0))
    return _out(_eot_of_ls(ls, eoc), jd_tt)


def mars_sol_date(jd_tt):
    """Mars Sol Date [sol]: mean solar days at the prime meridian, AM2000 sec. 5.

    MSD = (jd_tt - JD_TT(2000 Jan 06 00:00 UTC)) / 1.027491251 + 44796.0; the
    epoch is a mean solar midnight at Airy-0 (AM2000 abstract), so the integer
    part changes at prime-meridian mean midnight.

    Parameters
    ----------
    jd_tt : float or array [d]

    Returns
    -------
    float or ndarray [sol]
    """
    _mars_dt(jd_tt)
    return _out((np.asarray(jd_tt, dtype=float) - _MSD_EPOCH_JD_TT) / _SOL_DAYS + _MSD_AT_EPOCH, jd_tt)


def local_mean_solar_time(jd_tt, east_longitude_deg):
    """Mars local mean solar time LMST [h, 0-24): 24 frac(MSD) + east longitude / 15.

    Parameters
    ----------
    jd_tt : float or array [d]
    east_longitude_deg : float or array [deg], east-positive; broadcast with jd_tt.

    Returns
    -------
    float or ndarray [h]
    """
    msd = np.asarray(mars_sol_date(jd_tt))
    lon = np.asarray(east_longitude_deg, dtype=float)
    res = np.mod(24.0 * np.mod(msd, 1.0) + lon / 15.0, 24.0)
    return float(res) if res.ndim == 0 else res


def local_true_solar_time(jd_tt, east_longitude_deg):
    """Mars local true solar time LTST [h, 0-24): LMST + EOT/15 (AM2000 eq. 23).

    Parameters
    ----------
    jd_tt : float or array [d]
    east_longitude_deg : float or array [deg], east-positive.

    Returns
    -------
    float or ndarray [h]   (12 h = Sun on the local meridian)
    """
    lmst = np.asarray(local_mean_solar_time(jd_tt, east_longitude_deg))
    res = np.mod(lmst + np.asarray(equation_of_time(jd_tt)) / 15.0, 24.0)
    return float(res) if res.ndim == 0 else res


def _my_offset():
    """Integer n0 with unwrapped Ls = 360 n0 at the start of Mars Year 1."""
    return int(np.round(_mars_ls_unwrapped(_MY1_START_JD) / 360.0))


def mars_year(jd_tt):
    """Mars year number (Clancy et al. 2000: MY 1 starts at Ls = 0 on 1955 April 11).

    Parameters
    ----------
    jd_tt : float or array [d]

    Returns
    -------
    int or ndarray of int
    """
    my = _year_of_unwrapped(_mars_ls_unwrapped(jd_tt))
    return int(my) if np.ndim(jd_tt) == 0 else my


def mars_solar_coordinates(jd_tt):
    """Every Mars solar quantity of a time series in one pass (AM2000 eqs. 16-20, 25).

    Same numbers, bit for bit, as :func:`solar_longitude`,
    :func:`heliocentric_distance`, :func:`solar_declination`,
    :func:`equation_of_time` and :func:`mars_year` called one by one, but the
    mean anomaly, the perturbations and the equation of centre are evaluated
    once instead of up to five times -- the form to use for long series (a
    run's clock).

    Parameters
    ----------
    jd_tt : float or array [d]
        Julian date (TT), years 1874-2127.

    Returns
    -------
    ls_deg [deg, 0-360), distance_au [AU], declination_deg [deg] (planetocentric),
    eot_deg [deg], mars_year [-] (int) : ndarrays shaped like ``jd_tt``

    Raises
    ------
    ValidityError  for dates outside 1874-2127.
    """
    dt = _mars_dt(jd_tt)
    eoc = _eoc_of_dt(dt)
    ls_unwrapped = _fms_of_dt(dt) + eoc
    ls_deg = np.mod(ls_unwrapped, 360.0)
    ls_rad = np.deg2rad(ls_deg)
    return (ls_deg, _distance_of_dt(dt), _declination_of_ls(ls_rad), _eot_of_ls(ls_rad, eoc),
            _year_of_unwrapped(ls_unwrapped))


# --- Earth: Astronomical Almanac low-precision Sun ---------------------------------------

def _earth_terms(jd_tt):
    n = np.asarray(jd_tt, dtype=float) - J2000
    bad = ~(np.abs(n) <= 36525.0)  # NaN included
    if np.any(bad):
        raise ValidityError(f"jd_tt: {float(n[bad].flat[0] if n.ndim else n) + J2000!r} is not "
                            f"allowed; allowed: JD {J2000 - 36525.0} to {J2000 + 36525.0} (1900-2100, "
                            "the span accepted for the Almanac low-precision Sun)")
    L = 280.460 + 0.9856474 * n          # mean longitude incl. aberration [deg]
    g = np.deg2rad(357.528 + 0.9856003 * n)  # mean anomaly
    lam_unwrapped = L + 1.915 * np.sin(g) + 0.020 * np.sin(2 * g)
    return n, L, g, lam_unwrapped


def earth_solar_coordinates(jd_tt):
    """Sun as seen from Earth, Astronomical Almanac low-precision formulas (Section C).

    n = JD - 2451545.0; L = 280.460 + 0.9856474 n; g = 357.528 + 0.9856003 n;
    lambda = L + 1.915 sin g + 0.020 sin 2g; R = 1.00014 - 0.01671 cos g
    - 0.00014 cos 2g; eps = 23.439 - 4e-7 n; alpha = atan2(cos eps sin lambda,
    cos lambda); delta = arcsin(sin eps sin lambda); EOT = L - alpha (from
    memory).  Accuracy 0.01 deg for 1950-2050; accepted here 1900-2100.

    The ecliptic longitude of the Sun, lambda, is Earth's analogue of Ls (0 at
    the March equinox, 90 at the June solstice); the clock reports it as ``ls_deg``.

    Parameters
    ----------
    jd_tt : float or array [d]

    Returns
    -------
    lambda_deg [deg, 0-360), distance_au [AU], declination_deg [deg], eot_deg [deg]
    """
    n, L, g, lam_u = _earth_terms(jd_tt)
    lam = np.deg2rad(lam_u)
    eps = np.deg2rad(23.439 - 4.0e-7 * n)
    r = 1.00014 - 0.01671 * np.cos(g) - 0.00014 * np.cos(2 * g)
    alpha = np.rad2deg(np.arctan2(np.cos(eps) * np.sin(lam), np.cos(lam)))
    dec = np.rad2deg(np.arcsin(np.sin(eps) * np.sin(lam)))
    eot = np.mod(L - alpha + 180.0, 360.0) - 180.0
    return np.mod(lam_u, 360.0), r, dec, eot


# --- Inverse: time of a given Ls ---------------------------------------------------------

def _unwrapped_longitude(planet, jd_tt):
    if planet.name == "mars":
        return _mars_ls_unwrapped(jd_tt)
    return _earth_terms(jd_tt)[3]


def _solve_longitude(planet, target_unwrapped, guess_jd):
    rate = 360.0 / planet.year_days
    f = lambda t: float(_unwrapped_longitude(planet, t)) - target_unwrapped  # noqa: E731
    half = 0.2 * planet.year_days  # Ls leads/lags the mean longitude by < 0.2 yr
    lo, hi = guess_jd - half, guess_jd + half
    guess = guess_jd - f(guess_jd) / rate
    lo, hi = min(lo, guess - half), max(hi, guess + half)
    return brentq(f, lo, hi, xtol=1e-9, rtol=1e-15)


def jd_tt_at_ls(ls_deg, mars_year=None, after_jd_tt=None, planet="mars"):
    """Julian date (TT) at which the Sun reaches a solar longitude.

    Inverts the (monotonic, unreduced) Ls of AM2000 eq. 19 -- or the Earth
    ecliptic longitude -- with Brent's method (scipy.optimize.brentq,
    tolerance 1e-9 d).

    Parameters
    ----------
    ls_deg : float [deg], 0 <= Ls < 360
    mars_year : int, optional
        Mars year (Clancy et al. 2000 numbering); Mars only.
    after_jd_tt : float [d], optional
        Return the first time at or after this date instead.  Exactly one of
        ``mars_year`` / ``after_jd_tt`` must be given (Earth: ``after_jd_tt``).
    planet : str or Planet

    Returns
    -------
    float [d]
    """
    planet = get_planet(planet)
    if isinstance(ls_deg, bool) or not isinstance(ls_deg, (int, float, np.integer, np.floating)) \
            or not (np.isfinite(ls_deg) and 0.0 <= ls_deg < 360.0):
        raise ConfigError(f"ls_deg: {ls_deg!r} is not allowed; allowed: 0 <= Ls < 360 deg")
    if (mars_year is None) == (after_jd_tt is None):
        raise ConfigError("jd_tt_at_ls: give exactly one of mars_year or after_jd_tt")
    if mars_year is not None:
        if planet.name != "mars":
            raise ConfigError(f"mars_year: {mars_year!r} given for planet {planet.name!r}; use after_jd_tt")
        if isinstance(mars_year, bool) or not isinstance(mars_year, (int, float, np.integer, np.floating)) \
                or not np.isfinite(mars_year) or int(mars_year) != mars_year:
            raise ConfigError(f"mars_year: {mars_year!r} is not allowed; allowed: a whole Mars year number")
        target = 360.0 * (_my_offset() + int(mars_year) - 1) + ls_deg
        guess = _MY1_START_JD + (int(mars_year) - 1 + ls_deg / 360.0) * planet.year_days
        return _solve_longitude(planet, target, guess)
    u0 = float(_unwrapped_longitude(planet, after_jd_tt))
    target = u0 + np.mod(ls_deg - u0, 360.0)
    guess = after_jd_tt + (target - u0) / 360.0 * planet.year_days
    return _solve_longitude(planet, target, guess)
