"""Step one salt through a given series: a lab-chamber record, a lander's measurements.

>>> import numpy as np, wetcycle
>>> t = np.arange(0, 7200.0, 60.0)
>>> ds = wetcycle.run_series("NaCl", t, np.full(t.size, 280.0), np.linspace(0.6, 0.9, t.size), law="equilibrium")
>>> bool(ds.liquid_water[-1] > 0)
True
"""

from __future__ import annotations

from collections.abc import Mapping

import numpy as np
import xarray as xr

from . import __version__
from .errors import ConfigError, InputDataError, shown
from .forcing.prescribed import RANGES
from .block import run_cells
from .output import CAUTION, add_time_bounds, mixture_attrs, time_attrs
from .phase import DEFAULTS, PhaseModel
from .phase.model import phase_settings_attrs
from .stats import HABITABILITY_DEFAULTS
from .vocabulary import attrs

OPTIONS = ("law", "loading_kg_m2", "surface_pressure_Pa", "frost_kg_m2", "diffusion_length_m",
           "diffusivity_factor", "liquid_threshold", "hydrate_kinetics", "min_water_activity", "min_temperature_K")


#: Keys of a salt mixture given to ``run_series`` / ``run_dataset`` (those of a scenario's ``[[salt]]``).
MIXTURE_KEYS = ("name", "mixture", "ions", "extrapolate_binaries")


def salt_entry(salt, field="salt"):
    """A salt argument as a ``[[salt]]``-like entry: ``{"name": ...}`` or a mixture's entry.

    ``salt`` is a salt-system name (``wetcycle.salts.names()``) or a mixture, a mapping with
    ``name`` (its own name), ``mixture`` ({salt system: mass fraction of the anhydrous salts}, adding
    up to 1) or ``ions`` ({ion: moles in any one unit}, charge-balanced within 1 %,
    :func:`wetcycle.brines.mixture.parse_ions`), and optionally ``extrapolate_binaries`` (bool), as
    in a scenario (README, "Salt mixtures in a scenario").  Anything else is a one-line :class:`~wetcycle.errors.ConfigError`.
    """
    if isinstance(salt, str):
        return {"name": salt}
    if not isinstance(salt, Mapping):
        raise ConfigError(f"{field}: {shown(salt)} is not allowed; allowed: a salt-system name or a mixture "
                          "{'name': ..., 'mixture': {salt: mass fraction}}")
    unknown = [k for k in salt if k not in MIXTURE_KEYS]
    if unknown:
        raise ConfigError(f"{field}: key {unknown[0]!r} is not allowed; allowed: {', '.join(MIXTURE_KEYS)}")
    name = salt.get("name")
    if not isinstance(name, str) or not name.strip():
        raise ConfigError(f"{field}.name: {shown(name)} is not allowed; allowed: the mixture's own name (text)")
    if ("mixture" in salt) == ("ions" in salt):
        raise ConfigError(f"{field}: give 'mixture' ({{salt system: mass fraction}}, adding up to 1) or 'ions' "
                          "({ion: moles}), one of the two")
    from .brines.mixture import parse_ions, parse_mixture
    comp = (parse_mixture(salt["mixture"], f"{field}.mixture") if "mixture" in salt else
            parse_ions(salt["ions"], f"{field}.ions"))[0]
    extra = salt.get("extrapolate_binaries", False)
    if not isinstance(extra, bool):
        raise ConfigError(f"{field}.extrapolate_binaries: {shown(extra)} is not allowed; allowed: True or False")
    return {"name": name, "mixture": comp, "extrapolate_binaries": extra}


def phase_model(entry, **settings):
    """The phase model of a :func:`salt_entry`: a :class:`~wetcycle.phase.PhaseModel`, or for a mixture a
    :class:`~wetcycle.phase.mixture_model.MixtureModel` (its tables built once per process)."""
    if entry.get("mixture"):
        from .phase.mixture_model import MixtureModel
        return MixtureModel(entry["name"], entry["mixture"], extrapolate_binaries=entry["extrapolate_binaries"],
                            **settings)
    return PhaseModel(entry["name"], **settings)


