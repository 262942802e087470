"""The run clock: time steps and the Sun's geometry at each step.

One :class:`Clock` per run, built once by :func:`make_clock`: it fixes the
planet, the time step ``dt_s`` (a whole fraction of the sol) and, for every
step, the time, the solar longitude, declination, distance and equation of
time.  Every later component takes its time grid from the clock and never
infers a time step from an index.

Method
------
Step times are Julian dates in TT, ``jd0 + k dt``.  Mars geometry at each
step is Allison & McEwen (2000) through
:func:`wetcycle.orbit.mars_solar_coordinates`; Earth geometry is the
Astronomical Almanac low-precision Sun
(:func:`wetcycle.orbit.earth_solar_coordinates`), with mean solar time at
Greenwich from UTC (UT1 taken as UTC: |UT1 - UTC| < 0.9 s by definition of
UTC).  The per-step series are computed once, as whole arrays.

Conventions
-----------
Values are at the *start* of each step.  ``declination_rad`` and
:meth:`Clock.hour_angle_rad` are in radians (ready for trigonometry); the
equation of time and solar times in hours.  Longitudes are east-positive.

References
----------
1. Allison, M. and McEwen, M. (2000), Planet. Space Sci. 48, 215-235,
   doi:10.1016/S0032-0633(99)00092-6 (AM2000).
2. Clancy, R. T. et al. (2000), J. Geophys. Res. 105(E4), 9553-9571,
   doi:10.1029/1999JE001089 (Mars year numbering).
3. The Astronomical Almanac, Section C, low-precision formulas for the Sun.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from .errors import ConfigError, shown
from .orbit import (Planet, earth_solar_coordinates, get_planet, jd_tt_at_ls, mars_sol_date,
                    mars_solar_coordinates)
from .timescales import jd_tt_to_utc, tt_minus_utc_days, utc_to_jd_tt

__all__ = ["Clock", "LocalTimes", "make_clock"]


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

    def local_mean_solar_time(self, east_longitude_deg, steps=slice(None)):
        """Local mean solar time [h, 0-24) per step; shape (n_steps,) + shape(longitude).

        ``steps`` (a slice) computes those steps only, the same numbers as slicing the whole.
        """
        lon = np.asarray(east_longitude_deg, dtype=float)
        msth = self.mean_solar_time_h[steps].reshape((-1,) + (1,) * lon.ndim)
        return np.mod(msth + lon / 15.0, 24.0)

    def local_true_solar_time(self, east_longitude_deg, steps=slice(None)):
        """Local true solar time [h, 0-24) per step; shape (n_steps,) + shape(longitude).

        LTST = LMST + EOT (AM2000 eq. 23 for Mars; the same definition for Earth).  ``steps``
        (a slice) computes those steps only, the same numbers as slicing the whole.
        """
        lon = np.asarray(east_longitude_deg, dtype=float)
        eot = self.equation_of_time_h[steps].reshape((-1,) + (1,) * lon.ndim)
        return np.mod(self.local_mean_solar_time(lon, steps) + eot, 24.0)

    def local_times(self, east_longitude_deg):
        """The local true solar times of every step at these longitudes, computed when sliced
        (:class:`LocalTimes`)."""
        return LocalTimes(self, np.asarray(east_longitude_deg, dtype=float))

    def hour_angle_rad(self, east_longitude_deg):
        """Solar hour angle [rad] in [-pi, pi): 0 at local noon, negative in the morning."""
        ltst = self.local_true_solar_time(east_longitude_deg)
        return np.mod((ltst - 12.0) * (np.pi / 12.0) + np.pi, 2 * np.pi) - np.pi


@dataclass(frozen=True, eq=False)
class LocalTimes:
    """Local true solar time [h] of every step of ``clock`` at ``longitude_deg``, built on demand.

    ``lt[i0:i1]`` is ``clock.local_true_solar_time(longitude_deg)[i0:i1]`` bit for bit, computed
    for those steps only; ``np.asarray(lt)`` builds the whole.  A run streamed in blocks thus never
    holds the whole (a Mars year at 48 steps per sol over 180 cells: 46 MB, 0.8 CPU-s to build).
    """

    clock: Clock
    longitude_deg: np.ndarray

    @property
    def shape(self):
        return (self.clock.n_steps,) + self.longitude_deg.shape

    def __len__(self):
        return self.clock.n_steps

    def __getitem__(self, key):
        if not (isinstance(key, slice) and key.step in (None, 1)):
            raise TypeError("LocalTimes: index with a slice of consecutive steps (or use np.asarray)")
        return self.clock.local_true_solar_time(self.longitude_deg, key)

    def __array__(self, dtype=None, copy=None):
        a = self.clock.local_true_solar_time(self.longitude_deg)
        return a if dtype is None else a.astype(dtype)


def _positive_int(name, value):
    if isinstance(value, bool) or not isinstance(value, (int, np.integer)) or value < 1:
        raise ConfigError(f"{name}: {shown(value)} is not allowed; allowed: a whole number >= 1")
    return int(value)


def _finite_float(name, value, allowed):
    try:
        x = float(value)
    except (TypeError, ValueError):
        x = float("nan")
    if isinstance(value, bool) or not np.isfinite(x):
        raise ConfigError(f"{name}: {shown(value)} is not allowed; allowed: {allowed}")
    return x


def _mean_solar_time_h(planet, jd_tt):
    """Mean solar time at longitude 0 [h, 0-24): Mars 24 frac(MSD) (AM2000); Earth UT (= UTC)."""
    if planet.name == "mars":
        return 24.0 * np.mod(mars_sol_date(jd_tt), 1.0)
    jd_utc = jd_tt - tt_minus_utc_days(jd_tt)  # UT1 ~ UTC to < 0.9 s
    return 24.0 * np.mod(jd_utc + 0.5, 1.0)


def _geometry(planet, jd_tt):
    """Per-step (ls_deg, declination_deg, distance_au, eot_deg, mean solar time [h], year).

    Each series is computed once from the array ``jd_tt`` (no per-step loop).
    """
    if planet.name == "mars":
        ls, r, dec, eot, years = mars_solar_coordinates(jd_tt)
    else:
        ls, r, dec, eot = earth_solar_coordinates(jd_tt)
        years = jd_tt_to_utc(jd_tt).astype("datetime64[Y]").astype(int) + 1970
    return ls, dec, r, eot, _mean_solar_time_h(planet, jd_tt), years


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
        Mars year (Clancy et al. 2000 numbering) or Earth calendar year.
    start_jd_tt : float [d], optional   Julian date (TT).
    start_utc : str or datetime64, optional   ISO-8601 UTC.
    align_to_midnight : bool

    Returns
    -------
    Clock

    Raises
    ------
    ConfigError
        For a bad or inconsistent argument.
    ValidityError
        For a run outside the dates the geometry supports: Mars 1874-2127
        (AM2000), Earth 1960-2100 (UTC from ERFA; Almanac Sun).

    Examples
    --------
    >>> c = make_clock("mars", steps_per_sol=24, n_sols=2)
    >>> c.n_steps, round(c.dt_s, 3)
    (48, 3698.969)
    """
    planet = get_planet(planet)
    steps_per_sol = _positive_int("steps_per_sol", steps_per_sol)
    if (n_sols is None) == (n_years is None):
        raise ConfigError(f"clock length: got n_sols={n_sols!r}, n_years={n_years!r}; "
                          "allowed: exactly one of them")
    if n_years is not None:
        n_years = _finite_float("n_years", n_years, "a number > 0")
        if n_years <= 0:
            raise ConfigError(f"n_years: {n_years!r} is not allowed; allowed: a number > 0")
        n_sols = max(1, int(round(n_years * planet.year_sols)))
    n_sols = _positive_int("n_sols", n_sols)

    given = [k for k, v in (("start_jd_tt", start_jd_tt), ("start_utc", start_utc)) if v is not None]
    if start_ls is not None or year is not None:
        given.append("start_ls/year")
    if len(given) > 1:
        raise ConfigError(f"clock start: give one of start_ls/year, start_jd_tt, start_utc (got {', '.join(given)})")
    if start_utc is not None:
        jd0 = float(utc_to_jd_tt(start_utc)[0])
    elif start_jd_tt is not None:
        jd0 = _finite_float("start_jd_tt", start_jd_tt, "a finite Julian date (TT) [d]")
    elif planet.name == "mars":
        my = 36 if year is None else year
        jd0 = jd_tt_at_ls(0.0 if start_ls is None else start_ls, mars_year=my, planet=planet)
    else:
        if year is None:
            raise ConfigError("clock start: an Earth clock needs start_utc, start_jd_tt or year (with start_ls)")
        if _finite_float("year", year, "a whole calendar year") != int(year):
            raise ConfigError(f"year: {year!r} is not allowed; allowed: a whole calendar year")
        jan1 = float(utc_to_jd_tt(f"{int(year):04d}-01-01T00:00:00")[0])
        jd0 = jd_tt_at_ls(0.0 if start_ls is None else start_ls, after_jd_tt=jan1, planet=planet)

    sol_days = planet.sol_s / 86400.0
    if align_to_midnight:
        mst0 = float(_mean_solar_time_h(planet, jd0))
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
