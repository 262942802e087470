"""Results as xarray Datasets with CF attributes; NetCDF writing and reading.

Every attribute comes from :mod:`wetcycle.vocabulary`.  The file's global
attributes carry the full scenario text and the package version so that a
result reproduces its run, and the cautions line.  Files are written to a
temporary name in the target folder and renamed into place, so a failed or
interrupted write never leaves a half-written result.
"""

from __future__ import annotations

import datetime as _dt
import json
import os
import sys
import tempfile
from pathlib import Path

import numpy as np
import xarray as xr

from . import __version__
from .errors import ConfigError, InputDataError, OutputError
from .phase.model import phase_settings_attrs
from .vocabulary import CRS, attrs

CAUTION = ("Model estimates with stated uncertainties, not evidence of liquid water or of life. "
           "Planetary-protection decisions belong to the official policy and its review bodies; "
           "the habitability thresholds used here are settings, not rulings.")
#: What the humidity of an energy-balance (Mars) run rests on, added to its caution.
WATER_CAUTION = ("On Mars the humidity the salts see rests on an atmospheric water column from a climatology "
                 "reconstructed from memory of spacecraft retrievals (or the user's table; see water_supply), "
                 "a one-node near-surface air layer and adsorption constants tuned to two landers' humidity "
                 "records; salts are alternatives that may take up more water than the surface layer "
                 "delivered (see uptake_exceeds_supply_steps).")

STAT_DIMS = {"liquid_hours_by_ls": ("salt", "site", "ls_bin"),
             "liquid_hours_by_local_time": ("salt", "site", "hour_bin")}


def _ion_molality(phase_series):
    """(ion names, array [salt, site, time, ion]) of the mixtures' brine ions, or None without mixtures.

    Ions are the union over the mixtures; a salt or mixture without an ion holds NaN for it.
    """
    ions = []
    for ps in phase_series:
        for i in ps.get("_ions", ()):
            if i not in ions:
                ions.append(i)
    if not ions:
        return None
    first = np.concatenate(phase_series[0]["liquid_water"], axis=0)
    n_t, n_site = first.shape
    arr = np.full((len(phase_series), n_site, n_t, len(ions)), np.nan, dtype=np.float32)
    for j, ps in enumerate(phase_series):
        if "_ion_molality" in ps:
            a = np.concatenate(ps["_ion_molality"], axis=0)  # [time, site, ion]
            for q, ion in enumerate(ps["_ions"]):
                arr[j, :, :, ions.index(ion)] = a[:, :, q].T
    return ions, arr


def mixture_attrs(sc):
    """Global attributes describing the scenario's salt mixtures ({} without any).

    ``sc``: a scenario, or a list of its ``[[salt]]``-like entries (``run_series``, ``run_dataset``).
    """
    entries = sc if isinstance(sc, (list, tuple)) else sc.salts
    mixes = {s["name"]: {("composition_ion_mole_fraction" if "ions" in s["mixture"] else "composition_mass_fraction"):
                         s["mixture"].get("ions", s["mixture"]),
                         "extrapolate_binaries": bool(s.get("extrapolate_binaries", False))}
             for s in entries if s.get("mixture")}
    if not mixes:
        return {}
    from .phase.mixture_model import NOTES
    return {"mixtures": json.dumps(mixes, sort_keys=True),
            "mixture_model": "equilibrium tables per mixture from the multicomponent Pitzer model "
                             "(wetcycle.brines.mixture); " + NOTES}


