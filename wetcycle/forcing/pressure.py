"""Surface pressure from elevation and a seasonal CO2 cycle; periodic tables in Ls.

Method
------
Isothermal hydrostatic atmosphere: p(z, Ls) = p_ref * exp(-z / H) * f(Ls),
with p_ref the mean pressure at the reference level z = 0 (the areoid), H the
pressure scale height and f(Ls) the relative seasonal cycle (mean over Ls 1)
of the condensation and sublimation of CO2 at the poles.  The exponential law
is the textbook isothermal barometric formula (e.g. Wallace & Hobbs 2006,
Atmospheric Science, eq. 3.29).

Default on Mars (:class:`LanderPressureCycle`): the landers' measured cycles
carried to the site's elevation and latitude (the empirical form of Withers,
P. (2012), Space Sci. Rev. 170, 837-860, read as an abstract).  The diurnal
pressure tide (a few per cent) is not modelled.

References
----------
1. Wallace, J. M. and Hobbs, P. V. (2006), Atmospheric Science: An
   Introductory Survey, 2nd ed., Academic Press, sec. 3.2.
2. Hess, S. L. et al. (1980), Geophys. Res. Lett. 7, 197-200 (Viking daily-mean pressures).
"""

from __future__ import annotations

import numpy as np

from ..errors import ConfigError, ValidityError
from ..orbit import MARS

__all__ = ["PeriodicTable", "HarmonicCycle", "VIKING1_PRESSURE_CYCLE", "VIKING1_MEAN_PRESSURE_PA",
           "VIKING1_ELEVATION_M", "LANDER_SCALE_HEIGHT_M", "LanderPressureCycle",
           "VIKING2_PRESSURE_CYCLE", "interp_periodic", "surface_pressure",
           "pressure_at_elevation"]


def interp_periodic(x, xp, fp, period=360.0):
    """Linear interpolation in a periodic table.

    Parameters
    ----------
    x : float or array     abscissa, e.g. Ls [deg]; any real value (reduced mod period)
    xp : array             table abscissae, strictly increasing, within [0, period)
    fp : array             table values
    period : float         period of the abscissa (360 deg for Ls)

    Returns
    -------
    float or ndarray, linear between neighbouring table points, wrapping from the
    last point to the first.

    Raises
    ------
    ValidityError   if ``x`` holds a non-finite value (NaN Ls would otherwise pass
                    through as NaN forcing), or the table is not strictly increasing
                    within [0, period) with values matching it.
    """
    xp = np.asarray(xp, dtype=float)
    fp = np.asarray(fp, dtype=float)
    if (xp.ndim != 1 or fp.shape != xp.shape or xp.size < 1 or not np.all(np.isfinite(xp))
            or xp[0] < 0.0 or xp[-1] >= period or np.any(np.diff(xp) <= 0.0)):
        raise ValidityError(
            f"periodic table abscissae {xp.tolist()} not allowed: strictly increasing in [0, {period:g}), "
            f"one value each (got {fp.size} values)")
    xa = np.asarray(x, dtype=float)
    if not np.all(np.isfinite(xa)):
        raise ValidityError("periodic interpolation: abscissa (e.g. Ls) has non-finite values; allowed: finite")
    xw = np.concatenate([xp[-1:] - period, xp, xp[:1] + period])
    fw = np.concatenate([fp[-1:], fp, fp[:1]])
    res = np.interp(np.mod(xa, period), xw, fw)
    return float(res) if np.ndim(x) == 0 else res


