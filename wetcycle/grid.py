"""Gridded runs: a latitude-longitude grid split into chunks of cells.

A chunk is a pure function of its inputs: its cells go through exactly the
same path as a site run (:func:`wetcycle.runner.run`, statistics only), and its
statistics are written to the run's folder as soon as it finishes
(``<output>.chunks/chunk_NNNNN.npz``, atomically).  A run started again with
the same scenario skips finished chunks; a changed scenario refuses to resume
into an old folder unless told to start over (``fresh=True``).  Chunks run in
this process (one at a time, or in threads: the numba kernels release the GIL),
in a local process pool, or on a dask.distributed cluster (a
local one started for the run, or an existing scheduler); the final NetCDF is
written under a temporary name and renamed into place.

Chunk independence: grid runs spin the surface energy balance up for exactly
``clock.spinup_max_years`` (no early stop, which would depend on the slowest
cell of a chunk), the energy kernel converges its Newton iteration per cell,
and per-cell reductions in the forcing sum each cell's values in a fixed order.
Statistics are bitwise identical whatever the chunk size or worker count
(``tests/test_grid.py``).
"""

from __future__ import annotations

import dataclasses
import hashlib
import json
import os
import shutil
import tempfile
from concurrent.futures import ProcessPoolExecutor, ThreadPoolExecutor, as_completed
from pathlib import Path

import numpy as np
import xarray as xr

from . import __version__
from .config import Scenario, grid_axes, load_scenario
from .runner import run_period
from .errors import ConfigError
from .output import (CAUTION, add_crs, add_time_bounds, check_output_path, limit_notes,
                     set_new_file_mode, time_attrs, write_result)
from .vocabulary import attrs

#: Spin-up tolerance used for grid chunks: effectively zero, so every chunk spins up
#: for exactly ``clock.spinup_max_years`` whatever its cells.
FIXED_SPINUP_TOL_K = 1e-12


def _fingerprint(sc):
    key = json.dumps({"text": sc.text or "", "tables": sc.tables, "salts": sc.salts,
                      "version": __version__}, sort_keys=True, default=str)
    return hashlib.sha256(key.encode()).hexdigest()


def _chunks(sc):
    n = len(sc.sites)
    size = sc["grid"]["chunk_cells"]
    return [(k, i, min(i + size, n)) for k, i in enumerate(range(0, n, size))]


def _sub_scenario(sc, i0, i1):
    tables = {k: (dict(v) if isinstance(v, dict) else v) for k, v in sc.tables.items()}
    tables["clock"]["spinup_tolerance_K"] = FIXED_SPINUP_TOL_K
    tables["output"]["series"] = False
    return dataclasses.replace(sc, tables=tables, sites=tuple(sc.sites[i0:i1]))


def run_chunk(sc, i0, i1):
    """Statistics of cells [i0, i1) of a grid scenario: dict name -> array [salt, cell, ...]."""
    from .runner import run

    ds = run(_sub_scenario(sc, i0, i1), write=False)
    out = {}
    for name, v in ds.data_vars.items():
        dims = v.dims
        if not {"salt", "site"} <= set(dims):
            continue  # the grid mapping and the period's bounds: rebuilt by assemble
        arr = v.transpose("salt", "site", *[d for d in dims if d not in ("salt", "site")]).values
        out[name] = np.asarray(arr, dtype=float)
    out["_years"] = np.array(ds.attrs["years"])
    out["_spinup_years"] = np.array(ds.attrs["spinup_years"])
    return out


def _save_npz(path, data):
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".tmp", dir=path.parent)
    os.close(fd)
    try:
        with open(tmp, "wb") as fh:
            np.savez(fh, **data)
        set_new_file_mode(tmp)
        os.replace(tmp, path)
    finally:
        if os.path.exists(tmp):
            os.remove(tmp)


def run_dir_for(output_path):
    """Folder holding the finished chunks of a gridded run."""
    p = Path(output_path)
    return p.with_name(p.name + ".chunks")


def _prepare_dir(sc, rdir, fresh):
    fp = _fingerprint(sc)
    manifest = rdir / "manifest.json"
    if rdir.exists() and fresh:
        shutil.rmtree(rdir)
    if rdir.exists():
        old = json.loads(manifest.read_text()) if manifest.is_file() else {}
        if old.get("fingerprint") != fp:
            raise ConfigError(f"run folder: {str(rdir)!r} holds chunks of a different scenario or version; "
                              "start over with --fresh (or remove the folder)")
    else:
        rdir.mkdir(parents=True)
        manifest.write_text(json.dumps({"fingerprint": fp, "wetcycle_version": __version__,
                                        "chunk_cells": sc["grid"]["chunk_cells"], "cells": len(sc.sites)}))
    return rdir