def elapsed_seconds(times, field="time"):
    """Times as float seconds since the first, and the first as a UTC date text (or None).

    Accepts seconds (any real numbers), ``numpy.datetime64`` (any resolution: read in its own
    unit, never as a bare integer), pandas time stamps and cftime dates (model calendars: the
    seconds between dates are counted in their own calendar).
    """
    import pandas as pd

    if isinstance(times, (pd.Series, pd.Index)):
        times = times.to_numpy()
    arr = np.asarray(times)
    if arr.dtype.kind == "M":
        t = (arr - arr[0]) / np.timedelta64(1, "s") if arr.size else arr.astype(float)
        first = np.datetime_as_string(arr[0].astype("datetime64[ms]"), unit="ms").replace("T", " ")
        return np.asarray(t, dtype=float), first
    if arr.dtype == object and arr.size and hasattr(arr.flat[0], "calendar"):
        import cftime
        d0 = arr.flat[0]
        t = cftime.date2num(arr, f"seconds since {d0.strftime('%Y-%m-%d %H:%M:%S')}", calendar=d0.calendar)
        if d0.calendar not in ("standard", "gregorian", "proleptic_gregorian"):
            raise ConfigError(f"{field}: dates in the {d0.calendar!r} calendar; allowed: real-calendar dates or "
                              "seconds (convert with xarray's convert_calendar)")
        return np.asarray(t, dtype=float), d0.strftime("%Y-%m-%d %H:%M:%S")
    try:
        return np.asarray(arr, dtype=float), None
    except (TypeError, ValueError):
        raise ConfigError(f"{field}: {shown(arr.flat[0]) if arr.size else '[]'} is neither a number of seconds "
                          "nor a date") from None


def _non_negative(field, value, shape, strict=False):
    a = np.asarray(value, dtype=float)
    try:
        a = np.broadcast_to(a, shape)
    except ValueError:
        raise ConfigError(f"{field}: shape {a.shape} does not match the series ({shape[0]} samples)") from None
    bad = ~np.isfinite(a) | ((a <= 0) if strict else (a < 0))
    if np.any(bad):
        raise ConfigError(f"{field}: {shown(a[bad].flat[0])} is not allowed; allowed: a finite number "
                          f"{'> 0' if strict else '>= 0'}")
    return a


