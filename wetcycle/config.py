"""Scenarios: the TOML schema, its validation, and the Scenario object.

A scenario file names the site(s), the forcing, the salts and their
loadings, the time law, the clock, what to save, the habitability thresholds
and the output path.  Every field is validated once here; unknown keys are
rejected; an error is one line naming the field, the value received and what
is allowed (:class:`~wetcycle.errors.ConfigError`).  See ``runs/demo.toml`` for
an annotated example and DEVELOPERS.md for the full list of fields.
"""

from __future__ import annotations

import math
import tomllib
from dataclasses import dataclass, field
from pathlib import Path

from .errors import ConfigError, WetcycleError, shown
from .phase.model import DEFAULTS as PHASE_DEFAULTS
from .phase.model import HYDRATE_KINETICS, TIME_LAWS, hydrate_kinetics, time_law
from .stats import HABITABILITY_DEFAULTS

FORCING_KINDS = ("energy_balance", "prescribed", "chamber", "file")
#: [forcing] fields that only the energy-balance forcing uses (refused with the other kinds)
ENERGY_BALANCE_FIELDS = ("dust_optical_depth", "water_column", "water_column_variable", "water_column_scale",
                         "vapour_mixing_ratio", "seasonal_pressure_cycle", "pressure_scale_height", "layers",
                         "co2_frost", "frost_albedo", "frost_emissivity", "frost_albedo_south",
                         "frost_emissivity_south", "frost_albedo_slope", "frost_albedo_max", "co2_emissivity", "dust_infrared_ratio",
                         "dust_single_scattering_albedo", "dust_asymmetry",
                         "lapse_rate", "wind_speed", "sensor_height", "roughness_length", "adsorption_constant",
                         "adsorption_heat", "specific_surface_area", "water_column_depth")

# field: (type, default, low, high, note)   default REQUIRED means the key must be given
REQUIRED = object()
NUM = (int, float)

#: Allowed ``clock.spinup_shift`` values (see :func:`wetcycle.forcing.driver.spin_up`, ``accelerate``).
SPINUP_SHIFTS = ("bottom", "profile")

