"""Prescribed forcing: analytic diurnal/seasonal sinusoids and lab-chamber programmes.

Both produce a :class:`ForcingSeries` -- plain NumPy arrays in SI units on the
time grid of the caller's clock -- the same object the file readers of
:mod:`wetcycle.forcing.files` return, so the phase kernel does not care where
its forcing came from.

Chamber programme (TOML, this project's format)
-----------------------------------------------
::

    name = "my run"              # optional
    pressure_Pa = 700.0          # chamber pressure unless a segment sets one
    after_end = "error"          # or "repeat" (cycle) or "hold" (keep last values)

    [[segment]]
    mode = "hold"                # "hold": constant; "ramp": linear from the end
    duration_s = 3600.0          #   of the previous segment to these values
    temperature_K = 263.15
    relative_humidity = 0.10     # or vapor_pressure_Pa = 0.5 (same key in all segments)
    # pressure_Pa = 650.0        # optional per segment

The first segment must be a hold (a ramp needs a previous value).
"""

from __future__ import annotations

import tomllib
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from ..errors import ConfigError, InputDataError, shown

__all__ = ["ForcingSeries", "Sinusoid", "prescribed_forcing", "Segment", "ChamberProgramme",
           "chamber_programme_from_dict", "load_chamber_programme", "RANGES"]

#: Allowed ranges of forcing values (inclusive), used by every reader and generator.
#: Temperature 50-400 K covers Mars and Earth surfaces with margin; vapour pressure up to
#: 10 kPa (saturation at 319 K) and surface pressure up to 200 kPa.
RANGES = {
    "temperature_K": (50.0, 400.0),
    "vapor_pressure_Pa": (0.0, 1.0e4),
    "relative_humidity": (0.0, 1.0),
    "surface_pressure_Pa": (1.0e-3, 2.0e5),
}
_UNITS = {"temperature_K": "K", "vapor_pressure_Pa": "Pa", "relative_humidity": "fraction",
          "surface_pressure_Pa": "Pa"}


def _check_range(name, values, where="", exc=ConfigError):
    lo, hi = RANGES[name]
    a = np.asarray(values, dtype=float)
    bad = ~((a >= lo) & (a <= hi))
    if np.any(bad):
        idx = np.argwhere(bad)[0] if a.ndim else ()
        v = float(a[tuple(idx)]) if a.ndim else float(a)
        at = f" at index {tuple(int(i) for i in idx)}" if a.ndim else ""
        raise exc(f"{where}{name}: {shown(v)} {_UNITS[name]}{at} is not allowed; allowed: {lo:g}-{hi:g} {_UNITS[name]}")
    return a


def _ro(a):
    a = np.array(a, dtype=float)
    a.setflags(write=False)
    return a