class PeriodicTable:
    """A validated table of values against Ls, interpolated periodically (linear).

    Parameters
    ----------
    ls_deg : sequence [deg], strictly increasing, 0 <= Ls < 360, at least 2 points
    values : sequence, finite, same length
    name : str   used in error messages
    lower, upper : float, optional   allowed range of the values (inclusive)
    """

    def __init__(self, ls_deg, values, name="table", lower=None, upper=None):
        ls = np.asarray(ls_deg, dtype=float)
        v = np.asarray(values, dtype=float)
        if ls.ndim != 1 or v.shape != ls.shape or ls.size < 2:
            raise ConfigError(
                f"{name}: needs matching 1-D Ls and value lists of >= 2 points (got {ls.shape} and {v.shape})"
            )
        if not (np.all(np.isfinite(ls)) and ls[0] >= 0.0 and ls[-1] < 360.0 and np.all(np.diff(ls) > 0)):
            raise ConfigError(f"{name}: Ls points {ls.tolist()} are not allowed; allowed: strictly increasing in [0, 360)")
        bad = ~np.isfinite(v)
        if lower is not None:
            bad |= v < lower
        if upper is not None:
            bad |= v > upper
        if np.any(bad):
            i = int(np.flatnonzero(bad)[0])
            raise ConfigError(
                f"{name}: value {float(v[i])!r} at Ls {ls[i]:g} is not allowed; allowed: finite, "
                f"{'-inf' if lower is None else lower} to {'inf' if upper is None else upper}"
            )
        self.name = name
        self.ls_deg = ls
        self.values = v
        self.ls_deg.setflags(write=False)
        self.values.setflags(write=False)

    def __call__(self, ls_deg):
        """Interpolated value(s) at Ls [deg]."""
        return interp_periodic(ls_deg, self.ls_deg, self.values, 360.0)

    def annual_mean_over_ls(self):
        """Mean over Ls of the piecewise-linear table (trapezoid rule, periodic)."""
        x = np.append(self.ls_deg, self.ls_deg[0] + 360.0)
        y = np.append(self.values, self.values[0])
        return float(np.trapezoid(y, x) / 360.0)


class HarmonicCycle:
    """A periodic function of Ls given by harmonics, ``1 + sum_k a_k cos(k Ls) + b_k sin(k Ls)``.

    Parameters
    ----------
    cos_coeffs, sin_coeffs : sequence [-]   a_1.., b_1.. (same length)
    name : str                              recorded in results
    """

    def __init__(self, cos_coeffs, sin_coeffs, name):
        a = np.asarray(cos_coeffs, dtype=float)
        b = np.asarray(sin_coeffs, dtype=float)
        if a.ndim != 1 or a.shape != b.shape or not np.all(np.isfinite(a)) or not np.all(np.isfinite(b)):
            raise ConfigError(f"{name}: harmonic coefficients must be two finite lists of equal length")
        if np.sum(np.abs(a)) + np.sum(np.abs(b)) >= 1.0:
            raise ConfigError(f"{name}: harmonics would make the cycle reach zero; allowed sum of |a|, |b| < 1")
        self.cos_coeffs, self.sin_coeffs, self.name = a, b, name

    def __call__(self, ls_deg):
        x = np.deg2rad(np.asarray(ls_deg, dtype=float))
        if not np.all(np.isfinite(x)):
            raise ValidityError("seasonal cycle: Ls has non-finite values; allowed: finite")
        k = np.arange(1, self.cos_coeffs.size + 1)
        kx = np.multiply.outer(x, k)
        out = 1.0 + np.cos(kx) @ self.cos_coeffs + np.sin(kx) @ self.sin_coeffs
        return float(out) if np.ndim(ls_deg) == 0 else out

    def annual_mean_over_ls(self):
        """Mean over Ls (the harmonics average to zero): 1."""
        return 1.0


#: Seasonal cycles of the daily-mean surface pressure of Viking Landers 1 and 2, relative to
#: their means over Ls: two harmonics each, fitted by least squares to the 15-degree-Ls bin
#: means of the Viking Lander daily-mean pressure record (NASA PDS data set
#: VL1/VL2-M-MET-4-DAILY-AVG-PRESSURE-V1.0; Hess, S. L. et al. (1980), Geophys. Res. Lett. 7,
#: 197, doi:10.1029/GL007i003p00197).  The fits are this project's; the bin means were read
#: from a public binned copy of the PDS file (all years, 1977 storms included), so the
#: coefficients stand until re-derived from the PDS file itself.  Every VL1 bin lies within
#: 0.9 % of its fit, every VL2 bin within 1.9 % (``tests/test_pressure.py``).
VIKING1_PRESSURE_CYCLE = HarmonicCycle([0.0583, -0.0483], [-0.0676, 0.0464],
                                       "Viking Lander 1 daily-mean pressure, two-harmonic fit")
