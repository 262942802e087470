"""``run_dataset``: the phase model over an ``xarray.Dataset`` of forcing, lazily with dask.

A thin layer over :func:`wetcycle.block.run_cells`, the path :func:`wetcycle.run_series` takes
too: ``xr.apply_ufunc(..., dask="parallelized")`` hands each chunk of cells (every dimension but
``time``) to it as plain arrays [step, cell] in SI units, so a cell of the result equals
``run_series`` on that cell bitwise, whatever the chunking.  A ``time`` axis held in several dask
chunks is not gathered into one: each chunk of cells becomes a chain of tasks, one per time block,
carrying the state and the accumulators (:func:`wetcycle.block.start_cells`,
:func:`~wetcycle.block.advance_cells`, :func:`~wetcycle.block.finish_cells`; DESIGN decision 1).

>>> import numpy as np, xarray as xr, wetcycle
>>> t = np.arange(0, 7200.0, 60.0)
>>> forcing = xr.Dataset({"surface_temperature": ("time", np.full(t.size, 280.0), {"units": "K"}),
...                       "relative_humidity": ("time", np.linspace(60, 90, t.size), {"units": "%"})},
...                      coords={"time": ("time", t, {"units": "s"})})
>>> ds = wetcycle.run_dataset(forcing, "NaCl", law="equilibrium")
>>> bool(ds.liquid_hours.sel(salt="NaCl") > 0)
True
"""

from __future__ import annotations

import copy
import uuid

import numpy as np
import xarray as xr

from .block import PHASE_KEYS, advance_cells, finish_cells, run_cells, start_cells, statistic_names
from .errors import ConfigError, InputDataError, shown
from .forcing.prescribed import RANGES
from .forcing.vapour import relative_humidity_for_salt
from .output import add_time_bounds, mixture_attrs, time_attrs
from .phase import DEFAULTS
from .series import check_thresholds, elapsed_seconds, phase_model, salt_entry, series_attrs
from .stats import HABITABILITY_DEFAULTS
from .vocabulary import attrs

#: Forcing variables read from the dataset (our names, :mod:`wetcycle.vocabulary`).
FORCING_VARIABLES = ("surface_temperature", "salt_temperature", "relative_humidity", "vapor_pressure",
                     "surface_pressure", "water_frost")

#: Units accepted per kind of quantity: UDUNITS spelling -> (scale, offset) to SI.  A variable
#: without a ``units`` attribute is taken to be in SI (K, Pa, 1, kg m-2, s).
UNITS = {
    "temperature": {"K": (1.0, 0.0), "kelvin": (1.0, 0.0), "degK": (1.0, 0.0), "degC": (1.0, 273.15),
                    "celsius": (1.0, 273.15), "deg_C": (1.0, 273.15), "°C": (1.0, 273.15)},
    "pressure": {"Pa": (1.0, 0.0), "hPa": (100.0, 0.0), "mbar": (100.0, 0.0), "kPa": (1000.0, 0.0)},
    "fraction": {"1": (1.0, 0.0), "": (1.0, 0.0), "%": (0.01, 0.0), "percent": (0.01, 0.0)},
    "areal_mass": {"kg m-2": (1.0, 0.0), "kg/m2": (1.0, 0.0), "kg m**-2": (1.0, 0.0)},
}
_KIND = {"surface_temperature": "temperature", "salt_temperature": "temperature", "relative_humidity": "fraction",
         "vapor_pressure": "pressure", "surface_pressure": "pressure", "water_frost": "areal_mass"}
_SI = {"temperature": "K", "pressure": "Pa", "fraction": "1", "areal_mass": "kg m-2"}
_SECONDS = ("s", "second", "seconds", "sec")