@dataclass(frozen=True, eq=False)
class ForcingSeries:
    """Forcing on a time grid, SI units; validated on construction.

    Arrays have shape (n_steps,) or (n_steps, n_cells); exactly one of
    ``vapor_pressure_Pa`` and ``relative_humidity`` is set.

    Attributes
    ----------
    time_s : ndarray [s]                 seconds since the clock start, shape (n_steps,)
    temperature_K : ndarray [K]          50-400 K
    vapor_pressure_Pa : ndarray or None [Pa]   0-1e4 Pa
    relative_humidity : ndarray or None [-]    w.r.t. liquid water, 0-1
    surface_pressure_Pa : ndarray or None [Pa]
    """

    time_s: np.ndarray
    temperature_K: np.ndarray
    vapor_pressure_Pa: np.ndarray | None = None
    relative_humidity: np.ndarray | None = None
    surface_pressure_Pa: np.ndarray | None = None

    def __post_init__(self):
        t = _ro(self.time_s)
        if t.ndim != 1 or t.size == 0 or not np.all(np.isfinite(t)) or np.any(np.diff(t) <= 0):
            raise ConfigError("time_s: must be a non-empty, finite, strictly increasing 1-D array [s]")
        object.__setattr__(self, "time_s", t)
        if (self.vapor_pressure_Pa is None) == (self.relative_humidity is None):
            raise ConfigError("forcing: give exactly one of vapor_pressure_Pa or relative_humidity")
        for name in ("temperature_K", "vapor_pressure_Pa", "relative_humidity", "surface_pressure_Pa"):
            v = getattr(self, name)
            if v is None:
                continue
            a = _ro(v)
            if a.ndim == 0:
                a = _ro(np.full(t.shape, float(a)))
            if a.shape[0] != t.size or a.ndim > 2:
                raise ConfigError(f"{name}: shape {a.shape} does not fit {t.size} time steps; "
                                  "allowed: (n_steps,) or (n_steps, n_cells)")
            _check_range(name, a)
            object.__setattr__(self, name, a)

    @property
    def n_steps(self):
        return self.time_s.size

    def vapor_pressure(self):
        """Vapour pressure [Pa]: as given, or RH x p_liq(T) (Murphy & Koop 2005 eq. 10)."""
        if self.vapor_pressure_Pa is not None:
            return self.vapor_pressure_Pa
        from ..water import saturation_vapor_pressure_liquid
        return self.relative_humidity * saturation_vapor_pressure_liquid(self.temperature_K)

    def relative_humidity_liquid(self):
        """Relative humidity w.r.t. liquid water [-]: as given, or e / p_liq(T)."""
        if self.relative_humidity is not None:
            return self.relative_humidity
        from ..water import saturation_vapor_pressure_liquid
        return self.vapor_pressure_Pa / saturation_vapor_pressure_liquid(self.temperature_K)


# --------------------------------------------------------------------------------------
# Analytic sinusoids
# --------------------------------------------------------------------------------------

@dataclass(frozen=True)
class Sinusoid:
    """Diurnal plus seasonal cosine: x = mean + A_d cos(2pi (LTST - h_pk)/24) + A_s cos(2pi (Ls - Ls_pk)/360).

    Parameters
    ----------
    mean : float   [unit of the quantity]
    diurnal_amplitude : float, >= 0
    diurnal_peak_h : float [h], 0-24   local true solar time of the diurnal maximum
    seasonal_amplitude : float, >= 0
    seasonal_peak_ls : float [deg], 0-360   Ls of the seasonal maximum
    """

    mean: float
    diurnal_amplitude: float = 0.0
    diurnal_peak_h: float = 14.0
    seasonal_amplitude: float = 0.0
    seasonal_peak_ls: float = 270.0

    def __post_init__(self):
        checks = [("mean", self.mean, None), ("diurnal_amplitude", self.diurnal_amplitude, (0, np.inf)),
                  ("diurnal_peak_h", self.diurnal_peak_h, (0, 24)),
                  ("seasonal_amplitude", self.seasonal_amplitude, (0, np.inf)),
                  ("seasonal_peak_ls", self.seasonal_peak_ls, (0, 360))]
        for name, v, rng in checks:
            ok = isinstance(v, (int, float, np.floating, np.integer)) and not isinstance(v, bool) and np.isfinite(v)
            if ok and rng is not None:
                ok = rng[0] <= v <= rng[1]
            if not ok:
                allowed = "a finite number" if rng is None else f"a number in {rng[0]}-{rng[1]}"
                raise ConfigError(f"sinusoid {name}: {shown(v)} is not allowed; allowed: {allowed}")

    def __call__(self, ltst_h, ls_deg):
        """Value for local true solar time [h] and Ls [deg] (broadcast)."""
        return (self.mean
                + self.diurnal_amplitude * np.cos(2 * np.pi * (np.asarray(ltst_h) - self.diurnal_peak_h) / 24.0)
                + self.seasonal_amplitude * np.cos(np.deg2rad(np.asarray(ls_deg) - self.seasonal_peak_ls)))


