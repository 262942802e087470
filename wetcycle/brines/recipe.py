"""Composition files (TOML) for ``wetcycle brine freeze|evaporate``: reading and validation.

A file holds a name, a ``[composition]`` table of ion = mol per kg of water (Na, K, Mg, Ca, Cl,
SO4, ClO4, and for the carbonate system HCO3, CO3 and dissolved CO2), and optional
``[freeze]`` and ``[evaporate]`` tables with the settings of :func:`wetcycle.brines.freeze`
and :func:`wetcycle.brines.evaporate`; ``examples/brines/`` has examples.  Unknown keys,
bad values and a charge imbalance above 1 % are refused with one line naming the field.
"""

from __future__ import annotations

import math
import tomllib
from pathlib import Path

from ..errors import ConfigError, InputDataError, shown
from .paths import check_co2_pressure, check_composition

#: allowed keys: name -> (type, check description)
FREEZE_KEYS = {
    "temperature_start_K": (float, "150-373.15 K"),
    "temperature_end_K": (float, "150-373.15 K, below the start"),
    "step_K": (float, "a positive number of kelvin"),
    "mode": (str, "equilibrium or fractional"),
    "exclude": (list, "a list of solid names or minerals"),
    "extrapolate_binaries": (bool, "true or false"),
    "mixing": (str, "fitted, start or none"),
    "co2_pressure_Pa": (float, "a CO2 pressure > 0 and <= 2e5 Pa (open system); omit it for a closed system"),
}
EVAPORATE_KEYS = {
    "temperature_K": (float, "150-373.15 K"),
    "step": (float, "a positive step in ln(concentration factor)"),
    "concentration_factor_end": (float, "a number > 1"),
    "mode": (str, "equilibrium or fractional"),
    "exclude": (list, "a list of solid names or minerals"),
    "extrapolate_binaries": (bool, "true or false"),
    "mixing": (str, "fitted, start or none"),
    "co2_pressure_Pa": (float, "a CO2 pressure > 0 and <= 2e5 Pa (open system); omit it for a closed system"),
}
TOP_KEYS = ("name", "description", "composition", "freeze", "evaporate")


def _typed(table, where, keys):
    out = {}
    for k, v in table.items():
        if k not in keys:
            raise ConfigError(f"{where}.{k}: unknown key; allowed: {', '.join(keys)}")
        typ, allowed = keys[k]
        if typ is float:
            if isinstance(v, bool) or not isinstance(v, (int, float)) or not math.isfinite(v):
                raise ConfigError(f"{where}.{k}: {shown(v)} is not allowed; allowed: {allowed}")
            v = float(v)
        elif typ is bool:
            if not isinstance(v, bool):
                raise ConfigError(f"{where}.{k}: {shown(v)} is not allowed; allowed: {allowed}")
        elif typ is str:
            if not isinstance(v, str):
                raise ConfigError(f"{where}.{k}: {shown(v)} is not allowed; allowed: {allowed}")
        elif typ is list:
            if not isinstance(v, list) or not all(isinstance(x, str) for x in v):
                raise ConfigError(f"{where}.{k}: {shown(v)} is not allowed; allowed: {allowed}")
            v = tuple(v)
        out[k] = v
    return out


def read(path):
    """Parse and validate a composition file: dict(name, description, composition, freeze, evaporate)."""
    p = Path(path)
    if not p.is_file():
        raise InputDataError(f"composition file: {str(p)!r} does not exist")
    try:
        doc = tomllib.loads(p.read_text(encoding="utf-8"))
    except (tomllib.TOMLDecodeError, UnicodeDecodeError) as exc:
        raise InputDataError(f"composition file: {p.name} is not valid TOML ({exc})") from None
    for k in doc:
        if k not in TOP_KEYS:
            raise ConfigError(f"{k}: unknown key in {p.name}; allowed: {', '.join(TOP_KEYS)}")
    if "composition" not in doc:
        raise ConfigError(f"composition: missing in {p.name}; allowed: a [composition] table of ion = mol/kg water")
    comp = doc["composition"]
    check_composition(comp)
    out = dict(name=str(doc.get("name", p.stem)), description=str(doc.get("description", "")),
               composition=dict(comp), source=str(p))
    for sect, keys in (("freeze", FREEZE_KEYS), ("evaporate", EVAPORATE_KEYS)):
        t = doc.get(sect, {})
        if not isinstance(t, dict):
            raise ConfigError(f"{sect}: expected a table, got {shown(t)}")
        out[sect] = _typed(t, sect, keys)
        if "co2_pressure_Pa" in out[sect]:
            check_co2_pressure(out[sect]["co2_pressure_Pa"], f"{sect}.co2_pressure_Pa")
    return out