def _dask_client(scheduler, workers):
    """A dask.distributed Client: ``"local"`` starts a local cluster, else join ``scheduler``."""
    try:
        from dask.distributed import Client, LocalCluster
    except ImportError:
        raise ConfigError("scheduler: dask.distributed is not installed; install with "
                          "pip install 'wetcycle[distributed]'") from None
    if scheduler == "local":
        cluster = LocalCluster(n_workers=workers, threads_per_worker=1, processes=True,
                               dashboard_address=None)
        return Client(cluster), cluster
    try:
        return Client(scheduler, timeout="10s"), None
    except (OSError, TimeoutError) as exc:
        raise ConfigError(f"scheduler: {scheduler!r} could not be reached ({exc}); allowed: 'local' "
                          "or the address of a running dask scheduler (e.g. tcp://host:8786)") from None


def run_grid(scenario, *, workers=1, write=True, progress=False, output_path=None, fresh=False,
             stop_after_chunks=None, scheduler=None, threads=False):
    """Run a gridded scenario chunk by chunk; return the statistics on (salt, lat, lon).

    Parameters
    ----------
    scenario : Scenario or path
    workers : int
        1: chunks in this process; > 1: a local process pool of that many workers (or, with
        ``scheduler="local"``, a local dask cluster of that many worker processes).
    threads : bool
        With ``workers > 1``: run chunks in threads of this process instead of worker
        processes (the heavy numba kernels release the GIL; set-up between them does not).
    scheduler : str, optional
        Run the chunks on dask.distributed: ``"local"`` starts a local cluster for the run,
        any other value is the address of a running scheduler to join.  The same chunk
        function runs everywhere, so the numbers are the same as in-process.
    fresh : bool
        Discard finished chunks of an earlier run in the run folder.
    stop_after_chunks : int, optional
        Stop (raise KeyboardInterrupt) after this many chunks have finished in this call:
        used by the tests to simulate an interrupted run.
    """
    sc = scenario if isinstance(scenario, Scenario) else load_scenario(scenario)
    if sc["grid"] is None:
        raise ConfigError(f"{sc.source}: [grid]: not a gridded scenario (it has [[site]]); use wetcycle.run")
    if not (isinstance(workers, int) and workers >= 1):
        raise ConfigError(f"workers: {workers!r} is not allowed; allowed: a whole number >= 1")
    out_path = Path(output_path) if output_path else sc.output_path
    if write:
        check_output_path(out_path, "output_path" if output_path else "output")
    out_path.parent.mkdir(parents=True, exist_ok=True)
    client = cluster = None
    if scheduler is not None:
        # connect first: an unreachable scheduler must not cost the finished chunks of --fresh
        client, cluster = _dask_client(scheduler, workers)
    try:
        rdir = _prepare_dir(sc, run_dir_for(out_path), fresh)
    except BaseException:
        _close_dask(client, cluster)
        raise
    chunks = _chunks(sc)
    todo = [c for c in chunks if not (rdir / f"chunk_{c[0]:05d}.npz").is_file()]
    bar = None
    if progress:
        from tqdm import tqdm
        bar = tqdm(total=len(chunks), initial=len(chunks) - len(todo), unit="chunk", desc=sc.name)
    done_now = 0

    def finished(k, data):
        nonlocal done_now
        _save_npz(rdir / f"chunk_{k:05d}.npz", data)
        done_now += 1
        if bar is not None:
            bar.update(1)
        if stop_after_chunks is not None and done_now >= stop_after_chunks:
            raise KeyboardInterrupt("stopped after the requested number of chunks")

    try:
        if client is not None:
            from dask.distributed import as_completed as dask_completed
            futs = {client.submit(run_chunk, sc, i0, i1, pure=False): k for k, i0, i1 in todo}
            for f in dask_completed(list(futs)):
                finished(futs[f], f.result())
        elif workers == 1:
            for k, i0, i1 in todo:
                finished(k, run_chunk(sc, i0, i1))
        else:
            pool_kind = ThreadPoolExecutor if threads else ProcessPoolExecutor
            with pool_kind(max_workers=workers) as pool:
                futs = {pool.submit(run_chunk, sc, i0, i1): k for k, i0, i1 in todo}
                for f in as_completed(futs):
                    finished(futs[f], f.result())
    finally:
        _close_dask(client, cluster)
        if bar is not None:
            bar.close()
    ds = assemble(sc, rdir, chunks)
    if write:
        write_result(ds, out_path)
    return ds


def _close_dask(client, cluster):
    if client is not None:
        client.close()
    if cluster is not None:
        cluster.close()