VIKING2_PRESSURE_CYCLE = HarmonicCycle([0.0623, -0.0499], [-0.0823, 0.0454],
                                       "Viking Lander 2 daily-mean pressure, two-harmonic fit")
#: Means over Ls of the landers' daily-mean pressures for those fits [Pa].  VL1's time-weighted
#: annual mean, 794.2 Pa, matches the 7.942 mbar quoted for VL1 by Taylor et al. (2010),
#: J. Geophys. Res. 115, E00E15 (read in a citing text).
VIKING1_MEAN_PRESSURE_PA = 797.2
VIKING2_MEAN_PRESSURE_PA = 873.3
#: Lander elevations above the MOLA areoid [m] (-3.637 and -4.495 km; read in a secondary
#: source, consistent within 10 m with Withers (2012), Space Sci. Rev. 170, 837, from memory)
#: and latitudes [deg N] (22.27, 47.97).
VIKING1_ELEVATION_M = -3637.0
VIKING2_ELEVATION_M = -4495.0
VIKING1_LATITUDE = 22.27
VIKING2_LATITUDE = 47.97
#: Pressure scale height for carrying a lander cycle to other elevations [m]: 10.5 km, which
#: carries the landers' means to Phoenix's (8.33 mbar at -4.13 km, Taylor et al. 2010 as quoted)
#: and to Gale's (842 Pa in MY32 from the rover team's daily reports, -4.4 km) within 1.5 %
#: (this project's choice; R T / g = 10.9 km at 210 K).
LANDER_SCALE_HEIGHT_M = 10500.0


class LanderPressureCycle:
    """Seasonal surface pressure at any site from the two Viking Landers' cycles.

    ``p(Ls, lat, z) = sum_k w_k(lat) p_k exp(-(z - z_k) / H) f_k(Ls)`` over the two landers,
    with ``w_VL2 = clip((|lat| - 22.27) / (47.97 - 22.27), 0, 1)``, ``w_VL1 = 1 - w_VL2``:
    the larger seasonal swing measured at VL2 applies poleward of 48 degrees, VL1's
    equatorward of 22 degrees, linearly between (this project's interpolation; the same in
    both hemispheres, where the south has no lander record).  Each lander's own site gets its
    own fit back.  The empirical form (a lander's cycle carried by a scale height) is that of
    Withers (2012, Space Sci. Rev. 170, 837; read as an abstract).

    Validity: elevations within 10 scale heights of the areoid.
    """

    name = "Viking Lander 1 and 2 daily-mean pressure cycles carried to the site (latitude blend)"

    def __init__(self, scale_height_m=LANDER_SCALE_HEIGHT_M, seasonal=True):
        if not (np.isfinite(scale_height_m) and 1000.0 <= scale_height_m <= 50000.0):
            raise ConfigError(f"scale_height: {scale_height_m!r} m not allowed; allowed 1000 to 50000 m")
        self.scale_height_m = float(scale_height_m)
        self.seasonal = bool(seasonal)

    def __call__(self, ls_deg, latitude_deg, elevation_m):
        """Pressure [Pa] on ``[step, cell]`` for Ls ``[step]`` and cells ``[cell]``."""
        ls = np.asarray(ls_deg, dtype=float)
        lat = np.abs(np.asarray(latitude_deg, dtype=float))
        z = np.asarray(elevation_m, dtype=float)
        h = self.scale_height_m
        bad = ~(np.abs(z) <= 10.0 * h)
        if np.any(bad):
            raise ValidityError(f"elevation: {float(z[bad].flat[0])!r} m is outside +-{10 * h:g} m (10 scale heights)")
        w2 = np.clip((lat - VIKING1_LATITUDE) / (VIKING2_LATITUDE - VIKING1_LATITUDE), 0.0, 1.0)
        p1 = VIKING1_MEAN_PRESSURE_PA * np.exp(-(z - VIKING1_ELEVATION_M) / h)
        p2 = VIKING2_MEAN_PRESSURE_PA * np.exp(-(z - VIKING2_ELEVATION_M) / h)
        if self.seasonal:
            f1 = np.asarray(VIKING1_PRESSURE_CYCLE(ls))[:, None]
            f2 = np.asarray(VIKING2_PRESSURE_CYCLE(ls))[:, None]
        else:
            f1 = f2 = np.ones((ls.size, 1))
        return (1.0 - w2) * p1 * f1 + w2 * p2 * f2


