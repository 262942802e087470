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
import tempfile
from pathlib import Path

import numpy as np
import xarray as xr

from . import __version__
from .errors import ConfigError, InputDataError
from .vocabulary import attrs

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


def build_dataset(sc, src, stats, series=None, phase_series=None):
    """Assemble the result of a run (see /DEVELOPERS.md "Result files" for the layout)."""
    salts = [s["name"] for s in sc.salts]
    sites = [s["name"] for s in sc.sites]
    n_ls = stats[0]["liquid_hours_by_ls"].shape[0]
    coords = {
        "site": ("site", np.array(sites, dtype=object)),
        "salt": ("salt", np.array(salts, dtype=object)),
        "latitude": ("site", np.array([s["latitude"] for s in sc.sites]), attrs("latitude")),
        "longitude": ("site", np.array([s["longitude"] for s in sc.sites]), attrs("longitude")),
        "ls_bin": ("ls_bin", (np.arange(n_ls) + 0.5) * 360.0 / n_ls,
                   {"units": "degree", "long_name": "centre of the Ls bin"}),
        "hour_bin": ("hour_bin", np.arange(24) + 0.5, {"units": "hour", "long_name": "centre of the local-time bin"}),
    }
    data = {}
    for name in stats[0]:
        dims = STAT_DIMS.get(name, ("salt", "site"))
        arr = np.stack([st[name].T if name in STAT_DIMS else st[name] for st in stats])
        data[name] = (dims, arr, attrs(name))
    if series is not None:
        t_attrs = attrs("time")
        if src.info.get("start_utc"):
            # CF-1.8 sec. 4.4: a time coordinate's units name its reference date
            t_attrs.update(units=f"seconds since {src.info['start_utc']}", calendar="standard", axis="T")
        else:
            # no date (a chamber programme, or a start before 1972 with no UTC leap-second table):
            # elapsed seconds, not a CF time coordinate
            t_attrs.pop("standard_name", None)
            if src.info.get("forcing") == "chamber":
                t_attrs["long_name"] = "time since the start of the programme"
        coords["time"] = ("time", np.asarray(src.time_s, dtype=float), t_attrs)
        coords["sol"] = ("time", np.asarray(src.sol), attrs("sol"))
        coords["solar_longitude"] = ("time", np.asarray(src.ls_deg, dtype=float), attrs("solar_longitude"))
        coords["local_solar_time"] = (("site", "time"), np.asarray(src.ltst_h, dtype=float).T,
                                      attrs("local_solar_time"))
        for k, parts in series.items():
            data[k] = (("site", "time"), np.concatenate(parts, axis=0).T, attrs(k))
        for k in phase_series[0]:
            arr = np.stack([np.concatenate(ps[k], axis=0).T for ps in phase_series])
            data[k] = (("salt", "site", "time"), arr, attrs(k))
    ds = xr.Dataset(data, coords=coords)
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
        forcing=sc["forcing"]["kind"],
        law=sc["phase"]["law"],
        years=float(src.years),
        steps_per_sol=int(src.steps_per_sol),
        habitability_min_water_activity=float(hab["min_water_activity"]),
        habitability_min_temperature_K=float(hab["min_temperature"]),
        spinup_years=int(src.info.get("spinup_years", 0)),
    )
    for key in ("start_utc", "forcing_file", "forcing_file_sha256", "forcing_programme_text", "water_supply",
                "water_supply_sha256", "dust_model", "pressure_model"):
        if src.info.get(key):
            ds.attrs[key] = str(src.info[key])
    if src.info.get("forcing") == "energy_balance":
        ds.attrs["spinup_converged"] = int(bool(src.info.get("spinup_converged")))
    return ds


def check_output_path(path, field="output"):
    """Refuse, before any computing, a result path that cannot be written.

    The path must name a file (not an existing folder, not ending in a path separator) whose folder
    exists or can be created and accepts new files.  Returns the path.
    """
    raw = str(path)
    path = Path(path)
    if raw.endswith(("/", os.sep)) or path.is_dir():
        raise ConfigError(f"{field}: {raw!r} is a folder; allowed: a file path such as {str(path / 'result.nc')!r}")
    parent = path.parent
    try:
        parent.mkdir(parents=True, exist_ok=True)
        fd, probe = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".probe", dir=parent)
        os.close(fd)
        os.remove(probe)
    except OSError as exc:
        raise ConfigError(f"{field}: {raw!r} cannot be written ({exc.strerror or exc}); allowed: a file in a "
                          "writable folder") from None
    if path.exists() and not os.access(path, os.W_OK):
        raise ConfigError(f"{field}: {raw!r} exists and is not writable; allowed: a writable file path")
    return path