def run_series(salt, time_s, temperature_K, relative_humidity, *, law=DEFAULTS["law"],
               loading_kg_m2=DEFAULTS["loading_kg_m2"], surface_pressure_Pa=600.0, frost_kg_m2=0.0,
               diffusion_length_m=DEFAULTS["diffusion_length_m"], diffusivity_factor=DEFAULTS["diffusivity_factor"],
               liquid_threshold=DEFAULTS["liquid_threshold"], hydrate_kinetics=DEFAULTS["hydrate_kinetics"],
               min_water_activity=HABITABILITY_DEFAULTS["min_water_activity"],
               min_temperature_K=HABITABILITY_DEFAULTS["min_temperature_K"]):
    """Step one salt through a series and return an ``xarray.Dataset`` over ``time``.

    The defaults are the phase model's one set (:data:`wetcycle.phase.DEFAULTS`, the same as a
    scenario's): the vapour-limited law over 2.5 mm with 0.05 kg m-2 of salt.  For an
    equilibrium question or a replay of micrometre particles in a lab cell, pass
    ``law="equilibrium"``.

    Parameters
    ----------
    salt : str or mapping
        Salt-system name (``wetcycle.salts.names()``), or a salt mixture
        ``{"name": ..., "mixture": {salt system: mass fraction}, "extrapolate_binaries": False}``
        (or ``"ions": {ion: moles}`` in place of ``mixture``; :func:`salt_entry`; README, "Salt mixtures in a scenario"): its equilibrium tables are
        built once per process (tens of seconds), and the result adds ``ion_molality``
        (time, ion) [mol kg-1] of its brine (NaN without brine).
    time_s : array, strictly increasing
        Seconds [s] since any origin, or dates (``numpy.datetime64``, pandas time stamps or
        cftime dates): dates give the result a CF time coordinate from the first date.
    temperature_K : array [K], same length
    relative_humidity : array [-], w.r.t. liquid water, in [0, 1]
    law : {"vapour_limited", "equilibrium"}
    loading_kg_m2 : float [kg m-2]
        Anhydrous salt per unit area.
    surface_pressure_Pa : float or array [Pa], default 600
        Gas pressure (sets vapour diffusivity in the vapour-limited law).
    frost_kg_m2 : float or array [kg m-2], default 0
        Water frost in contact with the salt (contact melting at the eutectic).
    diffusion_length_m, diffusivity_factor, liquid_threshold, hydrate_kinetics :
        phase-model settings (see :class:`wetcycle.phase.PhaseModel`).
    min_water_activity, min_temperature_K : float [-], [K]
        Habitability thresholds of the statistics (defaults
        :data:`wetcycle.stats.HABITABILITY_DEFAULTS`: settings, not rulings).

    Returns
    -------
    xarray.Dataset with ``phase_state``, ``brine_water_activity``, ``liquid_water``
    (brine water; a sub-threshold film on a damp crystalline salt is not liquid),
    ``liquid_fraction`` (of each step, crossings placed inside the step), ``hydrate_water``,
    ``ice_water``, ``water_exchanged``, ``validity_flag`` and the forcing over ``time``, and the
    statistics of the whole series as scalars (``liquid_hours``, ``liquid_water_hours``,
    ``habitable_hours``, ``wet_events``, ``longest_liquid_spell_hours``, the liquid's temperature
    and water-activity range, the model-limit counts: totals, no per-year figures, as a series
    has no planet's year), with CF attributes; the phase-model settings, the liquid threshold and
    the habitability thresholds are global attributes.  The path through the phase model is
    :func:`wetcycle.block.run_cells`, the same as :func:`wetcycle.run_dataset`'s.

    Raises
    ------
    InputDataError
        For mismatched lengths, non-increasing time, temperature outside 50-400 K (the forcing
        range), RH outside [0, 1] or non-finite values.
    ConfigError
        For a setting outside its range (the law, the loading, a negative pressure or frost...) or
        times that are neither seconds nor real-calendar dates.
    """
    t, start = elapsed_seconds(time_s, "time_s")
    T = np.asarray(temperature_K, dtype=float)
    rh = np.asarray(relative_humidity, dtype=float)
    if t.ndim != 1 or t.size < 2:
        raise InputDataError("time_s: needs a 1-D series of at least two samples")
    for name, a in (("temperature_K", T), ("relative_humidity", rh)):
        if a.shape != t.shape:
            raise InputDataError(f"{name}: length {a.size} differs from time_s ({t.size})")
        if not np.all(np.isfinite(a)):
            raise InputDataError(f"{name}: non-finite value at index {int(np.flatnonzero(~np.isfinite(a))[0])}")
    if np.any(np.diff(t) <= 0):
        raise InputDataError(f"time_s: must increase strictly (index {int(np.flatnonzero(np.diff(t) <= 0)[0]) + 1})")
    lo, hi = RANGES["temperature_K"]
    if np.any((T < lo) | (T > hi)):
        raise InputDataError(f"temperature_K: {float(T[(T < lo) | (T > hi)][0])!r} is outside {lo:g}-{hi:g} K "
                             "(kelvin, not degrees Celsius)")
    if np.any((rh < 0) | (rh > 1)):
        raise InputDataError(f"relative_humidity: {float(rh[(rh < 0) | (rh > 1)][0])!r} is outside [0, 1] "
                             "(a fraction, not %)")
    P = _non_negative("surface_pressure_Pa", surface_pressure_Pa, t.shape, strict=True)
    frost = _non_negative("frost_kg_m2", frost_kg_m2, t.shape)
    entry = salt_entry(salt)
    model = phase_model(entry, law=law, diffusion_length_m=diffusion_length_m, diffusivity_factor=diffusivity_factor,
                        liquid_threshold=liquid_threshold, hydrate_kinetics=hydrate_kinetics)
    check_thresholds(min_water_activity, min_temperature_K)
    stats, series = run_cells(model, t, T[:, None], rh[:, None], P[:, None], frost[:, None], loading_kg_m2,
                              min_water_activity=min_water_activity, min_temperature_K=min_temperature_K)
    ions = series.pop("ion_molality", None)
    data = {k: ("time", v[:, 0], attrs(k)) for k, v in series.items()}
    coords = {}
    if ions is not None:
        data["ion_molality"] = (("time", "ion"), ions[:, 0, :], attrs("ion_molality"))
        coords["ion"] = ("ion", np.array(model.ions, dtype=object), attrs("ion"))
    data.update(salt_temperature=("time", T, attrs("salt_temperature")),
                relative_humidity=("time", rh, attrs("relative_humidity")),
                surface_pressure=("time", np.array(P), attrs("surface_pressure")))
    data.update({k: ((), v[0], attrs(k)) for k, v in stats.items()})
    t_attrs = time_attrs({"start_utc": start} if start else {})
    ds = xr.Dataset(data, coords={"time": ("time", t, t_attrs), **coords})
    ds = add_time_bounds(ds, t, 0.0, t_attrs)
    ds.attrs.update(series_attrs(model, loading_kg_m2, min_water_activity, min_temperature_K))
    ds.attrs.update(mixture_attrs([entry]))
    return ds


def check_thresholds(min_water_activity, min_temperature_K):
    """Refuse habitability thresholds outside their ranges (those of a scenario's [habitability])."""
    if not (0 <= min_water_activity <= 1):
        raise ConfigError(f"min_water_activity: {shown(min_water_activity)} is not allowed; allowed: 0 to 1")
    if not (100 <= min_temperature_K <= 400):
        raise ConfigError(f"min_temperature_K: {shown(min_temperature_K)} is not allowed; allowed: 100 to 400 K")


def series_attrs(model, loading_kg_m2, min_water_activity, min_temperature_K):
    """Global attributes of a result of given series (``run_series``, ``run_dataset``)."""
    return dict(title=f"wetcycle series run: {model.tables.name}", salt=model.tables.name, law=model.law,
                loading_kg_m2=float(loading_kg_m2), wetcycle_version=__version__, Conventions="CF-1.8",
                caution=CAUTION, habitability_min_water_activity=float(min_water_activity),
                habitability_min_temperature_K=float(min_temperature_K), **phase_settings_attrs(model))