def prescribed_forcing(clock, east_longitude_deg, temperature, vapor_pressure=None,
                       relative_humidity=None, surface_pressure_pa=None):
    """Analytic forcing on a clock: sinusoids in local true solar time and Ls.

    Parameters
    ----------
    clock : wetcycle.clock.Clock
    east_longitude_deg : float or array [deg]   one value per cell
    temperature : Sinusoid [K]
    vapor_pressure : Sinusoid [Pa], optional
    relative_humidity : Sinusoid [-], optional   (exactly one of the two)
    surface_pressure_pa : float or array [Pa], optional
        Constant, shape (n_steps,) or (n_steps, n_cells).

    Returns
    -------
    ForcingSeries   shape (n_steps,) for a scalar longitude, else (n_steps, n_cells)

    Raises
    ------
    ConfigError   if a sinusoid leaves its allowed range (e.g. RH > 1) anywhere on the grid.
    """
    if (vapor_pressure is None) == (relative_humidity is None):
        raise ConfigError("prescribed forcing: give exactly one of vapor_pressure or relative_humidity")
    lon = np.asarray(east_longitude_deg, dtype=float)
    if lon.ndim > 1:
        raise ConfigError(f"east_longitude_deg: shape {lon.shape} not allowed; allowed: scalar or 1-D")
    ltst = clock.local_true_solar_time(lon)
    ls = clock.ls_deg.reshape((-1,) + (1,) * lon.ndim)
    kw = {}
    if vapor_pressure is not None:
        kw["vapor_pressure_Pa"] = vapor_pressure(ltst, ls)
    else:
        kw["relative_humidity"] = relative_humidity(ltst, ls)
    if surface_pressure_pa is not None:
        kw["surface_pressure_Pa"] = np.broadcast_to(surface_pressure_pa, ltst.shape)
    return ForcingSeries(time_s=clock.time_s, temperature_K=temperature(ltst, ls), **kw)


# --------------------------------------------------------------------------------------
# Lab-chamber programme
# --------------------------------------------------------------------------------------

_SEGMENT_KEYS = {"mode", "duration_s", "temperature_K", "relative_humidity", "vapor_pressure_Pa", "pressure_Pa"}
_PROGRAMME_KEYS = {"name", "pressure_Pa", "after_end", "segment"}
_AFTER_END = ("error", "repeat", "hold")


@dataclass(frozen=True)
class Segment:
    """One step of a chamber programme.

    Attributes
    ----------
    mode : "hold" or "ramp"
    duration_s : float [s], > 0
    temperature_K : float [K]
    humidity : float   RH [-] or vapour pressure [Pa], per the programme's ``humidity_kind``
    pressure_Pa : float [Pa]
    """

    mode: str
    duration_s: float
    temperature_K: float
    humidity: float
    pressure_Pa: float