def si_units(name, da):
    """``da`` (forcing variable ``name``) converted to SI from its ``units`` attribute, lazily.

    Accepted units are listed in :data:`UNITS`; a missing ``units`` attribute means SI.  Anything
    else raises :class:`~wetcycle.errors.InputDataError` naming the variable, the unit and what
    is allowed.
    """
    kind = _KIND[name]
    units = da.attrs.get("units")
    if units is None:
        return da.astype(np.float64)
    key = str(units).strip()
    if key not in UNITS[kind]:
        raise InputDataError(f"{name}: units {units!r} are not allowed; allowed: {', '.join(repr(u) for u in UNITS[kind])}")
    scale, offset = UNITS[kind][key]
    out = da.astype(np.float64)
    if scale != 1.0:
        out = out * scale
    if offset != 0.0:
        out = out + offset
    return out


def forcing_time(forcing):
    """(seconds since the first sample [time], its date as text or None) of a forcing dataset.

    ``time`` is a coordinate of CF-decoded dates (``datetime64`` or real-calendar cftime) or of
    numbers in seconds (units ``s``, ``seconds since <date>``, or none).
    """
    if "time" not in forcing.dims:
        raise InputDataError("forcing: no 'time' dimension; allowed: a Dataset with a time coordinate")
    if "time" not in forcing.coords:
        raise InputDataError("time: no coordinate values; allowed: seconds or dates")
    tc = forcing["time"]
    units = tc.attrs.get("units")
    start = None
    if tc.dtype.kind in "iuf" and units is not None:
        u = str(units).strip()
        head, _, since = u.partition(" since ")
        if head.strip() not in _SECONDS:
            raise InputDataError(f"time: units {units!r} are not allowed; allowed: 's', 'seconds since <date>' or "
                                 "dates (open the file with xarray's default time decoding)")
        start = since.strip() or None
    t, first = elapsed_seconds(tc.values, "time")
    if t.ndim != 1 or t.size < 2:
        raise InputDataError("time: needs at least two samples")
    if np.any(np.diff(t) <= 0):
        raise InputDataError(f"time: must increase strictly (index {int(np.flatnonzero(np.diff(t) <= 0)[0]) + 1})")
    if not np.all(np.isfinite(t)):
        raise InputDataError("time: non-finite value")
    return t, first or start


def _check(name, a, lo, hi, unit, hint=""):
    bad = ~(np.isfinite(a) & (a >= lo) & (a <= hi))
    if np.any(bad):
        raise InputDataError(f"{name}: {shown(a[bad].flat[0])} is outside {lo:g} to {hi:g} {unit}{hint}".rstrip())


def _rh_from_vapor(e, T):
    """RH the salt sees from vapour pressure ``e`` [Pa] at the salt's temperature ``T`` [K] (chunk-wise)."""
    _check("vapor_pressure", e, 0.0, np.inf, "Pa")
    return relative_humidity_for_salt(e, T)


def _si_cells(T, rh, P, frost, temperature_name):
    """Forcing arrays (..., time) of a chunk -> checked arrays [step, cell] in SI, and the cells' shape.

    Refuses values out of range in one line."""
    T, rh, P, frost = np.broadcast_arrays(T, rh, P, frost)
    shape = T.shape[:-1]
    n_steps = T.shape[-1]
    n_cells = int(np.prod(shape, dtype=np.int64))
    two_d = lambda a: np.ascontiguousarray(a.reshape(n_cells, n_steps).T, dtype=np.float64)
    T, rh, P, frost = two_d(T), two_d(rh), two_d(P), two_d(frost)
    lo, hi = RANGES["temperature_K"]
    _check(temperature_name, T, lo, hi, "K", " (after conversion to kelvin)")
    _check("relative_humidity", rh, 0.0, 1.0, "", "(a fraction; percentages need units '%')")
    _check("surface_pressure", P, np.nextafter(0.0, 1.0), np.inf, "Pa")
    _check("water_frost", frost, 0.0, np.inf, "kg m-2")
    return (T, rh, P, frost), shape