def write_result(ds, path):
    """Write ``ds`` to NetCDF at ``path`` atomically (temporary file + rename)."""
    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    enc = {}
    for k, v in ds.data_vars.items():
        if v.dtype.kind == "f":
            enc[k] = {"zlib": True, "complevel": 4}
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".tmp", dir=path.parent)
    os.close(fd)
    try:
        ds.to_netcdf(tmp, engine="netcdf4", encoding=enc)
        set_new_file_mode(tmp)
        os.replace(tmp, path)
    except BaseException:
        if os.path.exists(tmp):
            os.remove(tmp)
        raise
    return path


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
        # times stay seconds since the start (their units name the reference date)
        ds = xr.open_dataset(path, engine="netcdf4", decode_times=False)
        ds.load()
        ds.close()
    except (OSError, ValueError) as exc:
        raise InputDataError(f"result: {path.name} could not be read as NetCDF: {exc}") from None
    if "liquid_hours_per_year" not in ds:
        raise InputDataError(f"result: {path.name} is not a wetcycle result (no liquid_hours_per_year)")
    return ds


def summary_rows(ds):
    """Rows (site, salt, liquid h/yr, longest spell h, wet events/yr, habitable h/yr, T range, a_w range)."""
    rows = []
    for site in ds.site.values:
        for salt in ds.salt.values:
            g = lambda k: float(ds[k].sel(site=site, salt=salt))
            rows.append((str(site), str(salt), g("liquid_hours_per_year"), g("longest_liquid_spell_hours"),
                         g("wet_events_per_year"), g("habitable_hours_per_year"),
                         (g("liquid_temperature_min"), g("liquid_temperature_max")),
                         (g("liquid_water_activity_min"), g("liquid_water_activity_max"))))
    return rows


def summary_text(ds):
    """The per-salt table printed by ``wetcycle run`` and ``wetcycle summary``."""
    head = ("site", "salt", "liquid h/yr", "longest spell h", "wet events/yr", "habitable h/yr",
            "liquid T [K]", "liquid a_w")
    fmt_r = lambda lo, hi, f: "—" if not np.isfinite(lo) else f"{lo:{f}}–{hi:{f}}"
    rows = [(a, b, f"{c:.1f}", f"{d:.1f}", f"{e:.1f}", f"{h:.1f}", fmt_r(*t, ".0f"), fmt_r(*w, ".2f"))
            for a, b, c, d, e, h, t, w in summary_rows(ds)]
    widths = [max([len(h)] + [len(r[i]) for r in rows]) for i, h in enumerate(head)]
    lines = ["  ".join(h.ljust(w) for h, w in zip(head, widths)), "  ".join("-" * w for w in widths)]
    lines += ["  ".join(c.ljust(w) for c, w in zip(r, widths)) for r in rows]
    yrs = ds.attrs.get("years", float("nan"))
    lines.append(f"({ds.attrs.get('forcing', '?')} forcing, {ds.attrs.get('law', '?')} law, {yrs:.3g} year(s) "
                 f"after {ds.attrs.get('spinup_years', 0)} spin-up year(s); habitable: a_w >= "
                 f"{ds.attrs.get('habitability_min_water_activity', float('nan')):g} and T >= "
                 f"{ds.attrs.get('habitability_min_temperature_K', float('nan')):g} K)")
    lines += limit_notes(ds)
    lines.append("Caution: " + ds.attrs.get("caution", CAUTION))
    return "\n".join(lines)


def limit_notes(ds):
    """Lines naming where a result leans on the model's limits (empty when it does not).

    Uses the counts of the kernel's validity flags (see :mod:`wetcycle.stats`).  Steps of dry salt
    outside a salt's validity range are not reported: below its eutectic a dry salt cannot
    deliquesce, so clamping its tables there changes no liquid statistic.
    """
    out = []
    yrs = float(ds.attrs.get("years", float("nan")))
    if np.isfinite(yrs) and yrs < 1.0:
        out.append(f"Note: the run covers {yrs:.3g} year(s); '/yr' figures are scaled up from it, "
                   "not statistics of a whole year.")
    names = (("clamped_liquid_steps", "step(s) with brine outside the salt's validity temperature range "
              "(salt properties taken at the nearest valid temperature)"),
             ("molality_limit_steps", "step(s) in which a brine was crystallised at the model's molality limit "
              "before its efflorescence RH"),
             ("lower_limit_freezes", "freeze(s) of supercooled brine forced at the salt's lower validity "
              "limit (liquid hours below it are not counted)"))
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