def assemble(sc, rdir, chunks):
    """Gather finished chunks into a Dataset on (salt, [bin,] lat, lon)."""
    lats, lons = grid_axes(sc["grid"])
    cell_ij = [tuple(int(x) for x in s["name"].split("_")[1:]) for s in sc.sites]
    parts = [dict(np.load(rdir / f"chunk_{k:05d}.npz")) for k, _, _ in chunks]
    names = [n for n in parts[0] if not n.startswith("_")]
    planet = sc["scenario"]["planet"]
    data = {}
    for name in names:
        trailing = parts[0][name].shape[2:]
        arr = np.full((len(sc.salts), lats.size, lons.size) + trailing, np.nan)
        for (k, i0, i1), part in zip(chunks, parts):
            for c, idx in enumerate(range(i0, i1)):
                i, j = cell_ij[idx]
                arr[:, i, j] = part[name][:, c]
        dims = ("salt", "lat", "lon") + {1: ("ls_bin",) if name == "liquid_hours_by_ls" else ("hour_bin",)}.get(
            len(trailing), ())
        # counts are stored as floats here (unlike a site result) so that masked cells can be NaN
        da = xr.DataArray(arr, dims=dims, attrs=attrs(name, planet=planet))
        # CF-1.8 sec. 2.4: the horizontal axes come last
        data[name] = da.transpose("salt", *dims[3:], "lat", "lon")
    n_ls = parts[0]["liquid_hours_by_ls"].shape[2]
    ds = xr.Dataset(data, coords=grid_coords(sc, n_ls))
    t_end, first, info = run_period(sc)
    ds = add_time_bounds(ds, [t_end], t_end + first, time_attrs(info))
    ds = add_crs(ds, planet)
    hab = sc["habitability"]
    import datetime as _dt
    ds.attrs.update(
        title=f"wetcycle gridded result: {sc.name}", scenario_name=sc.name,
        scenario=sc.text or json.dumps(sc.tables, default=str), wetcycle_version=__version__,
        created=_dt.datetime.now(_dt.timezone.utc).strftime("%Y-%m-%dT%H:%M:%SZ"), caution=CAUTION,
        Conventions="CF-1.8", forcing=sc["forcing"]["kind"], law=sc["phase"]["law"],
        years=float(parts[0]["_years"]), steps_per_sol=int(sc["clock"]["steps_per_sol"]),
        spinup_years=int(parts[0]["_spinup_years"]), chunk_cells=int(sc["grid"]["chunk_cells"]),
        habitability_min_water_activity=float(hab["min_water_activity"]),
        habitability_min_temperature_K=float(hab["min_temperature"]),
    )
    if info.get("start_utc"):
        ds.attrs["start_utc"] = info["start_utc"]
    return ds


def grid_coords(sc, n_ls):
    """Coordinates of a gridded result: salt, lat and lon with CF cell bounds, the bins."""
    import cf_xarray  # noqa: F401  (registers the .cf accessor)

    planet = sc["scenario"]["planet"]
    lats, lons = grid_axes(sc["grid"])
    g = sc["grid"]
    frame = xr.Dataset(coords={
        "salt": ("salt", np.array([s["name"] for s in sc.salts], dtype=object), attrs("salt")),
        "lat": ("lat", lats, attrs("lat")),
        "lon": ("lon", lons, attrs("lon")),
        "ls_bin": ("ls_bin", (np.arange(n_ls) + 0.5) * 360.0 / n_ls, attrs("ls_bin", planet=planet)),
        "hour_bin": ("hour_bin", np.arange(24) + 0.5, attrs("hour_bin")),
    })
    # cell edges midway between centres (cf_xarray), latitudes clipped to the poles
    frame = frame.cf.add_bounds(["lat", "lon"], output_dim="nv")
    frame["lat_bounds"] = frame["lat_bounds"].clip(-90.0, 90.0)
    frame = frame.set_coords(["lat_bounds", "lon_bounds"])
    return frame.coords


def grid_summary_text(ds):
    """Per-salt summary of a gridded result: cells, cells with liquid, mean and max liquid hours."""
    lines = ["salt        cells  with liquid  mean liquid h/yr  max liquid h/yr  max habitable h/yr",
             "----------  -----  -----------  ----------------  ---------------  ------------------"]
    for salt in ds.salt.values:
        lh = ds.liquid_hours_per_year.sel(salt=salt).values
        hh = ds.habitable_hours_per_year.sel(salt=salt).values
        ok = np.isfinite(lh)
        lines.append(f"{str(salt):<10s}  {int(ok.sum()):5d}  {int((lh[ok] > 0).sum()):11d}  "
                     f"{np.nanmean(lh):16.1f}  {np.nanmax(lh):15.1f}  {np.nanmax(hh):18.1f}")
    lines += limit_notes(ds)
    lines.append("Caution: " + ds.attrs.get("caution", CAUTION))
    return "\n".join(lines)