@dataclass(frozen=True, eq=False)
class ChamberProgramme:
    """A validated chamber programme; build with :func:`chamber_programme_from_dict`.

    Attributes
    ----------
    segments : tuple of Segment
    humidity_kind : "relative_humidity" or "vapor_pressure_Pa"
    after_end : "error", "repeat" or "hold"
    name : str
    """

    segments: tuple
    humidity_kind: str
    after_end: str = "error"
    name: str = ""
    _starts: np.ndarray = field(init=False, repr=False)

    def __post_init__(self):
        if not self.segments:
            raise ConfigError("segment: a chamber programme needs at least one segment")
        if self.segments[0].mode == "ramp":
            raise ConfigError("segment[1].mode: 'ramp' is not allowed for the first segment "
                              "(a ramp starts from the previous segment's values); allowed: hold")
        if self.humidity_kind not in ("relative_humidity", "vapor_pressure_Pa"):
            raise ConfigError(f"humidity_kind: {self.humidity_kind!r} is not allowed; "
                              "allowed: relative_humidity, vapor_pressure_Pa")
        if self.after_end not in ("error", "repeat", "hold"):
            raise ConfigError(f"after_end: {self.after_end!r} is not allowed; allowed: error, repeat, hold")
        d = np.array([s.duration_s for s in self.segments], dtype=float)
        if np.any(~(d > 0)):
            raise ConfigError(f"segment.duration_s: {float(d[~(d > 0)][0])!r} s is not allowed; allowed: > 0 s")
        object.__setattr__(self, "_starts", np.concatenate([[0.0], np.cumsum(d)]))

    @property
    def duration_s(self):
        """Total duration [s]."""
        return float(self._starts[-1])

    def _ends_and_starts(self, attr):
        ends = np.array([getattr(s, attr) for s in self.segments], dtype=float)
        starts = ends.copy()
        for i, s in enumerate(self.segments):
            if s.mode == "ramp":
                starts[i] = ends[i - 1]
        return starts, ends

    def evaluate(self, time_s):
        """Replay the programme on a time grid.

        Within segment i (start t_i, duration d_i), a hold gives its own values
        and a ramp gives v_(i-1) + (v_i - v_(i-1)) (t - t_i) / d_i (linear in
        temperature, in the humidity quantity and in pressure).  A time equal
        to a boundary belongs to the segment that starts there; the end of the
        programme itself takes the last segment's end values.

        Parameters
        ----------
        time_s : array [s]   seconds since the programme start (e.g. ``clock.time_s``), >= 0

        Returns
        -------
        ForcingSeries
        """
        t = np.asarray(time_s, dtype=float)
        total = self.duration_s
        if np.any(t < 0) or not np.all(np.isfinite(t)):
            raise ConfigError("time_s: chamber programme times must be finite and >= 0 s")
        late = t > total
        if np.any(late):
            if self.after_end == "error":
                raise ConfigError(
                    f"time_s: {float(t[late][0])!r} s is after the end of the chamber programme ({total:g} s); "
                    "allowed: set after_end = 'repeat' or 'hold', or lengthen the programme")
            tt = np.mod(t, total) if self.after_end == "repeat" else np.minimum(t, total)
        else:
            tt = t
        idx = np.clip(np.searchsorted(self._starts, tt, side="right") - 1, 0, len(self.segments) - 1)
        dur = np.array([s.duration_s for s in self.segments])[idx]
        frac = np.clip((tt - self._starts[idx]) / dur, 0.0, 1.0)
        out = {}
        for attr, key in (("temperature_K", "temperature_K"), ("humidity", self.humidity_kind),
                          ("pressure_Pa", "surface_pressure_Pa")):
            v0, v1 = self._ends_and_starts(attr)
            out[key] = v0[idx] + (v1[idx] - v0[idx]) * frac
        return ForcingSeries(time_s=t, **out)


def _num(where, key, v, lo, hi, unit, strict_lo=False):
    ok = isinstance(v, (int, float)) and not isinstance(v, bool) and np.isfinite(v)
    ok = ok and (v > lo if strict_lo else v >= lo) and v <= hi
    if not ok:
        rng = f"{'>' if strict_lo else '>='} {lo:g}" + ("" if hi == np.inf else f" and <= {hi:g}")
        raise ConfigError(f"{where}{key}: {shown(v)} is not allowed; allowed: a number {rng} {unit}".rstrip())
    return float(v)