def build_dataset(sc, src, stats, series=None, phase_series=None):
    """Assemble the result of a run (see /DEVELOPERS.md "Result files" for the layout)."""
    planet = sc["scenario"]["planet"]
    att = lambda name: attrs(name, planet=planet)
    salts = [s["name"] for s in sc.salts]
    sites = [s["name"] for s in sc.sites]
    n_ls = sc["output"]["ls_bins"]
    coords = {
        "site": ("site", np.array(sites, dtype=object), att("site")),
        "salt": ("salt", np.array(salts, dtype=object), att("salt")),
        "latitude": ("site", np.array([s["latitude"] for s in sc.sites]), att("latitude")),
        "longitude": ("site", np.array([s["longitude"] for s in sc.sites]), att("longitude")),
        "ls_bin": ("ls_bin", (np.arange(n_ls) + 0.5) * 360.0 / n_ls, att("ls_bin")),
        "hour_bin": ("hour_bin", np.arange(24) + 0.5, att("hour_bin")),
    }
    data = {}
    for name in stats[0]:
        dims = STAT_DIMS.get(name, ("salt", "site"))
        arr = np.stack([st[name].T if name in STAT_DIMS else st[name] for st in stats])
        data[name] = (dims, arr, att(name))
    t = np.asarray(src.time_s, dtype=float)
    t_attrs = time_attrs(src.info)
    if series is not None:
        coords["time"] = ("time", t, t_attrs)
        sol_attrs = att("sol")
        if planet == "earth":
            sol_attrs["long_name"] = "day number since the start of the run"
        coords["sol"] = ("time", np.asarray(src.sol), sol_attrs)
        coords["solar_longitude"] = ("time", np.asarray(src.ls_deg, dtype=float), att("solar_longitude"))
        coords["local_solar_time"] = (("site", "time"), np.asarray(src.ltst_h, dtype=float).T,
                                      att("local_solar_time"))
        for k, parts in series.items():
            data[k] = (("site", "time"), np.concatenate(parts, axis=0).T, att(k))
        ion_var = _ion_molality(phase_series)
        if ion_var is not None:
            coords["ion"] = ("ion", np.array(ion_var[0], dtype=object), att("ion"))
            data["ion_molality"] = (("salt", "site", "time", "ion"), ion_var[1], att("ion_molality"))
        for k in phase_series[0]:
            if k in ("_ion_molality", "_ions"):
                continue
            if k == "_initial_water":
                data["initial_water"] = (("salt", "site"), np.stack([ps[k] for ps in phase_series]),
                                         att("initial_water"))
                continue
            arr = np.stack([np.concatenate(ps[k], axis=0).T for ps in phase_series])
            data[k] = (("salt", "site", "time"), arr, att(k))
    ds = xr.Dataset(data, coords=coords)
    step = float(t[1] - t[0]) if t.size > 1 else 0.0
    ds = add_time_bounds(ds, t, step, t_attrs)
    ds = add_crs(ds, planet)
    from .runner import bin_coverage
    ds = frame_statistics(ds, sc, bin_coverage(sc, src))
    tables = dict(sc.tables, site=list(sc.sites), salt=list(sc.salts))
    hab = sc["habitability"]
    ds.attrs.update(
        title=f"wetcycle result: {sc.name}",
        scenario_name=sc.name,
        scenario=sc.text or json.dumps(tables, default=str, indent=1),
        wetcycle_version=__version__,
        created=_dt.datetime.now(_dt.timezone.utc).strftime("%Y-%m-%dT%H:%M:%SZ"),
        caution=CAUTION + (" " + WATER_CAUTION if sc["forcing"]["kind"] == "energy_balance" else ""),
        Conventions="CF-1.8",
        planet=planet,
        forcing=sc["forcing"]["kind"],
        law=sc["phase"]["law"],
        years=float(src.years),
        **mixture_attrs(sc),
        steps_per_sol=int(src.steps_per_sol),
        habitability_min_water_activity=float(hab["min_water_activity"]),
        habitability_min_temperature_K=float(hab["min_temperature"]),
        spinup_years=int(src.info.get("spinup_years", 0)),
        **phase_settings_attrs(sc["phase"]),
    )
    for key in ("start_utc", "forcing_file", "forcing_file_sha256", "forcing_programme_text", "water_supply",
                "water_supply_sha256", "dust_model", "pressure_model"):
        if src.info.get(key):
            ds.attrs[key] = str(src.info[key])
    if src.info.get("forcing") == "energy_balance":
        ds.attrs["spinup_converged"] = int(bool(src.info.get("spinup_converged")))
        if int(sc["clock"]["spinup_max_years"]) > 0:
            ds.attrs.update(spinup_attrs(sc))
    if sc["forcing"]["kind"] != "chamber":
        note_short_run(ds, float(src.years), planet)
    return ds