SCHEMA = {
    "scenario": {
        "name": (str, REQUIRED, None, None, "a short name"),
        "description": (str, "", None, None, ""),
        "output": (str, None, None, None, "path of the NetCDF result, relative to the scenario file"),
        "planet": (str, "mars", None, None, "mars or earth"),
    },
    "clock": {
        "start_ls": (NUM, 0.0, 0.0, 360.0, "degrees"),
        "mars_year": (int, 36, 1, 200, "Mars year number (Clancy et al. 2000 numbering)"),
        "start_utc": (str, None, None, None, "ISO-8601 UTC start (Earth sites, file forcing)"),
        "years": (NUM, 1.0, 1e-3, 100.0, "years to run after spin-up"),
        "sols": (NUM, None, 1e-3, 1e5, "sols to run (instead of years)"),
        "steps_per_sol": (int, 96, 4, 2000, "steps per sol"),
        "step_s": (NUM, 60.0, 1e-3, 1e5, "seconds per step (chamber forcing)"),
        "spinup_max_years": (int, 10, 0, 60, "cap on energy-balance spin-up years: 0 (none) or 2-60"),
        "spinup_tolerance_K": (NUM, 0.2, 1e-4, 10.0, "periodicity tolerance of the spin-up"),
        "spinup_steps_per_sol": (int, 0, 0, 2000, "steps per sol of the spin-up years: 0 (the run's own) or "
                                 "fewer (backward Euler), then spinup_settle_sols at the run's step"),
        "spinup_settle_sols": (int, 300, 1, 668, "sols before the start run again at the run's step after a "
                               "spin-up at fewer steps"),
        "spinup_shift": (str, "bottom", None, None, "after each spin-up year the ground profile moves by the bottom "
                         "node's offset (bottom) or node by node onto its periodic-state mean (profile)"),
    },
    "site": {
        "name": (str, REQUIRED, None, None, ""),
        "latitude": (NUM, REQUIRED, -90.0, 90.0, "degrees north"),
        "longitude": (NUM, REQUIRED, -360.0, 360.0, "degrees east"),
        "elevation": (NUM, 0.0, -9000.0, 25000.0, "m"),
        "albedo": (NUM, 0.25, 0.0, 1.0, ""),
        "thermal_inertia": (NUM, 250.0, 10.0, 5000.0, "J m-2 K-1 s-1/2"),
        "emissivity": (NUM, 0.95, 0.5, 1.0, ""),
        "slope": (NUM, 0.0, 0.0, 80.0, "degrees"),
        "slope_azimuth": (NUM, 0.0, 0.0, 360.0, "degrees clockwise from north, direction faced"),
        "salt_depth": (NUM, 0.0, 0.0, 1.0, "m below the surface"),
        "density": (NUM, 1500.0, 100.0, 5000.0, "kg m-3"),
        "heat_capacity": (NUM, 800.0, 100.0, 5000.0, "J kg-1 K-1"),
        "ice_table_depth": (NUM, None, 0.001, 10.0, "m; ice-cemented second layer below this depth"),
        "ice_table_thermal_inertia": (NUM, 2000.0, 10.0, 5000.0, "J m-2 K-1 s-1/2"),
        "porosity": (NUM, 0.35, 0.01, 0.9, "regolith porosity"),
    },
    "forcing": {
        "kind": (str, "energy_balance", None, None, " | ".join(FORCING_KINDS)),
        # energy balance (Mars): atmosphere, water supply, surface layer, regolith water
        "dust_optical_depth": (NUM, None, 0.0, 10.0, "constant optical depth at the site; default: the seasonal curve"),
        "water_column": (str, None, None, None, "CSV/NetCDF table of column water on Ls x latitude[ x longitude], "
                                                "relative to the scenario; default: the shipped climatology"),
        "water_column_variable": (str, None, None, None, "variable of a NetCDF water_column table"),
        "water_column_scale": (NUM, 1.0, 0.0, 10.0, "multiplies the water column table (sensitivity studies)"),
        "vapour_mixing_ratio": (NUM, None, 0.0, 0.1, "constant free-atmosphere volume mixing ratio instead of a "
                                                      "column table, mol mol-1"),
        "seasonal_pressure_cycle": (bool, True, None, None, "the landers' seasonal pressure cycle"),
        "pressure_scale_height": (NUM, 10500.0, 1000.0, 50000.0, "m, carries the lander pressure to the site"),
        "layers": (int, None, 8, 200, "regolith layers"),
        "co2_frost": (bool, True, None, None, ""),
        "frost_albedo": (NUM, 0.12, 0.0, 1.0, "CO2 frost albedo without sunlight (A_0), latitudes >= 0"),
        "frost_albedo_south": (NUM, 0.0, 0.0, 1.0, "CO2 frost albedo without sunlight (A_0), latitudes < 0"),
        "frost_albedo_slope": (NUM, 0.0028, 0.0, 0.01, "W-1 m2, CO2 frost albedo gained per W m-2 of daily-mean "
                                                       "insolation"),
        "frost_albedo_max": (NUM, 0.85, 0.0, 1.0, "largest CO2 frost albedo"),
        "frost_emissivity": (NUM, 0.95, 0.5, 1.0, "CO2 frost emissivity, latitudes >= 0"),
        "frost_emissivity_south": (NUM, 0.9, 0.5, 1.0, "CO2 frost emissivity, latitudes < 0"),
        "co2_emissivity": (NUM, 0.17, 0.0, 0.99, "clear CO2 column infrared emissivity at 610 Pa"),
        "dust_infrared_ratio": (NUM, 0.25, 0.0, 2.0, "dust infrared absorption / visible extinction"),
        "dust_single_scattering_albedo": (NUM, 0.93, 0.0, 0.999, "of the dust in sunlight (delta-Eddington layer)"),
        "dust_asymmetry": (NUM, 0.68, 0.0, 0.99, "asymmetry parameter of the dust in sunlight"),
        "lapse_rate": (NUM, 0.0025, 0.0005, 0.009, "K m-1, background atmosphere (water's vertical distribution)"),
        "wind_speed": (NUM, 3.0, 0.1, 50.0, "m s-1 at the sensor height"),
        "sensor_height": (NUM, 1.6, 0.5, 100.0, "m, height of the air temperature and humidity outputs"),
        "roughness_length": (NUM, 0.01, 1e-5, 0.5, "m"),
        "adsorption_constant": (NUM, 0.2, 1e-6, 1e6, "Pa-1, Langmuir constant at 200 K"),
        "adsorption_heat": (NUM, 56000.0, 0.0, 150000.0, "J mol-1"),
        "specific_surface_area": (NUM, 17000.0, 100.0, 1e6, "m2 kg-1 of regolith grains"),
        "water_column_depth": (NUM, 0.3, 0.02, 5.0, "m, depth of the regolith water column"),
        # prescribed
        "temperature_mean": (NUM, None, 50.0, 400.0, "K"),
        "temperature_diurnal_amplitude": (NUM, 0.0, 0.0, 200.0, "K"),
        "temperature_peak_hour": (NUM, 14.0, 0.0, 24.0, "h local true solar time"),
        "temperature_seasonal_amplitude": (NUM, 0.0, 0.0, 200.0, "K"),
        "temperature_peak_ls": (NUM, 270.0, 0.0, 360.0, "degrees"),
        "vapor_pressure_mean": (NUM, None, 0.0, 1e4, "Pa"),
        "vapor_pressure_diurnal_amplitude": (NUM, 0.0, 0.0, 1e4, "Pa"),
        "vapor_pressure_peak_hour": (NUM, 14.0, 0.0, 24.0, "h"),
        "surface_pressure": (NUM, None, 1.0, 2e5, "Pa"),
        # chamber / file
        "programme": (str, None, None, None, "chamber programme TOML, relative to the scenario"),
        "path": (str, None, None, None, "forcing CSV/NetCDF, relative to the scenario"),
        "variables": (dict, None, None, None, "NetCDF forcing: our name = the file's variable"),
        "gap_policy": (str, "refuse", None, None, "refuse | interpolate"),
        "max_gap_s": (NUM, None, 0.0, 1e9, "s"),
    },
    "grid": {
        "lat_min": (NUM, REQUIRED, -90.0, 90.0, "degrees north, centre of the first row"),
        "lat_max": (NUM, REQUIRED, -90.0, 90.0, "degrees north, centre of the last row"),
        "lat_step": (NUM, REQUIRED, 0.01, 90.0, "degrees"),
        "lon_min": (NUM, REQUIRED, -360.0, 360.0, "degrees east"),
        "lon_max": (NUM, REQUIRED, -360.0, 360.0, "degrees east"),
        "lon_step": (NUM, REQUIRED, 0.01, 360.0, "degrees"),
        "mask_abs_latitude_above": (NUM, None, 0.0, 90.0, "skip cells poleward of this latitude"),
        "chunk_cells": (int, 64, 1, 1000000, "cells per chunk"),
        "properties": (str, None, None, None, "NetCDF file of surface properties on (lat, lon)"),
        "property_variables": (dict, None, None, None, "our name = the file's variable name"),
        "probes": (dict, None, None, None, "cells whose full series are saved: name = [latitude, longitude]"),
        "elevation": (NUM, 0.0, -9000.0, 25000.0, "m"),
        "albedo": (NUM, 0.25, 0.0, 1.0, ""),
        "thermal_inertia": (NUM, 250.0, 10.0, 5000.0, "J m-2 K-1 s-1/2"),
        "emissivity": (NUM, 0.95, 0.5, 1.0, ""),
        "salt_depth": (NUM, 0.0, 0.0, 1.0, "m"),
        "porosity": (NUM, 0.35, 0.01, 0.9, "regolith porosity"),
    },
    "salt": {
        "name": (str, REQUIRED, None, None, "a salt system, e.g. NaCl, Mg(ClO4)2; with mixture: the mixture's own name"),
        "loading": (NUM, PHASE_DEFAULTS["loading_kg_m2"], 1e-6, 100.0, "kg m-2 of anhydrous salt"),
        "mixture": (dict, None, None, None, "a salt mixture: salt system = mass fraction of the anhydrous salts "
                    "(adding up to 1)"),
        "ions": (dict, None, None, None, "a salt mixture given as its ions instead: ion = moles in any one unit "
                 "(ratios matter; charge-balanced within 1 %); loading is the salts' mass"),
        "extrapolate_binaries": (bool, False, None, None, "mixture: use its binaries below their validity ranges "
                                 "(flagged)"),
    },
    "phase": {
        "law": (str, PHASE_DEFAULTS["law"], None, None, " | ".join(TIME_LAWS)),
        "diffusion_length": (NUM, PHASE_DEFAULTS["diffusion_length_m"], 1e-7, 1.0,
                             "m: diffusion path through the salt's own crust or grains (vapour-limited law); "
                             "not the overburden"),
        "diffusivity_factor": (NUM, PHASE_DEFAULTS["diffusivity_factor"], 1e-4, 1.0,
                               "porosity/tortuosity factor (vapour-limited law)"),
        "liquid_threshold": (NUM, PHASE_DEFAULTS["liquid_threshold"], 0.0, 0.5,
                             "fraction of the saturated solution's water below which brine is not liquid"),
        "hydrate_kinetics": (str, PHASE_DEFAULTS["hydrate_kinetics"], None, None, " | ".join(HYDRATE_KINETICS)),
        "frost_contact": (bool, True, None, None, "salts touch surface water frost"),
    },
    "output": {
        "series": (bool, True, None, None, "save full time series (site runs)"),
        "ls_bins": (int, 12, 1, 360, "bins of Ls for liquid hours (Mars; Earth: the 12 months)"),
    },
    "habitability": {
        "min_water_activity": (NUM, HABITABILITY_DEFAULTS["min_water_activity"], 0.0, 1.0, ""),
        "min_temperature": (NUM, HABITABILITY_DEFAULTS["min_temperature_K"], 100.0, 400.0, "K"),
    },
}
ARRAYS = ("site", "salt")
OPTIONAL_TABLES = ("grid",)


