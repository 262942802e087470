"""Step one salt through a given series: a lab-chamber record, a lander's measurements.

>>> import numpy as np, wetcycle
>>> t = np.arange(0, 7200.0, 60.0)
>>> ds = wetcycle.run_series("NaCl", t, np.full(t.size, 280.0), np.linspace(0.6, 0.9, t.size))
>>> bool(ds.liquid_water[-1] > 0)
True
"""

from __future__ import annotations

import numpy as np
import xarray as xr

from . import __version__
from .errors import ConfigError
from .forcing.prescribed import RANGES
from .phase import PhaseModel
from .vocabulary import attrs

OPTIONS = ("loading_kg_m2", "surface_pressure_Pa", "frost_kg_m2", "layer_thickness_m", "diffusivity_factor")


def run_series(salt, time_s, temperature_K, relative_humidity, *, law="equilibrium", **options):
    """Step one salt through a series and return an ``xarray.Dataset`` over ``time``.

    Parameters
    ----------
    salt : str
        Salt-system name (``wetcycle.salts.names()``).
    time_s : array [s], strictly increasing
    temperature_K : array [K], same length
    relative_humidity : array [-], w.r.t. liquid water, in [0, 1]
    law : {"equilibrium", "vapour_limited"}
    loading_kg_m2 : float [kg m-2], default 0.01
        Anhydrous salt per unit area.
    surface_pressure_Pa : float or array [Pa], default 600
        Gas pressure (sets vapour diffusivity in the vapour-limited law).
    frost_kg_m2 : float or array [kg m-2], default 0
        Water frost in contact with the salt (contact melting at the eutectic).
    layer_thickness_m, diffusivity_factor : vapour-limited law settings
        (see :class:`wetcycle.phase.PhaseModel`).

    Returns
    -------
    xarray.Dataset with ``phase_state``, ``brine_water_activity``, ``liquid_water``
    (> 0 exactly when brine is present), ``liquid_fraction`` (of each step, crossings
    placed inside the step), ``hydrate_water``, ``ice_water``, ``water_exchanged``,
    ``validity_flag`` and the forcing, with CF attributes.

    Raises
    ------
    ConfigError
        For an unknown option, mismatched lengths, non-increasing time, temperature
        outside 50-400 K (the forcing range), RH outside [0, 1] or non-finite values.
    """
    unknown = set(options) - set(OPTIONS)
    if unknown:
        raise ConfigError(f"option: {sorted(unknown)[0]!r} is not known; allowed: {', '.join(OPTIONS)}")
    t = np.asarray(time_s, dtype=float)
    T = np.asarray(temperature_K, dtype=float)
    rh = np.asarray(relative_humidity, dtype=float)
    if t.ndim != 1 or t.size < 2:
        raise ConfigError("time_s: needs a 1-D series of at least two samples")
    for name, a in (("temperature_K", T), ("relative_humidity", rh)):
        if a.shape != t.shape:
            raise ConfigError(f"{name}: length {a.size} differs from time_s ({t.size})")
        if not np.all(np.isfinite(a)):
            raise ConfigError(f"{name}: non-finite value at index {int(np.flatnonzero(~np.isfinite(a))[0])}")
    if np.any(np.diff(t) <= 0):
        raise ConfigError(f"time_s: must increase strictly (index {int(np.flatnonzero(np.diff(t) <= 0)[0]) + 1})")
    lo, hi = RANGES["temperature_K"]
    if np.any((T < lo) | (T > hi)):
        raise ConfigError(f"temperature_K: {float(T[(T < lo) | (T > hi)][0])!r} is outside {lo:g}-{hi:g} K "
                          "(kelvin, not degrees Celsius)")
    if np.any((rh < 0) | (rh > 1)):
        raise ConfigError(f"relative_humidity: {float(rh[(rh < 0) | (rh > 1)][0])!r} is outside [0, 1] (a fraction, not %)")
    loading = options.get("loading_kg_m2", 0.01)
    P = np.broadcast_to(np.asarray(options.get("surface_pressure_Pa", 600.0), dtype=float), t.shape)
    frost = np.broadcast_to(np.asarray(options.get("frost_kg_m2", 0.0), dtype=float), t.shape)
    model = PhaseModel(salt, law=law, layer_thickness_m=options.get("layer_thickness_m", 0.01),
                       diffusivity_factor=options.get("diffusivity_factor", 1.0))
    state = model.initial_state(1, loading, T[0], rh[0])
    dt = np.concatenate([[0.0], np.diff(t)])
    r = model.step(state, T[:, None], rh[:, None], P[:, None], frost[:, None], dt)
    data = {
        "phase_state": r.phase[:, 0].astype(np.int8),
        "brine_water_activity": r.water_activity[:, 0],
        "liquid_water": r.liquid_water[:, 0],
        "hydrate_water": r.hydrate_water[:, 0],
        "ice_water": r.ice_water[:, 0],
        "liquid_fraction": r.liquid_fraction[:, 0],
        "water_exchanged": r.exchanged[:, 0],
        "validity_flag": r.clamped[:, 0].astype(np.int8),
        "salt_temperature": T,
        "relative_humidity": rh,
        "surface_pressure": np.array(P),
    }
    ds = xr.Dataset({k: ("time", v, attrs(k)) for k, v in data.items()}, coords={"time": ("time", t, attrs("time"))})
    ds.attrs.update(title=f"wetcycle series run: {model.tables.name}", salt=model.tables.name, law=model.law,
                    loading_kg_m2=float(loading), wetcycle_version=__version__, Conventions="CF-1.8")
    return ds