def frame_statistics(ds, sc, coverage):
    """Name the season bins by what they are (design decision 7) and say how often each was simulated.

    Mars: ``liquid_hours_by_ls`` on ``ls_bin`` with ``ls_bin_coverage``.  Earth: the bins are
    calendar months: ``liquid_hours_by_month`` on ``month`` (1-12) with ``month_coverage``.  A
    chamber programme has neither season bins nor local-time bins (no sun, no season).
    """
    planet = sc["scenario"]["planet"]
    if coverage is None:
        return ds.drop_vars([v for v in ("liquid_hours_by_ls", "ls_bin", "hour_bin") if v in ds.variables])
    if planet == "earth":
        ds = ds.rename({"liquid_hours_by_ls": "liquid_hours_by_month", "ls_bin": "month"})
        ds = ds.assign_coords(month=("month", np.arange(1, 13, dtype=np.int32), attrs("month")))
        ds["liquid_hours_by_month"].attrs = attrs("liquid_hours_by_month", planet=planet)
        ds["liquid_hours_by_month"].attrs["grid_mapping"] = "crs"
        return ds.assign_coords(month_coverage=("month", coverage, attrs("month_coverage")))
    return ds.assign_coords(ls_bin_coverage=("ls_bin", coverage, attrs("ls_bin_coverage")))


PER_YEAR = ("liquid_hours_per_year", "liquid_water_hours_per_year", "habitable_hours_per_year", "wet_events_per_year",
            "liquid_hours_by_local_time")


def spinup_attrs(sc):
    """Global attributes of an energy-balance spin-up's discretisation (the steps per sol of its
    years and, when fewer than the run's, the sols run again at the run's step; the profile shift
    when not the default)."""
    c = sc["clock"]
    n = int(c["spinup_steps_per_sol"]) or int(c["steps_per_sol"])
    out = {"spinup_steps_per_sol": n}
    if n < int(c["steps_per_sol"]):
        out["spinup_settle_sols"] = int(c["spinup_settle_sols"])
    if c.get("spinup_shift", "bottom") != "bottom":
        out["spinup_shift"] = str(c["spinup_shift"])
    return out


def note_short_run(ds, years, planet):
    """Per-year figures of a run shorter than a year say so (issue 11): a comment on each."""
    if np.isfinite(years) and years < 1.0:
        for k in PER_YEAR:
            if k in ds:
                ds[k].attrs["comment"] = (f"scaled to one {planet.capitalize()} year from {years:.3g} year(s) "
                                          "simulated: not a statistic of a whole year")
    return ds


def time_attrs(info):
    """CF attributes of the time coordinate of a run described by ``info`` (its start date)."""
    t_attrs = attrs("time")
    if info.get("start_utc"):
        # CF-1.8 sec. 4.4: a time coordinate's units name its reference date
        t_attrs.update(units=f"seconds since {info['start_utc']}", calendar="standard")
    else:
        # no date (a chamber programme, a series of elapsed seconds): elapsed seconds, not a
        # CF time coordinate
        t_attrs.pop("standard_name", None)
        t_attrs.pop("axis", None)
        t_attrs["long_name"] = ("time since the start of the programme" if info.get("forcing") == "chamber"
                                else "time since the start of the series")
    return t_attrs


def add_time_bounds(ds, t, first_step_s, t_attrs):
    """Time bounds (CF-1.8 sec. 7.1) for a result whose samples ``t`` [s] end their steps.

    Step k of the phase model ends at sample k and starts at sample k - 1 (the first step lasts
    ``first_step_s``).  A result with a ``time`` dimension gets per-step bounds; every result gets
    the scalar coordinate ``period`` (the end of the run) whose bounds are the whole simulated
    period, the cell over which the statistics' ``cell_methods`` reduce.
    """
    t = np.asarray(t, dtype=float)
    start = np.concatenate([[t[0] - first_step_s], t[:-1]])
    if "time" in ds.dims:
        ds = ds.assign_coords(time=("time", t, dict(t_attrs, bounds="time_bounds")))
        ds = ds.assign_coords(time_bounds=(("time", "nv"), np.stack([start, t], axis=1)))
    pa = dict(t_attrs, long_name=attrs("period")["long_name"], bounds="period_bounds")
    pa.pop("axis", None)
    ds = ds.assign_coords(period=((), t[-1], pa), period_bounds=(("nv",), np.array([start[0], t[-1]])))
    return ds