def schema_markdown():
    """The scenario fields as a Markdown table (the reference section of DEVELOPERS.md)."""
    names = {str: "text", bool: "true/false", int: "integer", dict: "table", NUM: "number", list: "list"}
    lines = ["| table | field | type | default | allowed | unit / meaning |", "|---|---|---|---|---|---|"]
    for table, fields in SCHEMA.items():
        shown_table = f"[[{table}]]" if table in ARRAYS else f"[{table}]"
        for key, (typ, default, lo, hi, doc) in fields.items():
            d = "required" if default is REQUIRED else ("—" if default is None else f"`{default!r}`")
            rng = (f"{lo:g} to {hi:g}" if lo is not None and hi is not None else f">= {lo:g}" if lo is not None
                   else f"<= {hi:g}" if hi is not None else "")
            lines.append(f"| {shown_table} | `{key}` | {names.get(typ, getattr(typ, '__name__', str(typ)))} | "
                         f"{d} | {rng} | {doc.replace('|', '/')} |")
    return "\n".join(lines) + "\n"


def json_schema():
    """The scenario schema as a JSON Schema (draft 2020-12) for editors (``wetcycle schema``).

    Generated from :data:`SCHEMA`: types, defaults, ranges, required keys, unknown keys refused;
    the registries' choices (forcing kinds, time laws) as enums.  TOML maps onto JSON one to one
    for these types.  Checks made after the tables (e.g. a field required by one forcing kind)
    are left to ``wetcycle run``.
    """
    jtypes = {str: "string", bool: "boolean", int: "integer", dict: "object", NUM: "number", list: "array"}
    enums = {("forcing", "kind"): list(FORCING_KINDS), ("phase", "law"): list(TIME_LAWS),
             ("phase", "hydrate_kinetics"): list(HYDRATE_KINETICS)}

    def table(name, fields):
        props, required = {}, []
        for key, (typ, default, lo, hi, note) in fields.items():
            p = {"type": jtypes[typ]}
            if note:
                p["description"] = note
            if default is REQUIRED:
                required.append(key)
            elif default is not None:
                p["default"] = default
            if lo is not None:
                p["minimum"] = lo
            if hi is not None:
                p["maximum"] = hi
            if (name, key) in enums:
                p["enum"] = enums[(name, key)]
            props[key] = p
        out = {"type": "object", "properties": props, "additionalProperties": False}
        if required:
            out["required"] = required
        return out

    props = {}
    for name, fields in SCHEMA.items():
        t = table(name, fields)
        props[name] = ({"type": "array", "minItems": 1, "items": t} if name in ARRAYS else t)
    return {
        "$schema": "https://json-schema.org/draft/2020-12/schema",
        "title": "wetcycle scenario",
        "description": "A wetcycle scenario file (TOML); generated from wetcycle.config.SCHEMA",
        "type": "object", "properties": props, "additionalProperties": False,
        "required": ["scenario", "salt"],
    }