def _cells(T, rh, P, frost, *, model, time_s, loading, thresholds, keep_series, temperature_name):
    """One chunk of cells: forcing arrays (..., time) in SI -> statistics and series (..., [time]).

    Runs inside dask (or directly on NumPy arrays); refuses values out of range in one line.
    """
    (T, rh, P, frost), shape = _si_cells(T, rh, P, frost, temperature_name)
    n_steps = T.shape[0]
    stats, series = run_cells(model, time_s, T, rh, P, frost, loading, keep_series=keep_series, **thresholds)
    out = [np.asarray(v).reshape(shape) for v in stats.values()]
    if keep_series:
        out += [np.moveaxis(series[k], 0, -1).reshape(shape + (n_steps,)) for k in PHASE_KEYS]
    return tuple(out)


# ---- streaming a time axis held in several chunks (DESIGN decision 1) ---------------------------
# A chain of tasks per chunk of cells: the first time block starts the state, each block advances
# a copy of the carried (state, accumulators) and hands it on, the last carry gives the statistics.
# Only one time block of a chain is in memory at a time, so a series longer than memory streams.

def _stream_block(carry, T, rh, P, frost, dt, *, model, loading, thresholds, keep_series, temperature_name):
    """Advance one time block of one chunk of cells; returns ``(carry, series or None)``."""
    (T, rh, P, frost), shape = _si_cells(T, rh, P, frost, temperature_name)
    if carry is None:
        state, acc = start_cells(model, T[0], rh[0], loading, **thresholds)
    else:
        state, acc = carry[0].copy(), copy.deepcopy(carry[1])
    series = advance_cells(model, state, acc, T, rh, P, frost, dt, keep_series=keep_series)
    if series is not None:
        series = {k: np.moveaxis(series[k], 0, -1).reshape(shape + (T.shape[0],)) for k in PHASE_KEYS}
    return (state, acc), series


def _stream_stats(carry, shape):
    return {k: np.asarray(v).reshape(shape) for k, v in finish_cells(carry[1]).items()}


def _streamed(args, *, model, time_s, loading, thresholds, keep_series, temperature_name, stat_types):
    """The outputs of :func:`_cells` for dask-backed ``args`` whose ``time`` axis has several chunks.

    ``args`` are DataArrays with a ``time`` dimension; returns DataArrays on (<other dims>) for the
    statistics and (<other dims>, time) for the series, lazy, chunked as the input."""
    import dask
    import dask.array as dsa

    args = xr.broadcast(*args)
    other = [d for d in args[0].dims if d != "time"]
    args = xr.unify_chunks(*[a.transpose(*other, "time") for a in args])
    chunks = next(a.chunks for a in args if a.chunks is not None)
    arrays = [a.data if isinstance(a.data, dsa.Array) else dsa.from_array(np.asarray(a.data), chunks=chunks)
              for a in args]
    t_chunks = chunks[-1]
    t_edges = np.concatenate([[0], np.cumsum(t_chunks)])
    dt = np.concatenate([[0.0], np.diff(np.asarray(time_s, dtype=np.float64))])
    spatial = [range(len(c)) for c in chunks[:-1]]
    # the phase model (megabytes of tables) is one key of the graph that every task depends on,
    # not a copy inside each task (which a distributed scheduler would ship task by task)
    model_key = dask.delayed(model, name=f"phase-model-{uuid.uuid4().hex}", traverse=False)
    kw = dict(model=model_key, loading=loading, thresholds=thresholds, keep_series=keep_series,
              temperature_name=temperature_name)
    step = dask.delayed(_stream_block, nout=2, pure=True)
    stat_blocks = np.empty([len(c) for c in chunks[:-1]], dtype=object)
    series_blocks = {k: np.empty([len(c) for c in chunks[:-1]] + [len(t_chunks)], dtype=object) for k in PHASE_KEYS}
    for idx in np.ndindex(*[len(r) for r in spatial]):
        shape = tuple(chunks[d][i] for d, i in enumerate(idx))
        carry = None
        for k in range(len(t_chunks)):
            blocks = [a.blocks[idx + (k,)] for a in arrays]
            carry, ser = step(carry, *blocks, dt[t_edges[k]:t_edges[k + 1]], **kw)
            if keep_series:
                for name in PHASE_KEYS:
                    dtype = np.int8 if name in ("phase_state", "validity_flag") else np.float64
                    series_blocks[name][idx + (k,)] = dsa.from_delayed(ser[name], shape + (t_chunks[k],), dtype=dtype)
        stat_blocks[idx] = dask.delayed(_stream_stats, pure=True)(carry, shape)
    coords = {}
    for a in args:
        coords.update({k: c for k, c in a.coords.items() if "time" not in c.dims and k not in coords})
    out = []
    for name, dtype in stat_types.items():
        grid = np.empty(stat_blocks.shape, dtype=object)
        for idx in np.ndindex(*stat_blocks.shape):
            shape = tuple(chunks[d][i] for d, i in enumerate(idx))
            grid[idx] = dsa.from_delayed(stat_blocks[idx][name], shape, dtype=dtype)
        out.append(xr.DataArray(dsa.block(grid.tolist()) if grid.ndim else grid[()], dims=other, coords=coords))
    if keep_series:
        for name in PHASE_KEYS:
            out.append(xr.DataArray(dsa.block(series_blocks[name].tolist()), dims=other + ["time"], coords=coords))
    return tuple(out)