def add_crs(ds, planet):
    """The grid-mapping variable ``crs`` (CF-1.8 sec. 5.6) of the planet's body-fixed frame.

    Every variable on the horizontal dimensions (``site`` or ``lat``/``lon``) names it in
    ``grid_mapping``.
    """
    ds = ds.assign(crs=((), np.int32(0), dict(CRS[planet], long_name=f"coordinate reference system ({planet})")))
    horiz = {"site", "lat", "lon"}
    for name, v in ds.data_vars.items():
        if horiz & set(v.dims):
            v.attrs["grid_mapping"] = "crs"
    return ds


def check_output_path(path, field="output", *, allow_zarr=False):
    """Refuse, before any computing, a result path that cannot be written.

    The path must name a file (not an existing folder, not ending in a path separator) whose folder
    exists or can be created and accepts new files; with ``allow_zarr`` a path ending in ``.zarr``
    (a zarr store, which is a folder) is allowed too.  Returns the path.
    """
    raw = str(path)
    path = Path(path)
    zarr = allow_zarr and path.suffix.lower() == ".zarr" and not raw.endswith(("/", os.sep))
    if not zarr and (raw.endswith(("/", os.sep)) or path.is_dir()):
        raise ConfigError(f"{field}: {raw!r} is a folder; allowed: a file path such as {str(path / 'result.nc')!r}")
    # folders are created only when the result is written: look at the nearest existing one
    parent = path.parent
    existing = parent
    while not existing.exists() and existing != existing.parent:
        existing = existing.parent
    try:
        if not existing.is_dir():
            raise NotADirectoryError(20, "Not a directory")
        if existing == parent:
            fd, probe = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".probe", dir=parent)
            os.close(fd)
            os.remove(probe)
        elif not os.access(existing, os.W_OK | os.X_OK):
            raise PermissionError(13, "Permission denied")
    except OSError as exc:
        raise ConfigError(f"{field}: {raw!r} cannot be written ({exc.strerror or exc}); allowed: a file in a "
                          "writable folder") from None
    if path.exists() and not os.access(path, os.W_OK) and not zarr:
        raise ConfigError(f"{field}: {raw!r} exists and is not writable; allowed: a writable file path")
    return path


def _history_line():
    """One line of the CF ``history`` attribute: time, program and how it was called."""
    now = _dt.datetime.now(_dt.timezone.utc).strftime("%Y-%m-%dT%H:%M:%SZ")
    argv0 = Path(sys.argv[0]).name if sys.argv and sys.argv[0] else ""
    how = " ".join(["wetcycle"] + sys.argv[1:]) if argv0 == "wetcycle" else "the Python API"
    return f"{now}: written by wetcycle {__version__} ({how})"


def cf_encoded(ds):
    """``ds`` made ready for a CF-1.8 NetCDF file, and its encoding.

    * Labels (``salt``, ``site``, ...) become character arrays (``char`` with a length dimension):
      NC_STRING is not in the classic data model many readers and checkers expect.
    * 64-bit integers become 32-bit (CF-1.8 sec. 2.2 lists no int64); booleans become bytes.
    * ``flag_values`` / ``flag_masks`` take the type of their variable (CF-1.8 sec. 3.5).
    * Coordinate and bounds variables get no ``_FillValue`` (CF-1.8 sec. 2.5.1).
    * Floating-point data are compressed (zlib, level 4).
    * A line is added to the ``history`` attribute (CF-1.8 sec. 2.6.2).
    """
    ds = ds.copy()
    bounds = {v.attrs["bounds"] for v in ds.variables.values() if "bounds" in v.attrs}
    enc = {}
    for name in list(ds.variables):
        v = ds[name].variable
        e = {}
        if v.dtype.kind in "OUS":
            e.update(dtype="S1", char_dim_name=f"{name}_strlen")
        elif v.dtype == np.bool_:
            ds[name] = ds[name].astype(np.int8)
        elif v.dtype.kind in "iu" and v.dtype.itemsize > 4:
            vals = np.asarray(v.values)
            if vals.size and (vals.max() > np.iinfo(np.int32).max or vals.min() < np.iinfo(np.int32).min):
                ds[name] = ds[name].astype(np.float64)  # does not fit: kept exact as a double
            else:
                ds[name] = ds[name].astype(np.int32)
        v = ds[name].variable
        for key in ("flag_values", "flag_masks"):
            if key in v.attrs:
                v.attrs[key] = np.asarray(v.attrs[key], dtype=v.dtype)
        if name in ds.coords or name in bounds:
            e["_FillValue"] = None
        elif v.dtype.kind == "f":
            e.update(zlib=True, complevel=4)
        if e:
            enc[name] = e
    hist = ds.attrs.get("history", "")
    ds.attrs["history"] = (hist + "\n" if hist else "") + _history_line()
    return ds, enc