def _check_table(where, table, schema, src):
    if not isinstance(table, dict):
        raise ConfigError(f"{src}: {where}: must be a table")
    unknown = sorted(set(table) - set(schema))
    if unknown:
        raise ConfigError(f"{src}: {where}.{unknown[0]}: unknown key; allowed: {', '.join(schema)}")
    out = {}
    for key, (typ, default, lo, hi, note) in schema.items():
        name = f"{where}.{key}"
        if key not in table:
            if default is REQUIRED:
                raise ConfigError(f"{src}: {name}: missing ({note})" if note else f"{src}: {name}: missing")
            out[key] = default
            continue
        v = table[key]
        ok = isinstance(v, typ) and not (typ is not bool and isinstance(v, bool))
        if typ == NUM and isinstance(v, bool):
            ok = False
        if not ok:
            want = {str: "a string", bool: "true or false", int: "an integer",
                    dict: "a table"}.get(typ, "a number")
            raise ConfigError(f"{src}: {name}: {shown(v)} is not {want}")
        if typ is dict:
            out[key] = dict(v)
            continue
        if typ in (NUM, int):
            if not math.isfinite(v) or (lo is not None and v < lo) or (hi is not None and v > hi):
                raise ConfigError(f"{src}: {name}: {shown(v)} is outside the allowed range {lo:g} to {hi:g}"
                                  + (f" ({note})" if note else ""))
        out[key] = v
    return out