def run_dataset(forcing, salts, *, law=DEFAULTS["law"], loading_kg_m2=DEFAULTS["loading_kg_m2"], series=False,
                surface_pressure_Pa=600.0, diffusion_length_m=DEFAULTS["diffusion_length_m"],
                diffusivity_factor=DEFAULTS["diffusivity_factor"], liquid_threshold=DEFAULTS["liquid_threshold"],
                hydrate_kinetics=DEFAULTS["hydrate_kinetics"],
                min_water_activity=HABITABILITY_DEFAULTS["min_water_activity"],
                min_temperature_K=HABITABILITY_DEFAULTS["min_temperature_K"]):
    """Step salts through the forcing of an ``xarray.Dataset``; lazy when the forcing is dask-backed.

    Every cell (each combination of the dimensions other than ``time``: site, lat, lon, ensemble
    member...) is an independent series stepped by the phase model exactly as
    :func:`wetcycle.run_series` steps it (both go through :func:`wetcycle.block.run_cells`): a
    cell of the result equals ``run_series`` on that cell's series bitwise.  With dask-chunked
    forcing the result is a graph of one task per chunk of cells (``xr.apply_ufunc`` with
    ``dask="parallelized"``); if ``time`` is cut into several chunks, of one chain of tasks per
    chunk of cells that steps the time blocks in order (memory: one time block per chain; the
    per-step output keeps the input's time chunks).

    Parameters
    ----------
    forcing : xarray.Dataset
        A ``time`` coordinate (CF-decoded dates, ``datetime64`` or real-calendar cftime, or
        numbers of seconds with units ``s`` or ``seconds since <date>``) and, on ``time`` and any
        other dimensions:

        * ``surface_temperature`` [K] (required);
        * ``relative_humidity`` [1] w.r.t. liquid water at the salt, or ``vapor_pressure`` [Pa]
          (one of the two; the salt sees RH = e / p_liq(T_salt),
          :func:`wetcycle.forcing.vapour.relative_humidity_for_salt`);
        * optional: ``salt_temperature`` [K] (default: the surface temperature),
          ``surface_pressure`` [Pa] (default ``surface_pressure_Pa``), ``water_frost`` [kg m-2] in
          contact with the salt (default none).

        Units come from each variable's ``units`` attribute: K, degC or celsius; Pa, hPa, mbar or
        kPa; 1, '' or % (see :data:`UNITS`); a variable without a ``units`` attribute is taken in
        SI (K, Pa, fraction, kg m-2; time in s).  Other variables are ignored.
    salts : str, mapping, or a list of them
        Salt-system names (``wetcycle.salts.names()``) or salt mixtures
        (``{"name": ..., "mixture": {salt system: mass fraction}, "extrapolate_binaries": False}``, or
        ``"ions": {ion: moles}`` in place of ``mixture``, as for :func:`wetcycle.run_series`); each is an alternative, stepped alone.  A mixture's brine
        ions are not in this result (``run_series`` gives them for one cell).
    law, loading_kg_m2, surface_pressure_Pa, diffusion_length_m, diffusivity_factor,
    liquid_threshold, hydrate_kinetics, min_water_activity, min_temperature_K :
        as for :func:`wetcycle.run_series` (the phase model's one set of defaults,
        :data:`wetcycle.phase.DEFAULTS`).
    series : bool
        Also return the per-step state on (salt, time, <other dims>).

    Returns
    -------
    xarray.Dataset
        The statistics of the whole series on (salt, <other dims>): totals (``liquid_hours``,
        ``liquid_water_hours``, ``habitable_hours``, ``wet_events``), ``longest_liquid_spell_hours``,
        the liquid's temperature and water-activity range and the model-limit counts, as
        ``run_series`` gives them (a given series has no planet's year: no per-year figures).
        With ``series=True`` also ``phase_state``, ``brine_water_activity``, ``liquid_water``,
        ``hydrate_water``, ``ice_water``, ``liquid_fraction``, ``water_exchanged``,
        ``validity_flag`` on (salt, time, <other dims>) and the forcing the salt saw
        (``salt_temperature``, ``relative_humidity``, ``surface_pressure``) in SI.  Names and CF
        attributes are those of result files (:mod:`wetcycle.vocabulary`); the coordinates of
        the other dimensions are carried over.

    Raises
    ------
    InputDataError
        A missing or doubly given variable, units not allowed, a bad time axis; values out of
        range (temperature outside 50-400 K, RH outside [0, 1], non-finite) when the chunk holding
        them is computed.
    ConfigError, UnknownNameError
        A setting outside its range, an unknown salt or law.
    """
    if not isinstance(forcing, xr.Dataset):
        raise InputDataError(f"forcing: expected an xarray.Dataset, got {type(forcing).__name__}")
    given = [salts] if isinstance(salts, (str, dict)) else list(salts)
    entries = [salt_entry(s, f"salts[{i}]" if not isinstance(salts, (str, dict)) else "salts")
               for i, s in enumerate(given)]
    names = [e["name"] for e in entries]
    if not names or len(set(names)) != len(names):
        raise ConfigError(f"salts: {salts!r} is not allowed; allowed: one salt name or mixture, or a list of them "
                          "with distinct names")
    check_thresholds(min_water_activity, min_temperature_K)
    if not (np.isfinite(surface_pressure_Pa) and surface_pressure_Pa > 0):
        raise ConfigError(f"surface_pressure_Pa: {shown(surface_pressure_Pa)} is not allowed; allowed: a finite "
                          "number > 0")
    if not (np.isfinite(loading_kg_m2) and loading_kg_m2 > 0):
        raise ConfigError(f"loading_kg_m2: {shown(loading_kg_m2)} is not allowed; allowed: a finite number > 0")
    models = [phase_model(e, law=law, diffusion_length_m=diffusion_length_m, diffusivity_factor=diffusivity_factor,
                          liquid_threshold=liquid_threshold, hydrate_kinetics=hydrate_kinetics) for e in entries]
    if "surface_temperature" not in forcing:
        raise InputDataError("forcing: no 'surface_temperature' variable; required: surface_temperature [K] and "
                             "relative_humidity [1] or vapor_pressure [Pa] on time")
    has_rh, has_e = "relative_humidity" in forcing, "vapor_pressure" in forcing
    if has_rh == has_e:
        raise InputDataError("forcing: " + ("both relative_humidity and vapor_pressure" if has_rh else
                                            "neither relative_humidity nor vapor_pressure")
                             + "; allowed: exactly one of the two")
    t, start = forcing_time(forcing)
    inputs = {}
    for name in FORCING_VARIABLES:
        if name in forcing:
            da = si_units(name, forcing[name])
            if "time" not in da.dims:
                da = da.expand_dims(time=forcing["time"])
            inputs[name] = da
    if "salt_temperature" not in inputs:
        inputs["salt_temperature"] = inputs["surface_temperature"]
    inputs.pop("surface_temperature")
    if "surface_pressure" not in inputs:
        inputs["surface_pressure"] = xr.DataArray(np.full(t.size, float(surface_pressure_Pa)), dims="time")
    if "water_frost" not in inputs:
        inputs["water_frost"] = xr.DataArray(np.zeros(t.size), dims="time")
    temperature_name = "salt_temperature" if "salt_temperature" in forcing else "surface_temperature"
    args = []
    for name in ("salt_temperature", "vapor_pressure" if has_e else "relative_humidity", "surface_pressure",
                 "water_frost"):
        args.append(inputs[name].drop_vars("time", errors="ignore"))
    # a time axis in several dask chunks streams block by block; otherwise one task per chunk of cells
    stream = any(da.chunks is not None and len(da.chunks[da.dims.index("time")]) > 1 for da in args)
    if has_e:
        args[1] = xr.apply_ufunc(_rh_from_vapor, args[1], args[0], dask="parallelized", output_dtypes=[np.float64])
    stat_types = statistic_names()
    out_types = list(stat_types.values())
    core = [[]] * len(stat_types)
    if series:
        out_types += [np.int8 if k in ("phase_state", "validity_flag") else np.float64 for k in PHASE_KEYS]
        core += [["time"]] * len(PHASE_KEYS)
    thresholds = dict(min_water_activity=float(min_water_activity), min_temperature_K=float(min_temperature_K))
    per_salt = []
    for model in models:
        if stream:
            res = _streamed(args, model=model, time_s=t, loading=float(loading_kg_m2), thresholds=thresholds,
                            keep_series=series, temperature_name=temperature_name, stat_types=stat_types)
        else:
            res = xr.apply_ufunc(
                _cells, *args, input_core_dims=[["time"]] * len(args), output_core_dims=core,
                kwargs=dict(model=model, time_s=t, loading=float(loading_kg_m2), thresholds=thresholds,
                            keep_series=series, temperature_name=temperature_name),
                dask="parallelized", output_dtypes=out_types)
        res = res if isinstance(res, tuple) else (res,)
        data = {k: res[i] for i, k in enumerate(stat_types)}
        if series:
            data.update({k: res[len(stat_types) + i] for i, k in enumerate(PHASE_KEYS)})
        per_salt.append(xr.Dataset(data))
    ds = xr.concat(per_salt, dim="salt", coords="minimal", compat="override")
    ds = ds.assign_coords(salt=("salt", np.array([m.tables.name for m in models], dtype=object), attrs("salt")))
    other = [d for d in ds["liquid_hours"].dims if d != "salt"]
    # one transpose of the whole Dataset (reassigning variables one by one trips over a stacked,
    # MultiIndex dimension such as the `cell` of a land-only selection)
    ds = ds.transpose("salt", *(["time"] if series else []), *other)
    for k in stat_types:
        ds[k].attrs = attrs(k)
    t_attrs = time_attrs({"start_utc": start} if start else {})
    if series:
        for k in PHASE_KEYS:
            ds[k].attrs = attrs(k)
        for k, da in zip(("salt_temperature", "relative_humidity", "surface_pressure"), args):
            ds[k] = da.transpose("time", ...)
            ds[k].attrs = attrs(k)
        ds = ds.assign_coords(time=("time", t, t_attrs))
    ds = add_time_bounds(ds, t, 0.0, t_attrs)
    ds.attrs.update(series_attrs(models[0], loading_kg_m2, min_water_activity, min_temperature_K))
    ds.attrs.update(title="wetcycle dataset run: " + ", ".join(m.tables.name for m in models),
                    salt=", ".join(m.tables.name for m in models), **mixture_attrs(entries))
    return ds
