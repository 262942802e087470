"""Planet constants, orbital geometry and the run clock.

Mars: solar longitude Ls, heliocentric distance, solar declination, equation
of time and local solar times from the analytic recipe of Allison & McEwen
(2000).  Earth (for analog sites): the low-precision solar coordinates of the
Astronomical Almanac.  A run's :class:`Clock` holds the per-step geometry for
either planet behind one interface.

Conventions
-----------
* Times are Julian dates in Terrestrial Time, ``jd_tt`` [d]; use
  :func:`utc_to_jd_tt` to convert civil UTC time stamps.
* Angles in degrees in the public functions, except the clock's
  ``declination_rad`` and :meth:`Clock.hour_angle_rad` (radians, ready for
  trigonometry).  Local times in hours, 0-24.  Longitudes are east-positive.
* The equation of time (EOT) is true minus mean solar time:
  LTST = LMST + EOT.  :func:`equation_of_time` returns degrees; the clock
  stores hours (``equation_of_time_h`` = EOT [deg] / 15).

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

import datetime as _dt
from dataclasses import dataclass, field

import numpy as np
from scipy.optimize import brentq

from .errors import ConfigError, UnknownNameError, ValidityError

__all__ = [
    "Planet", "MARS", "EARTH", "PLANETS", "get_planet",
    "J2000", "utc_to_jd_tt", "jd_tt_to_utc",
    "mean_anomaly", "fictitious_mean_sun", "perturbations", "equation_of_center",
    "solar_longitude", "heliocentric_distance", "solar_declination", "equation_of_time",
    "mars_sol_date", "local_mean_solar_time", "local_true_solar_time",
    "mars_year", "jd_tt_at_ls",
    "earth_solar_coordinates",
    "Clock", "make_clock",
]

# --------------------------------------------------------------------------------------
# Planet constants
# --------------------------------------------------------------------------------------


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


# --------------------------------------------------------------------------------------
# Time scales
# --------------------------------------------------------------------------------------

#: J2000.0 epoch, 2000 January 1 12:00 TT [JD].
J2000 = 2451545.0
_UNIX_EPOCH_JD = 2440587.5
#: TT - TAI = 32.184 s exactly (IAU 1991).
_TT_MINUS_TAI_S = 32.184

#: TAI - UTC [s] from each date on (IERS Bulletin C), from memory.  No leap second
#: has been announced after 2017-01-01 as far as this table knows; later dates use 37 s.
_LEAP_TABLE = (
    ("1972-01-01", 10), ("1972-07-01", 11), ("1973-01-01", 12), ("1974-01-01", 13),
    ("1975-01-01", 14), ("1976-01-01", 15), ("1977-01-01", 16), ("1978-01-01", 17),
    ("1979-01-01", 18), ("1980-01-01", 19), ("1981-07-01", 20), ("1982-07-01", 21),
    ("1983-07-01", 22), ("1985-07-01", 23), ("1988-01-01", 24), ("1990-01-01", 25),
    ("1991-01-01", 26), ("1992-07-01", 27), ("1993-07-01", 28), ("1994-07-01", 29),
    ("1996-01-01", 30), ("1997-07-01", 31), ("1999-01-01", 32), ("2006-01-01", 33),
    ("2009-01-01", 34), ("2012-07-01", 35), ("2015-07-01", 36), ("2017-01-01", 37),
)
_LEAP_JD = np.array(
    [(_dt.date.fromisoformat(d) - _dt.date(1970, 1, 1)).days + _UNIX_EPOCH_JD for d, _ in _LEAP_TABLE]
)
_LEAP_S = np.array([s for _, s in _LEAP_TABLE], dtype=float)


def _to_datetime64(value):
    """Parse ISO-8601 strings / datetimes / datetime64 into datetime64[ns] (UTC, naive)."""
    arr = np.atleast_1d(np.asarray(value))
    if arr.dtype.kind == "M":
        return arr.astype("datetime64[ns]")
    out = np.empty(arr.shape, dtype="datetime64[ns]")
    for i, v in enumerate(arr.flat):
        if isinstance(v, _dt.datetime):
            d = v
        else:
            try:
                d = _dt.datetime.fromisoformat(str(v).strip().replace("Z", "+00:00"))
            except ValueError:
                raise ValidityError(
                    f"time: {str(v)!r} is not an ISO-8601 UTC time stamp (e.g. 2024-01-31T06:00:00Z)"
                ) from None
        if d.tzinfo is not None:
            d = d.astimezone(_dt.timezone.utc).replace(tzinfo=None)
        out.flat[i] = np.datetime64(d, "ns")
    return out


def utc_to_jd_tt(utc):
    """Convert UTC time stamps to Julian dates in Terrestrial Time.

    TT = UTC + (TAI - UTC) + 32.184 s, with TAI - UTC from the leap-second table
    of IERS Bulletin C.

    Parameters
    ----------
    utc : str, datetime, numpy.datetime64 or array of these
        ISO-8601 strings ("2024-01-31T06:00:00Z"; no offset means UTC).
        Valid from 1972-01-01 (start of the leap-second era).

    Returns
    -------
    ndarray [d]
        Julian date (TT), same shape as the input (at least 1-D).
    """
    t = _to_datetime64(utc)
    jd_utc = (t - np.datetime64("1970-01-01T00:00:00", "ns")) / np.timedelta64(1, "D") + _UNIX_EPOCH_JD
    if np.any(jd_utc < _LEAP_JD[0]):
        raise ValidityError(
            f"time: {np.min(t)} UTC is before 1972-01-01, where the leap-second table starts"
        )
    idx = np.searchsorted(_LEAP_JD, jd_utc, side="right") - 1
    return jd_utc + (_LEAP_S[idx] + _TT_MINUS_TAI_S) / 86400.0


def jd_tt_to_utc(jd_tt):
    """Inverse of :func:`utc_to_jd_tt` [datetime64[ns], UTC] (leap seconds themselves not representable)."""
    jd_tt = np.atleast_1d(np.asarray(jd_tt, dtype=float))
    guess = jd_tt - (37.0 + _TT_MINUS_TAI_S) / 86400.0
    idx = np.clip(np.searchsorted(_LEAP_JD, guess, side="right") - 1, 0, None)
    jd_utc = jd_tt - (_LEAP_S[idx] + _TT_MINUS_TAI_S) / 86400.0
    ns = np.round((jd_utc - _UNIX_EPOCH_JD) * 86400e9).astype("int64")
    return np.datetime64("1970-01-01T00:00:00", "ns") + ns.astype("timedelta64[ns]")


def _tt_minus_utc_days(jd_tt):
    jd_tt = np.asarray(jd_tt, dtype=float)
    idx = np.clip(np.searchsorted(_LEAP_JD, jd_tt, side="right") - 1, 0, None)
    return (_LEAP_S[idx] + _TT_MINUS_TAI_S) / 86400.0


# --------------------------------------------------------------------------------------
# Mars: Allison & McEwen (2000)
# --------------------------------------------------------------------------------------

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
    jd = np.asarray(jd_tt, dtype=float)
    lo, hi = AM2000_JD_RANGE
    bad = ~((jd >= lo) & (jd <= hi))
    if np.any(bad):
        raise ValidityError(
            f"{name}: {jd[bad].flat[0] if jd.ndim else float(jd)!r} is outside the span of the "
            f"Allison & McEwen (2000) fit, JD {lo}-{hi} (years 1874-2127)"
        )
    return jd - J2000


def _out(x, like):
    return float(x) if np.ndim(like) == 0 else x


def mean_anomaly(jd_tt):
    """Mars mean anomaly M [deg], AM2000 eq. 16: M = 19.3870 + 0.52402075 dt (dt days from J2000).

    Parameters
    ----------
    jd_tt : float or array [d]  Julian date (TT), years 1874-2127.

    Returns
    -------
    float or ndarray [deg]  (not reduced to 0-360)
    """
    dt = _mars_dt(jd_tt)
    return _out(19.3870 + 0.52402075 * dt, jd_tt)


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
    dt = _mars_dt(jd_tt)
    return _out(270.3863 + 0.52403840 * dt - 4.0e-13 * dt * dt, jd_tt)


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
    dt = np.asarray(_mars_dt(jd_tt))
    a, tau, phi = _PBS_TERMS.T
    arg = np.deg2rad(0.985626 * dt[..., None] / tau + phi)
    return _out(np.sum(a * np.cos(arg), axis=-1), jd_tt)


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
    dt = np.asarray(_mars_dt(jd_tt))
    m = np.deg2rad(19.3870 + 0.52402075 * dt)
    eoc = ((10.691 + 3.0e-7 * dt) * np.sin(m) + 0.623 * np.sin(2 * m) + 0.050 * np.sin(3 * m)
           + 0.005 * np.sin(4 * m) + 0.0005 * np.sin(5 * m))
    return _out(eoc + np.asarray(perturbations(jd_tt)), jd_tt)


def _mars_ls_unwrapped(jd_tt):
    """alpha_FMS + (nu - M) [deg], continuous and increasing (AM2000 eq. 19 before reduction)."""
    return np.asarray(fictitious_mean_sun(jd_tt)) + np.asarray(equation_of_center(jd_tt))


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
    m = np.deg2rad(np.asarray(mean_anomaly(jd_tt)))
    r = MARS.semi_major_axis_au * (1.00436 - 0.09309 * np.cos(m) - 0.004336 * np.cos(2 * m)
                                   - 0.00031 * np.cos(3 * m) - 0.00003 * np.cos(4 * m))
    return _out(r, jd_tt)


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
    ls = np.deg2rad(np.asarray(solar_longitude(jd_tt)))
    dec = np.rad2deg(np.arcsin(0.42565 * np.sin(ls)))
    if planetographic:
        dec = dec + 0.25 * np.sin(ls)
    return _out(dec, jd_tt)


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
    ls = np.deg2rad(np.asarray(solar_longitude(jd_tt)))
    eot = (2.861 * np.sin(2 * ls) - 0.071 * np.sin(4 * ls) + 0.002 * np.sin(6 * ls)
           - np.asarray(equation_of_center(jd_tt)))
    return _out(eot, jd_tt)


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
    my = np.floor(_mars_ls_unwrapped(jd_tt) / 360.0).astype(int) - _my_offset() + 1
    return int(my) if np.ndim(jd_tt) == 0 else my


# --------------------------------------------------------------------------------------
# Earth: Astronomical Almanac low-precision Sun
# --------------------------------------------------------------------------------------

def _earth_terms(jd_tt):
    n = np.asarray(jd_tt, dtype=float) - J2000
    if np.any(np.abs(n) > 36525.0 * 1.0):
        raise ValidityError(
            "jd_tt: outside 1900-2100, where the Astronomical Almanac low-precision Sun is used"
        )
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


# --------------------------------------------------------------------------------------
# Inverse: time of a given Ls
# --------------------------------------------------------------------------------------

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
    if not (np.isfinite(ls_deg) and 0.0 <= ls_deg < 360.0):
        raise ConfigError(f"ls_deg: {ls_deg!r} is not allowed; allowed: 0 <= Ls < 360 deg")
    if (mars_year is None) == (after_jd_tt is None):
        raise ConfigError("jd_tt_at_ls: give exactly one of mars_year or after_jd_tt")
    if mars_year is not None:
        if planet.name != "mars":
            raise ConfigError(f"mars_year: {mars_year!r} given for planet {planet.name!r}; use after_jd_tt")
        if isinstance(mars_year, bool) or int(mars_year) != mars_year:
            raise ConfigError(f"mars_year: {mars_year!r} is not an integer")
        target = 360.0 * (_my_offset() + int(mars_year) - 1) + ls_deg
        guess = _MY1_START_JD + (int(mars_year) - 1 + ls_deg / 360.0) * planet.year_days
        return _solve_longitude(planet, target, guess)
    u0 = float(_unwrapped_longitude(planet, after_jd_tt))
    target = u0 + np.mod(ls_deg - u0, 360.0)
    guess = after_jd_tt + (target - u0) / 360.0 * planet.year_days
    return _solve_longitude(planet, target, guess)


# --------------------------------------------------------------------------------------
# The clock
# --------------------------------------------------------------------------------------

def _readonly(a):
    a = np.ascontiguousarray(a)
    a.setflags(write=False)
    return a


@dataclass(frozen=True, eq=False)
class Clock:
    """Per-step time and solar geometry of a run (arrays of length ``n_steps``).

    Values are at the *start* of each step.  Build with :func:`make_clock`.

    Attributes
    ----------
    planet : Planet
    steps_per_sol : int
    dt_s : float [s]              time step = planet.sol_s / steps_per_sol
    time_s : ndarray [s]          seconds since the start of the run
    sol : ndarray of int          sol index since the start (0, 1, ...)
    sol_fraction : ndarray [-]    fraction of the sol elapsed, 0 <= f < 1
    jd_tt : ndarray [d]           Julian date (TT)
    ls_deg : ndarray [deg]        solar longitude (Earth: ecliptic longitude of the Sun)
    year : ndarray of int         Mars year (Clancy et al. 2000); Earth: UTC calendar year
    declination_rad : ndarray [rad]  solar declination (planetocentric)
    distance_au : ndarray [AU]    planet-Sun distance
    equation_of_time_h : ndarray [h]  true minus mean solar time
    mean_solar_time_h : ndarray [h]   mean solar time at the prime meridian
    """

    planet: Planet
    steps_per_sol: int
    dt_s: float
    time_s: np.ndarray = field(repr=False)
    sol: np.ndarray = field(repr=False)
    sol_fraction: np.ndarray = field(repr=False)
    jd_tt: np.ndarray = field(repr=False)
    ls_deg: np.ndarray = field(repr=False)
    year: np.ndarray = field(repr=False)
    declination_rad: np.ndarray = field(repr=False)
    distance_au: np.ndarray = field(repr=False)
    equation_of_time_h: np.ndarray = field(repr=False)
    mean_solar_time_h: np.ndarray = field(repr=False)

    @property
    def n_steps(self):
        """Number of time steps."""
        return self.time_s.size

    @property
    def n_sols(self):
        """Number of whole sols covered."""
        return self.n_steps // self.steps_per_sol

    def local_mean_solar_time(self, east_longitude_deg):
        """Local mean solar time [h, 0-24) per step; shape (n_steps,) + shape(longitude)."""
        lon = np.asarray(east_longitude_deg, dtype=float)
        msth = self.mean_solar_time_h.reshape((-1,) + (1,) * lon.ndim)
        return np.mod(msth + lon / 15.0, 24.0)

    def local_true_solar_time(self, east_longitude_deg):
        """Local true solar time [h, 0-24) per step; shape (n_steps,) + shape(longitude).

        LTST = LMST + EOT (AM2000 eq. 23 for Mars; the same definition for Earth).
        """
        lon = np.asarray(east_longitude_deg, dtype=float)
        eot = self.equation_of_time_h.reshape((-1,) + (1,) * lon.ndim)
        return np.mod(self.local_mean_solar_time(lon) + eot, 24.0)

    def hour_angle_rad(self, east_longitude_deg):
        """Solar hour angle [rad] in [-pi, pi): 0 at local noon, negative in the morning."""
        ltst = self.local_true_solar_time(east_longitude_deg)
        return np.mod((ltst - 12.0) * (np.pi / 12.0) + np.pi, 2 * np.pi) - np.pi


def _positive_int(name, value):
    if isinstance(value, bool) or not isinstance(value, (int, np.integer)) or value < 1:
        raise ConfigError(f"{name}: {value!r} is not allowed; allowed: a whole number >= 1")
    return int(value)


def _geometry(planet, jd_tt):
    """(ls_deg, declination_deg, distance_au, eot_deg, mean solar time at lon 0 [h], year)."""
    if planet.name == "mars":
        ls = solar_longitude(jd_tt)
        return (ls, solar_declination(jd_tt), heliocentric_distance(jd_tt),
                equation_of_time(jd_tt), 24.0 * np.mod(mars_sol_date(jd_tt), 1.0),
                mars_year(jd_tt))
    lam, r, dec, eot = earth_solar_coordinates(jd_tt)
    jd_utc = jd_tt - _tt_minus_utc_days(jd_tt)  # UT1 ~ UTC to < 0.9 s
    mst = 24.0 * np.mod(jd_utc + 0.5, 1.0)
    years = jd_tt_to_utc(jd_tt).astype("datetime64[Y]").astype(int) + 1970
    return lam, dec, r, eot, mst, years


def make_clock(planet="mars", *, steps_per_sol, n_sols=None, n_years=None,
               start_ls=None, year=None, start_jd_tt=None, start_utc=None,
               align_to_midnight=True):
    """Build the clock of a run.

    The start is either a solar longitude in a year (Mars: ``start_ls`` in Mars
    year ``year``, default Ls 0 of MY 36; Earth: the first time the Sun's
    ecliptic longitude equals ``start_ls`` after 1 January of calendar year
    ``year``) or a date (``start_jd_tt`` or ``start_utc``).  With
    ``align_to_midnight`` the start moves forward (< 1 sol) to the next mean
    solar midnight at longitude 0, so ``sol_fraction`` equals prime-meridian
    mean solar time / 24.

    Parameters
    ----------
    planet : "mars", "earth" or Planet
    steps_per_sol : int, >= 1
        Whole number of steps per sol; ``dt_s = planet.sol_s / steps_per_sol`` [s].
    n_sols : int, >= 1, optional
    n_years : float, > 0, optional
        Run length in years, rounded to whole sols (round(n_years * year_sols)).
        Exactly one of ``n_sols`` / ``n_years``.
    start_ls : float [deg], optional, 0 <= Ls < 360
    year : int, optional
    start_jd_tt : float [d], optional
    start_utc : str or datetime64, optional   ISO-8601 UTC.
    align_to_midnight : bool

    Returns
    -------
    Clock

    Raises
    ------
    ConfigError  for a bad or inconsistent argument.

    Examples
    --------
    >>> c = make_clock("mars", steps_per_sol=24, n_sols=2)
    >>> c.n_steps, round(c.dt_s, 3)
    (48, 3698.969)
    """
    planet = get_planet(planet)
    steps_per_sol = _positive_int("steps_per_sol", steps_per_sol)
    if (n_sols is None) == (n_years is None):
        raise ConfigError("clock: give exactly one of n_sols or n_years")
    if n_years is not None:
        if isinstance(n_years, bool) or not np.isfinite(n_years) or n_years <= 0:
            raise ConfigError(f"n_years: {n_years!r} is not allowed; allowed: a number > 0")
        n_sols = max(1, int(round(float(n_years) * planet.year_sols)))
    n_sols = _positive_int("n_sols", n_sols)

    given = [k for k, v in (("start_jd_tt", start_jd_tt), ("start_utc", start_utc)) if v is not None]
    if start_ls is not None or year is not None:
        given.append("start_ls/year")
    if len(given) > 1:
        raise ConfigError(f"clock start: give one of start_ls/year, start_jd_tt, start_utc (got {', '.join(given)})")
    if start_utc is not None:
        jd0 = float(utc_to_jd_tt(start_utc)[0])
    elif start_jd_tt is not None:
        jd0 = float(start_jd_tt)
    elif planet.name == "mars":
        my = 36 if year is None else year
        jd0 = jd_tt_at_ls(0.0 if start_ls is None else start_ls, mars_year=my, planet=planet)
    else:
        if year is None:
            raise ConfigError("clock start: an Earth clock needs start_utc, start_jd_tt or year (with start_ls)")
        if isinstance(year, bool) or int(year) != year:
            raise ConfigError(f"year: {year!r} is not an integer")
        jan1 = float(utc_to_jd_tt(f"{int(year):04d}-01-01T00:00:00")[0])
        jd0 = jd_tt_at_ls(0.0 if start_ls is None else start_ls, after_jd_tt=jan1, planet=planet)
    if not np.isfinite(jd0):
        raise ConfigError(f"start_jd_tt: {jd0!r} is not a finite Julian date")

    sol_days = planet.sol_s / 86400.0
    if align_to_midnight:
        mst0 = float(_geometry(planet, jd0)[4])
        jd0 += (np.mod(24.0 - mst0, 24.0) / 24.0) * sol_days

    n_steps = n_sols * steps_per_sol
    dt_s = planet.sol_s / steps_per_sol
    idx = np.arange(n_steps)
    time_s = idx * dt_s
    jd = jd0 + time_s / 86400.0
    ls, dec, r, eot, mst, yr = _geometry(planet, jd)
    return Clock(
        planet=planet,
        steps_per_sol=steps_per_sol,
        dt_s=dt_s,
        time_s=_readonly(time_s),
        sol=_readonly(idx // steps_per_sol),
        sol_fraction=_readonly((idx % steps_per_sol) / steps_per_sol),
        jd_tt=_readonly(jd),
        ls_deg=_readonly(np.asarray(ls, dtype=float)),
        year=_readonly(np.asarray(yr, dtype=int)),
        declination_rad=_readonly(np.deg2rad(dec)),
        distance_au=_readonly(np.asarray(r, dtype=float)),
        equation_of_time_h=_readonly(np.asarray(eot, dtype=float) / 15.0),
        mean_solar_time_h=_readonly(np.asarray(mst, dtype=float)),
    )