@dataclass(frozen=True)
class Scenario:
    """A validated scenario.  Build with :func:`load_scenario` or :func:`scenario_from_dict`."""

    name: str
    tables: dict = field(repr=False)
    sites: tuple = field(repr=False)
    salts: tuple = field(repr=False)
    text: str = field(repr=False, default="")
    base_dir: Path = field(repr=False, default=Path("."))
    source: str = "scenario"

    def __getitem__(self, table):
        return self.tables[table]

    def resolve(self, rel):
        """A path given in the scenario, relative to the scenario file's folder."""
        p = Path(rel)
        return p if p.is_absolute() else (self.base_dir / p)

    @property
    def output_path(self):
        out = self.tables["scenario"]["output"]
        return self.resolve(out) if out else self.resolve(f"{self.name}/{self.name}.nc")


def scenario_from_dict(doc, *, text="", base_dir=".", source="scenario"):
    """Validate a scenario given as a dict (the parsed TOML)."""
    if not isinstance(doc, dict):
        raise ConfigError(f"{source}: must be a table of tables")
    unknown = sorted(set(doc) - set(SCHEMA))
    if unknown:
        raise ConfigError(f"{source}: [{unknown[0]}]: unknown table; allowed: {', '.join(SCHEMA)}")
    tables = {}
    for t, schema in SCHEMA.items():
        if t in ARRAYS:
            continue
        if t in OPTIONAL_TABLES:
            tables[t] = _check_table(t, doc[t], schema, source) if t in doc else None
            continue
        tables[t] = _check_table(t, doc.get(t, {}), schema, source)
    grid = tables["grid"]
    if grid is not None:
        if "site" in doc:
            raise ConfigError(f"{source}: [grid] and [[site]]: give one or the other, not both")
        if grid["lat_max"] < grid["lat_min"] or grid["lon_max"] < grid["lon_min"]:
            raise ConfigError(f"{source}: grid: lat_max/lon_max must not be below lat_min/lon_min")
        fk_, fp_ = tables["forcing"]["kind"], tables["forcing"]["path"]
        if not (fk_ == "energy_balance" or (fk_ == "file" and str(fp_).lower().endswith((".nc", ".nc4", ".cdf")))):
            raise ConfigError(f"{source}: grid: forcing.kind = {fk_!r} is not allowed for a grid; allowed: "
                              "energy_balance, or file with a NetCDF forcing.path on (time, lat, lon)")
        doc = dict(doc, site=grid_sites(grid, base_dir=Path(base_dir), source=source))
        tables["output"]["series"] = False  # a grid keeps statistics only
    lists = {}
    for t in ARRAYS:
        items = doc.get(t, [])
        if isinstance(items, dict):
            items = [items]
        if not isinstance(items, list) or not items:
            raise ConfigError(f"{source}: [[{t}]]: at least one is required")
        lists[t] = tuple(_check_table(f"{t}[{i + 1}]", it, SCHEMA[t], source) for i, it in enumerate(items))
    sc = tables["scenario"]
    if sc["planet"] not in ("mars", "earth"):
        raise ConfigError(f"{source}: scenario.planet: {sc['planet']!r} is not one of mars, earth")
    fk = tables["forcing"]["kind"]
    if fk not in FORCING_KINDS:
        raise ConfigError(f"{source}: forcing.kind: {fk!r} is not one of {', '.join(FORCING_KINDS)}")
    f = tables["forcing"]
    if fk == "energy_balance" and sc["planet"] != "mars":
        raise ConfigError(f"{source}: forcing.kind: energy_balance is available for planet mars only")
    if fk == "prescribed":
        for key in ("temperature_mean", "vapor_pressure_mean"):
            if f[key] is None:
                raise ConfigError(f"{source}: forcing.{key}: required for forcing.kind = prescribed")
    if fk == "chamber" and not f["programme"]:
        raise ConfigError(f"{source}: forcing.programme: required for forcing.kind = chamber")
    if fk == "file" and not f["path"]:
        raise ConfigError(f"{source}: forcing.path: required for forcing.kind = file")
    raw_forcing = doc.get("forcing", {}) if isinstance(doc.get("forcing", {}), dict) else {}
    if fk != "energy_balance":
        ignored = [k for k in ENERGY_BALANCE_FIELDS if k in raw_forcing]
        if ignored:
            raise ConfigError(f"{source}: forcing.{ignored[0]}: applies to forcing.kind = energy_balance only "
                              f"(this scenario's kind is {fk}); remove it")
    if f["water_column"] is not None and f["vapour_mixing_ratio"] is not None:
        raise ConfigError(f"{source}: forcing.water_column and forcing.vapour_mixing_ratio: give one or the "
                          "other (or neither, for the shipped climatology)")
    if f["water_column_variable"] is not None and f["water_column"] is None:
        raise ConfigError(f"{source}: forcing.water_column_variable: given without forcing.water_column")
    if f["gap_policy"] not in ("refuse", "interpolate"):
        raise ConfigError(f"{source}: forcing.gap_policy: {f['gap_policy']!r} is not one of refuse, interpolate")
    raw_clock = doc.get("clock", {})
    if isinstance(raw_clock, dict) and "years" in raw_clock and "sols" in raw_clock:
        raise ConfigError(f"{source}: clock.sols and clock.years: give one or the other, not both "
                          f"(got sols = {raw_clock['sols']!r}, years = {raw_clock['years']!r})")
    if isinstance(raw_clock, dict):
        if fk == "chamber":
            ignored = sorted(set(raw_clock) - {"step_s"})
            if ignored:
                raise ConfigError(f"{source}: clock.{ignored[0]}: not used by a chamber programme (its segments set "
                                  "the time); allowed in [clock]: step_s")
        elif "step_s" in raw_clock:
            raise ConfigError(f"{source}: clock.step_s: used by chamber programmes only; forcing.kind = {fk!r} "
                              "steps by clock.steps_per_sol")
    if sc["planet"] == "earth" and tables["output"]["ls_bins"] != 12:
        raise ConfigError(f"{source}: output.ls_bins: {tables['output']['ls_bins']} is not allowed for planet earth; "
                          "Earth runs bin by calendar month: allowed 12")
    sols = tables["clock"]["sols"]
    if sols is not None and sols != int(sols):
        raise ConfigError(f"{source}: clock.sols: {shown(sols)} is not a whole number; allowed: whole sols "
                          f"(the clock runs whole sols), e.g. {int(sols) or 1} or {int(sols) + 1}")
    c = tables["clock"]
    if c["spinup_steps_per_sol"] > c["steps_per_sol"]:
        raise ConfigError(f"{source}: clock.spinup_steps_per_sol: {c['spinup_steps_per_sol']} is more than "
                          f"steps_per_sol ({c['steps_per_sol']}); allowed 0 (the run's own step) or 1 to "
                          f"{c['steps_per_sol']}")
    if c["spinup_shift"] not in SPINUP_SHIFTS:
        raise ConfigError(f"{source}: clock.spinup_shift: {shown(c['spinup_shift'])} is not allowed; allowed: "
                          f"{', '.join(SPINUP_SHIFTS)}")
    if tables["clock"]["spinup_max_years"] == 1:
        raise ConfigError(f"{source}: clock.spinup_max_years: 1 is not allowed; 0 (no spin-up) or 2-60 "
                          "(periodicity needs two years to compare)")
    try:
        tables["phase"]["law"] = time_law(tables["phase"]["law"])
        tables["phase"]["hydrate_kinetics"] = hydrate_kinetics(tables["phase"]["hydrate_kinetics"])
    except WetcycleError as exc:
        raise ConfigError(f"{source}: phase.{exc}") from None
    from .salts import load as load_salt
    names = []
    for i, s in enumerate(lists["salt"]):
        if s["ions"] is not None:
            if s["mixture"] is not None:
                raise ConfigError(f"{source}: salt[{i + 1}].ions: give a mixture as salts (mixture) or as ions "
                                  "(ions), not both")
            from .brines.mixture import parse_ions
            try:
                s["mixture"] = parse_ions(s["ions"], f"salt[{i + 1}].ions")[0]
            except WetcycleError as exc:
                raise ConfigError(f"{source}: {exc}") from None
        if s["mixture"] is not None:
            from .brines.mixture import parse_mixture
            try:
                s["mixture"] = parse_mixture(s["mixture"], f"salt[{i + 1}].mixture")[0]
            except WetcycleError as exc:
                raise ConfigError(f"{source}: {exc}") from None
            if not s["name"].strip():
                raise ConfigError(f"{source}: salt[{i + 1}].name: a mixture needs a name")
        else:
            if s["extrapolate_binaries"]:
                raise ConfigError(f"{source}: salt[{i + 1}].extrapolate_binaries: applies to a mixture only; "
                                  "allowed: give mixture = {{ salt = mass fraction, ... }} or remove it")
            try:
                s["name"] = load_salt(s["name"]).name
            except WetcycleError as exc:
                raise ConfigError(f"{source}: salt[{i + 1}].name: {exc}") from None
        if s["name"] in names:
            raise ConfigError(f"{source}: salt[{i + 1}].name: {s['name']!r} is listed twice")
        names.append(s["name"])
    site_names = [s["name"] for s in lists["site"]]
    if len(set(site_names)) != len(site_names):
        raise ConfigError(f"{source}: site.name: site names must be unique, got {site_names}")
    return Scenario(name=sc["name"], tables=tables, sites=lists["site"], salts=lists["salt"],
                    text=text, base_dir=Path(base_dir), source=source)