def pressure_at_elevation(elevation_m, p_ref_pa=MARS.mean_surface_pressure_pa, scale_height_m=MARS.scale_height_m):
    """Annual-mean surface pressure at an elevation, p_ref exp(-z/H) [Pa].

    Parameters
    ----------
    elevation_m : float or array [m]
        Height above the reference level (Mars: the areoid datum).  Allowed
        -10 H to +10 H (the isothermal law is a rough guide far from the datum).
    p_ref_pa : float [Pa], > 0
        Annual-mean pressure at the reference level; default 636 Pa (Mars, NASA fact sheet).
    scale_height_m : float [m], > 0
        Default 11.1 km (Mars, NASA fact sheet).

    Returns
    -------
    float or ndarray [Pa]

    Examples
    --------
    >>> round(pressure_at_elevation(11100.0, 636.0, 11100.0), 2)
    233.97
    """
    if not (np.isfinite(p_ref_pa) and p_ref_pa > 0):
        raise ConfigError(f"p_ref_pa: {p_ref_pa!r} is not allowed; allowed: > 0 Pa")
    if not (np.isfinite(scale_height_m) and scale_height_m > 0):
        raise ConfigError(f"scale_height_m: {scale_height_m!r} is not allowed; allowed: > 0 m")
    z = np.asarray(elevation_m, dtype=float)
    bad = ~(np.abs(z) <= 10.0 * scale_height_m)
    if np.any(bad):
        raise ValidityError(
            f"elevation_m: {float(z[bad].flat[0]) if z.ndim else float(z)!r} m is outside "
            f"+-{10 * scale_height_m:g} m (10 scale heights)"
        )
    p = p_ref_pa * np.exp(-z / scale_height_m)
    return float(p) if np.ndim(elevation_m) == 0 else p


def surface_pressure(ls_deg, elevation_m, p_ref_pa=MARS.mean_surface_pressure_pa,
                     scale_height_m=MARS.scale_height_m, seasonal=None):
    """Surface pressure from elevation and a seasonal cycle, p_ref exp(-z/H) f(Ls) [Pa].

    Parameters
    ----------
    ls_deg : float or array [deg]
        Solar longitude per step, shape (n_steps,) (e.g. ``clock.ls_deg``).
    elevation_m : float or array [m]
        Elevation per cell, shape (n_cells,) or scalar.
    p_ref_pa, scale_height_m : float
        See :func:`pressure_at_elevation`.
    seasonal : PeriodicTable or None
        Relative pressure against Ls (mean over Ls 1): a :class:`PeriodicTable`,
        a :class:`HarmonicCycle` (e.g. :data:`VIKING1_PRESSURE_CYCLE`), or None
        for no seasonal cycle.

    Returns
    -------
    ndarray [Pa], shape (n_steps,) + shape(elevation_m)
    """
    ls = np.asarray(ls_deg, dtype=float)
    p0 = np.asarray(pressure_at_elevation(elevation_m, p_ref_pa, scale_height_m))
    f = np.ones_like(ls) if seasonal is None else np.asarray(seasonal(ls))
    return f.reshape(f.shape + (1,) * p0.ndim) * p0