def chamber_programme_from_dict(data, source="chamber programme"):
    """Validate a chamber programme given as a dict (e.g. parsed TOML); see the module notes.

    Parameters
    ----------
    data : dict
    source : str   named in error messages (e.g. the file name)

    Returns
    -------
    ChamberProgramme

    Raises
    ------
    ConfigError   one line naming the field, the value and what is allowed.
    """
    where = f"{source}: "
    if not isinstance(data, dict):
        raise ConfigError(f"{where}expected a table of fields, got {type(data).__name__}")
    unknown = set(data) - _PROGRAMME_KEYS
    if unknown:
        raise ConfigError(f"{where}unknown field {sorted(unknown)[0]!r}; allowed: {', '.join(sorted(_PROGRAMME_KEYS))}")
    after = data.get("after_end", "error")
    if after not in _AFTER_END:
        raise ConfigError(f"{where}after_end: {after!r} is not allowed; allowed: {', '.join(_AFTER_END)}")
    p_default = data.get("pressure_Pa")
    if p_default is not None:
        p_default = _num(where, "pressure_Pa", p_default, *RANGES["surface_pressure_Pa"], "Pa")
    segs = data.get("segment")
    if not isinstance(segs, list) or not segs:
        raise ConfigError(f"{where}segment: {segs!r} is not allowed; allowed: a list of one or more segments")
    kind = None
    out = []
    for i, s in enumerate(segs):
        w = f"{where}segment {i + 1} "
        if not isinstance(s, dict):
            raise ConfigError(f"{w}expected a table of fields, got {type(s).__name__}")
        unknown = set(s) - _SEGMENT_KEYS
        if unknown:
            raise ConfigError(f"{w}unknown field {sorted(unknown)[0]!r}; allowed: {', '.join(sorted(_SEGMENT_KEYS))}")
        for key in ("mode", "duration_s", "temperature_K"):
            if key not in s:
                raise ConfigError(f"{w}{key}: missing; required fields: mode, duration_s, temperature_K and "
                                  "relative_humidity or vapor_pressure_Pa")
        mode = s["mode"]
        if mode not in ("hold", "ramp"):
            raise ConfigError(f"{w}mode: {mode!r} is not allowed; allowed: hold, ramp")
        if mode == "ramp" and i == 0:
            raise ConfigError(f"{w}mode: 'ramp' is not allowed for the first segment; allowed: hold")
        hk = [k for k in ("relative_humidity", "vapor_pressure_Pa") if k in s]
        if len(hk) != 1:
            raise ConfigError(f"{w}humidity: give exactly one of relative_humidity, vapor_pressure_Pa (got {hk or 'none'})")
        if kind is None:
            kind = hk[0]
        elif hk[0] != kind:
            raise ConfigError(f"{w}{hk[0]}: not allowed after earlier segments used {kind}; allowed: {kind} in every segment")
        dur = _num(w, "duration_s", s["duration_s"], 0.0, np.inf, "s", strict_lo=True)
        temp = _num(w, "temperature_K", s["temperature_K"], *RANGES["temperature_K"], "K")
        hum = _num(w, kind, s[kind], *RANGES[kind], _UNITS[kind])
        if "pressure_Pa" in s:
            p = _num(w, "pressure_Pa", s["pressure_Pa"], *RANGES["surface_pressure_Pa"], "Pa")
        elif p_default is not None:
            p = p_default
        else:
            raise ConfigError(f"{w}pressure_Pa: missing, and the programme has no pressure_Pa; allowed: a number in Pa")
        out.append(Segment(mode, dur, temp, hum, p))
    name = data.get("name", "")
    if not isinstance(name, str):
        raise ConfigError(f"{where}name: {name!r} is not allowed; allowed: a string")
    return ChamberProgramme(tuple(out), kind, after, name)


def load_chamber_programme(path):
    """Read and validate a chamber programme from a TOML file (format in the module notes).

    Parameters
    ----------
    path : str or Path

    Returns
    -------
    ChamberProgramme

    Raises
    ------
    InputDataError   unreadable file or TOML syntax error.
    ConfigError      a field with a bad value.
    """
    path = Path(path)
    try:
        with open(path, "rb") as fh:
            data = tomllib.load(fh)
    except OSError as exc:
        raise InputDataError(f"{path}: cannot be read ({exc.strerror})") from None
    except tomllib.TOMLDecodeError as exc:
        raise InputDataError(f"{path}: not valid TOML ({exc})") from None
    return chamber_programme_from_dict(data, source=str(path.name))