GRID_PROPERTIES = ("elevation", "albedo", "thermal_inertia", "emissivity", "salt_depth", "porosity")


def _property_maps(grid, lats, lons, base_dir, source):
    """Surface properties on the grid from ``grid.properties`` (NetCDF, variables on lat/lon).

    Each mapped variable is taken at the nearest file cell within half a grid step; a NaN masks
    the cell; properties the mapping does not name keep the grid-wide value.
    """
    import numpy as np
    import xarray as xr
    mapping = grid["property_variables"] or {}
    unknown = sorted(set(mapping) - set(GRID_PROPERTIES))
    if unknown:
        raise ConfigError(f"{source}: grid.property_variables.{unknown[0]}: unknown; allowed: "
                          f"{', '.join(GRID_PROPERTIES)}")
    path = Path(grid["properties"])
    path = path if path.is_absolute() else base_dir / path
    try:
        ds = xr.open_dataset(path)
    except (OSError, ValueError) as exc:
        raise ConfigError(f"{source}: grid.properties: {str(path)!r} could not be read as NetCDF ({exc})") from None
    with ds:
        if "lat" not in ds.coords or "lon" not in ds.coords:
            raise ConfigError(f"{source}: grid.properties: {path.name} needs lat and lon coordinates")
        out = {}
        for ours, theirs in mapping.items():
            if theirs not in ds:
                raise ConfigError(f"{source}: grid.property_variables.{ours}: {theirs!r} is not in {path.name}; "
                                  f"it has {', '.join(map(str, ds.data_vars))}")
            try:
                v = ds[theirs].sel(lat=lats, lon=lons, method="nearest",
                                   tolerance=0.5 * min(grid["lat_step"], grid["lon_step"]))
            except KeyError:
                raise ConfigError(f"{source}: grid.properties: {path.name} does not cover the grid "
                                  f"(variable {theirs!r})") from None
            out[ours] = np.asarray(v.transpose("lat", "lon").values, dtype=float)
    return out


