"""Surface pressure from elevation and a seasonal CO2 cycle; periodic tables in Ls.

Method
------
Isothermal hydrostatic atmosphere: p(z, Ls) = p_ref * exp(-z / H) * f(Ls),
with p_ref the annual-mean pressure at the reference level z = 0 (the datum),
H the atmospheric scale height and f(Ls) a periodic table of relative
pressure (annual mean = 1) that represents the seasonal condensation and
sublimation of CO2 at the poles.  The exponential law is the textbook
isothermal barometric formula (e.g. Wallace & Hobbs 2006, Atmospheric
Science, eq. 3.29); the scale height and datum pressure of Mars are from the
NASA Mars fact sheet (see :mod:`wetcycle.orbit`).

References
----------
1. Wallace, J. M. and Hobbs, P. V. (2006), Atmospheric Science: An
   Introductory Survey, 2nd ed., Academic Press, sec. 3.2.
"""

from __future__ import annotations

import numpy as np

from ..errors import ConfigError, ValidityError
from ..orbit import MARS

__all__ = ["PeriodicTable", "DEMO_CO2_CYCLE", "interp_periodic", "surface_pressure",
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


#: INVENTED demonstration table of relative surface pressure against Ls (mean over Ls = 1).
#: Its shape only imitates the qualitative textbook picture of the Mars CO2 cycle -- a deep
#: minimum in southern winter (Ls ~ 150), a main maximum in southern spring/summer
#: (Ls ~ 260) and a secondary one near Ls ~ 50 -- with values made up for the demo.
#: Not a measurement; replace with a table of your own for real work.
DEMO_CO2_CYCLE = PeriodicTable(
    ls_deg=[0, 30, 60, 90, 120, 150, 180, 210, 240, 270, 300, 330],
    values=[1.02, 1.04, 1.04, 1.00, 0.93, 0.89, 0.93, 1.00, 1.06, 1.07, 1.03, 1.00],
    name="DEMO_CO2_CYCLE (invented)",
    lower=0.0,
)


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
        Relative pressure against Ls (annual mean ~ 1); None for no seasonal
        cycle.  :data:`DEMO_CO2_CYCLE` is an invented example.

    Returns
    -------
    ndarray [Pa], shape (n_steps,) + shape(elevation_m)
    """
    ls = np.asarray(ls_deg, dtype=float)
    p0 = np.asarray(pressure_at_elevation(elevation_m, p_ref_pa, scale_height_m))
    f = np.ones_like(ls) if seasonal is None else np.asarray(seasonal(ls))
    return f.reshape(f.shape + (1,) * p0.ndim) * p0