def write_result(ds, path):
    """Write ``ds`` to NetCDF at ``path`` atomically (temporary file + rename), CF-encoded."""
    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    ds, enc = cf_encoded(ds)
    try:
        fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".tmp", dir=path.parent)
    except OSError as exc:
        raise _write_error(exc, path) from None
    os.close(fd)
    try:
        ds.to_netcdf(tmp, engine="netcdf4", encoding=enc)
        set_new_file_mode(tmp)
        os.replace(tmp, path)
    except BaseException as exc:
        if os.path.exists(tmp):
            os.remove(tmp)
        if isinstance(exc, (OSError, RuntimeError)):
            raise _write_error(exc, path) from None
        raise
    return path


def _write_error(exc, path):
    """One line for a failed write: "no space left on <folder>" when the disk is full.

    The NetCDF library reports a full disk as "NetCDF: HDF error"; the free space of the folder
    (after the partial file is removed) tells a full disk from other failures.
    """
    import errno

    folder = path.parent
    full = getattr(exc, "errno", None) == errno.ENOSPC
    if not full:
        try:
            st = os.statvfs(folder)
            full = st.f_bavail * st.f_frsize < (1 << 20)  # under 1 MiB left
        except OSError:
            pass
    if full:
        return OutputError(f"output: no space left on {str(folder)!r} to write {path.name}; free some space or "
                           "choose another output")
    msg = str(getattr(exc, "strerror", None) or exc).splitlines()[0] if str(exc) else type(exc).__name__
    return OutputError(f"output: {str(path)!r} could not be written ({msg})")


def _read_umask():
    mask = os.umask(0)
    os.umask(mask)
    return mask


#: The process umask, read once at import (reading it means setting it, which is not thread-safe).
_UMASK = _read_umask()


def set_new_file_mode(path):
    """Give a file made by ``tempfile.mkstemp`` (mode 0600) the mode of an ordinary new file."""
    os.chmod(path, 0o666 & ~_UMASK)


def open_result(path):
    """Read a result file written by wetcycle back into an ``xarray.Dataset``."""
    path = Path(path)
    if not path.is_file():
        raise InputDataError(f"result: {str(path)!r} is not a file")
    try:
        # decoded as xarray decodes any CF file: times with a reference date become dates
        ds = xr.open_dataset(path, engine="netcdf4")
        ds.load()
        ds.close()
    except (OSError, ValueError) as exc:
        raise InputDataError(f"result: {path.name} could not be read as NetCDF: {exc}") from None
    if "liquid_hours_per_year" not in ds:
        raise InputDataError(f"result: {path.name} is not a wetcycle result (no liquid_hours_per_year)")
    return ds


def _per_year(ds):
    return "liquid_hours_per_year" in ds


def summary_rows(ds):
    """Rows (site, salt, liquid h, longest spell h, wet events, habitable h, T range, a_w range).

    Liquid hours, wet events and habitable hours are per year when the result has per-year
    figures, else totals over the run (a chamber programme).
    """
    py = _per_year(ds)
    keys = (("liquid_hours_per_year", "wet_events_per_year", "habitable_hours_per_year") if py
            else ("liquid_hours", "wet_events", "habitable_hours"))
    rows = []
    for site in ds.site.values:
        for salt in ds.salt.values:
            g = lambda k: float(ds[k].sel(site=site, salt=salt))
            rows.append((str(site), str(salt), g(keys[0]), g("longest_liquid_spell_hours"),
                         g(keys[1]), g(keys[2]),
                         (g("liquid_temperature_min"), g("liquid_temperature_max")),
                         (g("liquid_water_activity_min"), g("liquid_water_activity_max"))))
    return rows