def grid_sites(grid, base_dir=Path("."), source="scenario"):
    """The cells of a ``[grid]`` table as site tables (row-major, south to north, west to east)."""
    lats, lons = grid_axes(grid)
    maps = _property_maps(grid, lats, lons, base_dir, source) if grid["properties"] else {}
    out = []
    for i, la in enumerate(lats):
        if grid["mask_abs_latitude_above"] is not None and abs(la) > grid["mask_abs_latitude_above"]:
            continue
        for j, lo in enumerate(lons):
            props = {k: (float(maps[k][i, j]) if k in maps else grid[k]) for k in GRID_PROPERTIES}
            if any(v != v for v in props.values()):
                continue  # a NaN property masks the cell
            out.append({"name": f"cell_{i}_{j}", "latitude": float(la), "longitude": float(lo), **props})
    if not out:
        raise ConfigError(f"{source}: grid: every cell is masked")
    return out


def grid_axes(grid):
    """Latitude and longitude centres [degrees] of a ``[grid]`` table.

    Centres run from the minimum in whole steps up to the maximum, never past it (a step that
    does not divide the span stops short of the maximum).
    """
    import numpy as np
    n_lat = int(np.floor((grid["lat_max"] - grid["lat_min"]) / grid["lat_step"] + 1e-9)) + 1
    n_lon = int(np.floor((grid["lon_max"] - grid["lon_min"]) / grid["lon_step"] + 1e-9)) + 1
    return (grid["lat_min"] + grid["lat_step"] * np.arange(n_lat),
            grid["lon_min"] + grid["lon_step"] * np.arange(n_lon))


def load_scenario(path):
    """Read and validate a scenario TOML file."""
    path = Path(path)
    if not path.is_file():
        raise ConfigError(f"scenario: {str(path)!r} is not a file")
    raw = path.read_bytes()
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError:
        text = None
    if text is None or "\x00" in text:
        raise ConfigError(f"scenario: {str(path)!r} is not a text TOML file (not UTF-8 text); allowed: a "
                          "scenario written as TOML, e.g. runs/demo.toml")
    try:
        doc = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise ConfigError(f"{path.name}: not valid TOML: {exc}") from None
    return scenario_from_dict(doc, text=text, base_dir=path.parent, source=path.name)