def summary_text(ds):
    """The per-salt table printed by ``wetcycle run`` and ``wetcycle summary``."""
    py = _per_year(ds)
    head = (("site", "salt", "liquid h/yr", "longest spell h", "wet events/yr", "habitable h/yr") if py else
            ("site", "salt", "liquid h (total)", "longest spell h", "wet events", "habitable h (total)"))
    head = head + ("liquid T [K]", "liquid a_w")
    fmt_r = lambda lo, hi, f: "—" if not np.isfinite(lo) else f"{lo:{f}}–{hi:{f}}"
    rows = [(a, b, f"{c:.1f}", f"{d:.1f}", f"{e:.1f}", f"{h:.1f}", fmt_r(*t, ".0f"), fmt_r(*w, ".2f"))
            for a, b, c, d, e, h, t, w in summary_rows(ds)]
    widths = [max([len(h)] + [len(r[i]) for r in rows]) for i, h in enumerate(head)]
    lines = ["  ".join(h.ljust(w) for h, w in zip(head, widths)), "  ".join("-" * w for w in widths)]
    lines += ["  ".join(c.ljust(w) for c, w in zip(r, widths)) for r in rows]
    yrs = ds.attrs.get("years", float("nan"))
    span = (f"{yrs:.3g} year(s) after {ds.attrs.get('spinup_years', 0)} spin-up year(s)" if py else
            f"{_run_hours(ds):.3g} h from the start of the programme")
    lines.append(f"({ds.attrs.get('forcing', '?')} forcing, {ds.attrs.get('law', '?')} law, {span}; habitable: "
                 f"a_w >= {ds.attrs.get('habitability_min_water_activity', float('nan')):g} and T >= "
                 f"{ds.attrs.get('habitability_min_temperature_K', float('nan')):g} K)")
    lines += limit_notes(ds)
    lines.append("Caution: " + ds.attrs.get("caution", CAUTION))
    return "\n".join(lines)


def _run_hours(ds):
    if "period_bounds" in ds:
        b = ds["period_bounds"].values
        d = b[-1] - b[0]
        return float(d / np.timedelta64(1, "h")) if np.asarray(d).dtype.kind == "m" else float(d) / 3600.0
    return float("nan")


def limit_notes(ds):
    """Lines naming where a result leans on the model's limits (empty when it does not).

    Uses the counts of the kernel's validity flags (see :mod:`wetcycle.stats`).  Steps of dry salt
    outside a salt's validity range are not reported: below its eutectic a dry salt cannot
    deliquesce, so clamping its tables there changes no liquid statistic.
    """
    out = []
    yrs = float(ds.attrs.get("years", float("nan")))
    if _per_year(ds) and np.isfinite(yrs) and yrs < 1.0:
        out.append(f"Note: the run covers {yrs:.3g} year(s); '/yr' figures are scaled up from it, "
                   "not statistics of a whole year.")
    names = (("clamped_liquid_steps", "step(s) with brine outside the salt's validity temperature range "
              "(salt properties taken at the nearest valid temperature)"),
             ("molality_limit_steps", "step(s) in which a crystal-free brine reached the end of the model's "
              "supersaturated range before its efflorescence RH and was solidified there"),
             ("lower_limit_freezes", "freeze(s) of supercooled brine forced at the salt's lower validity "
              "limit (liquid hours below it are not counted)"),
             ("extrapolated_liquid_steps", "step(s) with brine more concentrated than the published water-activity "
              "data (its water content extrapolated)"))
    for salt in ds.salt.values:
        parts = []
        for k, text in names:
            if k in ds:
                n = int(np.nansum(ds[k].sel(salt=salt).values))
                if n > 0:
                    parts.append(f"{n} {text}")
        if parts:
            out.append(f"Model limits, {salt}: " + "; ".join(parts) + " (see validity_flag).")
        if "uptake_exceeds_supply_steps" in ds:
            n = int(np.nansum(ds["uptake_exceeds_supply_steps"].sel(salt=salt).values))
            if n > 0:
                up = float(np.nanmax(ds["salt_water_uptake"].sel(salt=salt).values))
                dl = float(np.nanmax(ds["surface_water_delivered"].sel(salt=salt).values))
                out.append(f"Water supply, {salt}: in {n} step(s) the salt took up more water than the surface "
                           f"layer delivered plus the frost present (run totals up to {up:.3g} taken up against "
                           f"{dl:.3g} kg m-2 delivered): salts are alternatives drawing on the same vapour, and "
                           "their uptake is not fed back to it.")
    return out
