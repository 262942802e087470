"""Gridded runs: tiles of a latitude-longitude grid, computed by dask, kept in a zarr store.

The grid is cut into rectangular tiles of at most ``grid.chunk_cells`` cells, and the run store
(``<output>.store.zarr``) holds every statistic on (salt, [bin,] lat, lon) in zarr chunks of
exactly one tile.  A tile is a pure function of its inputs: its unmasked cells go through the same
path as a site run (:func:`wetcycle.runner.statistics`) and the tile is written into its own
region of the store as soon as it finishes (no locks: tiles never share a chunk), then marked
done in ``cell_state`` (NaN pending, 1 computed, 0 masked).  The store can be opened with
``xarray.open_zarr`` while the run goes on; a run started again with the same command computes
only the tiles not yet done.  Once the result is written the store is removed (``write=False``
keeps it).  At the end the result is assembled from the store into a CF NetCDF
file (or a zarr store when the output path ends in ``.zarr``), written under a temporary name and
renamed into place.

dask is the one engine: one worker runs the tiles in this process (dask's synchronous
scheduler), ``workers > 1`` starts a local cluster of that many worker processes (bound to
127.0.0.1, no dashboard, each dying with this process), and ``scheduler=ADDRESS`` joins a running
cluster.  Salts reach the workers as their phase tables, never by name.

Tile independence: grid runs spin the surface energy balance up for exactly
``clock.spinup_max_years`` (no early stop, which would depend on the slowest cell of a tile; the
spin-up's steps per sol and settling sols come from the scenario, never from a tile's cells), the
energy kernel converges its Newton iteration per cell, and per-cell reductions sum each cell's
values in a fixed order, so the statistics are bitwise identical whatever the tile size, worker
count or scheduler (``tests/test_grid.py`` compares every statistic).

The resume fingerprint covers the scenario, the version, the salts' phase tables and every input
file by content (:mod:`wetcycle.inputs`); an edited property map or forcing file is a different
run.  The store is locked (``fcntl.flock``) by the run writing it: a second run into the same
output is refused in one line.
"""

from __future__ import annotations

import dataclasses
import datetime as _dt
import json
import os
import shutil
import tempfile
from pathlib import Path

import numpy as np
import xarray as xr

from . import __version__
from .config import Scenario, grid_axes, load_scenario
from .errors import ConfigError, InputDataError
from .inputs import fingerprint, input_hashes
from .output import (CAUTION, add_crs, add_time_bounds, check_output_path, frame_statistics, limit_notes,
                     note_short_run, set_new_file_mode, time_attrs, write_result)
from .runner import run_period
from .phase.model import phase_settings_attrs
from .stats import Accumulator
from .vocabulary import attrs

#: How long to try reaching a dask scheduler given by address.
CONNECT_TIMEOUT = "3s"

#: Spin-up tolerance used for grid tiles: effectively zero, so every tile spins up for exactly
#: ``clock.spinup_max_years`` whatever its cells.
FIXED_SPINUP_TOL_K = 1e-12


# ---- tiles and cells ------------------------------------------------------------------------
@dataclasses.dataclass(frozen=True)
class Tile:
    """A rectangle of grid rows and columns: one zarr chunk of the store."""

    index: int
    rows: tuple  # (start, stop)
    cols: tuple


def tile_shape(n_lat, n_lon, chunk_cells):
    """Rows and columns of a tile of at most ``chunk_cells`` cells: whole rows when they fit."""
    if n_lon <= chunk_cells:
        return max(1, min(n_lat, chunk_cells // n_lon)), n_lon
    return 1, chunk_cells


def tiles(n_lat, n_lon, chunk_cells):
    """Every tile of the grid, row-major."""
    tr, tc = tile_shape(n_lat, n_lon, chunk_cells)
    out = []
    for i in range(0, n_lat, tr):
        for j in range(0, n_lon, tc):
            out.append(Tile(len(out), (i, min(i + tr, n_lat)), (j, min(j + tc, n_lon))))
    return out


def cell_index(sc):
    """[lat, lon] -> index of the cell in ``sc.sites`` (-1: masked), from the cells' coordinates."""
    g = sc["grid"]
    lats, lons = grid_axes(g)
    idx = np.full((lats.size, lons.size), -1, dtype=np.int64)
    for k, s in enumerate(sc.sites):
        i = int(round((s["latitude"] - g["lat_min"]) / g["lat_step"]))
        j = int(round((s["longitude"] - g["lon_min"]) / g["lon_step"]))
        idx[i, j] = k
    return idx


def _statistic_layout(sc):
    """{statistic name: trailing bin dimensions} as the accumulator produces them."""
    from .runner import WATER_CYCLE_STATS, statistics_frame
    per_year, durations, _ = statistics_frame(sc)
    n = sc["output"]["ls_bins"]
    sample = Accumulator.new(1, n).finish(1.0, per_year=per_year,
                                          bin_duration_s=None if durations is None else np.ones(n))
    out = {name: () if arr.ndim == 1 else ("hour_bin",) if "local_time" in name else ("ls_bin",)
           for name, arr in sample.items()}
    if sc["forcing"]["kind"] == "energy_balance":
        out.update({name: () for name in WATER_CYCLE_STATS})
    return out


# ---- the work of one tile ---------------------------------------------------------------------
@dataclasses.dataclass(frozen=True)
class GridRun:
    """Everything a worker needs for any tile: sent to each worker once."""

    scenario: Scenario
    tables: dict        # salt name -> PhaseTables
    store: str
    cells: np.ndarray   # cell_index(scenario)
    layout: dict        # statistic -> trailing dims


def _sub_scenario(sc, ks):
    tables = {k: (dict(v) if isinstance(v, dict) else v) for k, v in sc.tables.items()}
    tables["clock"]["spinup_tolerance_K"] = FIXED_SPINUP_TOL_K
    tables["output"]["series"] = False
    return dataclasses.replace(sc, tables=tables, sites=tuple(sc.sites[k] for k in ks))


def compute_tile(run, tile):
    """Compute one tile's statistics and write them into its region of the store.

    Returns (tile index, {"forcing", "phase", "io": seconds, "cells": number computed}).
    """
    import time

    from .runner import statistics
    timings = {"forcing": 0.0, "phase": 0.0}

    r0, r1 = tile.rows
    c0, c1 = tile.cols
    idx = run.cells[r0:r1, c0:c1]
    n_salt = len(run.scenario.salts)
    n_ls = run.scenario["output"]["ls_bins"]
    sizes = {"ls_bin": n_ls, "hour_bin": 24}
    out = {name: np.full((n_salt,) + tuple(sizes[d] for d in trail) + idx.shape, np.nan)
           for name, trail in run.layout.items()}
    live = np.argwhere(idx >= 0)
    if live.size:
        stats, _ = statistics(_sub_scenario(run.scenario, idx[idx >= 0]), run.tables, timings)
        for name in run.layout:
            for s, st in enumerate(stats):
                v = np.asarray(st[name], dtype=float)  # [cell] or [bin, cell]
                out[name][s][..., live[:, 0], live[:, 1]] = v
    t_io = time.perf_counter()
    region = {"lat": slice(r0, r1), "lon": slice(c0, c1)}
    data = {name: (("salt",) + run.layout[name] + ("lat", "lon"), arr) for name, arr in out.items()}
    xr.Dataset(data).to_zarr(run.store, region=region, mode="r+", consolidated=False)
    state = np.where(idx >= 0, 1.0, 0.0).astype(np.float32)
    xr.Dataset({"cell_state": (("lat", "lon"), state)}).to_zarr(run.store, region=region, mode="r+",
                                                                 consolidated=False)
    timings.update(io=time.perf_counter() - t_io, cells=int(live.shape[0]))
    return tile.index, timings


# ---- the store ----------------------------------------------------------------------------
def run_dir_for(output_path):
    """The run store (zarr) of a gridded run writing ``output_path``."""
    p = Path(output_path)
    return p.with_name(p.name + ".store.zarr")


class StoreLock:
    """An exclusive ``flock`` on ``<store>.lock``: one writer per run store; released on exit or death."""

    def __init__(self, store):
        self.path = Path(str(store) + ".lock")
        self.fh = None

    def __enter__(self):
        import fcntl
        self.path.parent.mkdir(parents=True, exist_ok=True)
        self.fh = open(self.path, "a+")
        try:
            fcntl.flock(self.fh, fcntl.LOCK_EX | fcntl.LOCK_NB)
        except BlockingIOError:
            self.fh.seek(0)
            who = self.fh.read().strip() or "another process"
            self.fh.close()
            self.fh = None
            raise ConfigError(f"output: {str(self.path)[:-5]!r} is being written by another wetcycle run "
                              f"({who}); wait for it to finish or choose another output") from None
        self.fh.seek(0)
        self.fh.truncate()
        self.fh.write(f"pid {os.getpid()}")
        self.fh.flush()
        return self

    def __exit__(self, *exc):
        if self.fh is not None:
            try:
                self.path.unlink()
            except OSError:
                pass
            self.fh.close()
        return False


def _template(sc, layout, shape):
    """The store's template: every statistic on (salt, [bin,] lat, lon), NaN, chunked by tiles."""
    import dask.array as da

    lats, lons = grid_axes(sc["grid"])
    n_ls = sc["output"]["ls_bins"]
    sizes = {"ls_bin": n_ls, "hour_bin": 24}
    planet = sc["scenario"]["planet"]
    data = {}
    for name, trail in layout.items():
        dims = ("salt",) + trail + ("lat", "lon")
        full = (len(sc.salts),) + tuple(sizes[d] for d in trail) + (lats.size, lons.size)
        chunks = full[:-2] + shape
        data[name] = (dims, da.full(full, np.nan, chunks=chunks), attrs(name, planet=planet))
    data["cell_state"] = (("lat", "lon"), da.full((lats.size, lons.size), np.nan, dtype=np.float32, chunks=shape),
                          {"long_name": "state of the cell in this run", "flag_values": np.array([0, 1], np.float32),
                           "flag_meanings": "masked computed", "comment": "NaN: not yet computed"})
    ds = xr.Dataset(data, coords=grid_coords(sc, n_ls))
    return ds


def _open_store(sc, store, layout, shape, fp, fresh):
    """Create the store, or check that an existing one belongs to this run; returns done tile mask."""
    store = Path(store)
    if store.exists() and fresh:
        shutil.rmtree(store)
    if store.exists():
        try:
            old = xr.open_zarr(store, consolidated=False)
        except Exception as exc:  # noqa: BLE001  (any zarr/xarray failure: an unreadable folder)
            raise ConfigError(f"run store: {str(store)!r} is not a readable run store ({type(exc).__name__}); "
                              "start over with --fresh (or remove it)") from None
        with old:
            if old.attrs.get("fingerprint") != fp:
                raise ConfigError(f"run store: {str(store)!r} holds tiles of a different scenario, input file or "
                                  "version; start over with --fresh (or remove the folder)")
            try:
                return np.asarray(old["cell_state"].values)
            except Exception:  # noqa: BLE001  (a chunk cut short by a killed write: recompute all)
                return np.full(old["cell_state"].shape, np.nan, np.float32)
    tmp = store.with_name(store.name + ".new")
    if tmp.exists():
        shutil.rmtree(tmp)
    t = _template(sc, layout, shape)
    t.attrs.update(fingerprint=fp, wetcycle_version=__version__, chunk_cells=int(sc["grid"]["chunk_cells"]))
    t.to_zarr(tmp, compute=False, mode="w", consolidated=False)
    os.replace(tmp, store)
    return None


# ---- dask ---------------------------------------------------------------------------------
#: glibc malloc settings of the local cluster's worker processes, set before they start (dask's
#: ``distributed.nanny.pre-spawn-environ``).  dask's own default, MALLOC_TRIM_THRESHOLD_ = 64 KiB,
#: hands freed memory back to the system at once and, by fixing a threshold, also turns off glibc's
#: adaptive mmap threshold: every array over 128 KiB (a tile's per-sol forcing and kernel outputs)
#: is then mapped afresh and page-faulted in, ~1 million page faults and a third more CPU time per
#: 180-cell tile (measured: 11.8 against 8.8 CPU-s in one process; README "Performance").  Arrays
#: up to 32 MiB (the largest a tile allocates repeatedly is ~10 MB) come from the heap instead, and
#: up to 256 MiB of freed heap is kept for reuse; a worker's memory stays bounded by its tile.
WORKER_MALLOC_ENV = {"MALLOC_MMAP_THRESHOLD_": 32 * 2**20, "MALLOC_TRIM_THRESHOLD_": 256 * 2**20}


def dask_client(scheduler, workers, *, dashboard=False):
    """A dask.distributed Client and the cluster it owns (None for a joined one).

    ``None``/"local" start a local cluster of ``workers`` processes bound to 127.0.0.1, one thread
    each, whose processes die with this one (:mod:`wetcycle._workerguard`); the dashboard is off
    (the scheduler's small HTTP server binds to 127.0.0.1 on a free port) unless ``dashboard``,
    which serves it on 127.0.0.1:8787.  The local workers start with :data:`WORKER_MALLOC_ENV`.
    Any other value joins the scheduler at that address (its workers keep their own settings).
    """
    from dask.distributed import Client, LocalCluster

    if scheduler in (None, "local"):
        import dask
        env = dict(dask.config.get("distributed.nanny.pre-spawn-environ", default={}) or {})
        env.update(WORKER_MALLOC_ENV)
        # (dask lets this process's environment override the setting, and its nannies copy the
        # setting into this process's environment: an earlier cluster's value would stick)
        os.environ.update({k: str(v) for k, v in WORKER_MALLOC_ENV.items()})
        with dask.config.set({"distributed.nanny.pre-spawn-environ": env}):
            cluster = LocalCluster(n_workers=workers, threads_per_worker=1, processes=True, host="127.0.0.1",
                                   dashboard_address="127.0.0.1:8787" if dashboard else None,
                                   scheduler_kwargs=None if dashboard else {"dashboard_address": "127.0.0.1:0"},
                                   preload=["wetcycle._workerguard"], death_timeout="10s", silence_logs=40)
        return Client(cluster), cluster
    try:
        return Client(scheduler, timeout=CONNECT_TIMEOUT), None
    except (OSError, TimeoutError, ValueError) as exc:
        raise ConfigError(f"scheduler: {scheduler!r} could not be reached ({exc}); allowed: 'local' "
                          "or the address of a running dask scheduler (e.g. tcp://host:8786)") from None


def _close(client, cluster):
    if client is not None:
        client.close()
    if cluster is not None:
        cluster.close()


def _execute(run, todo, workers, scheduler, done_cb):
    """Run ``compute_tile`` over ``todo`` on dask; ``done_cb(tile index, timings)`` as each finishes."""
    if scheduler is None and workers == 1:
        import dask
        from dask.callbacks import Callback

        class _Done(Callback):
            def _posttask(self, key, result, dsk, state, id):
                if isinstance(key, tuple) and key and str(key[0]).startswith("tile-"):
                    done_cb(*result)

        graph = {("tile-", t.index): (compute_tile, "run", t) for t in todo}
        graph["run"] = run
        with _Done():
            dask.get(graph, list(k for k in graph if k != "run"))  # the synchronous scheduler
        return
    from dask.distributed import as_completed
    client, cluster = dask_client(scheduler, workers)
    try:
        run_f = client.scatter(run, broadcast=True)
        futs = client.map(compute_tile, [run_f] * len(todo), todo, pure=False)
        for f in as_completed(futs):
            done_cb(*f.result())
    finally:
        _close(client, cluster)


# ---- the run ------------------------------------------------------------------------------
def run_grid(scenario, *, workers=1, write=True, progress=False, output_path=None, fresh=False,
             scheduler=None, timings=None):
    """Run a gridded scenario tile by tile; return the statistics on (salt, [bin,] lat, lon).

    Parameters
    ----------
    scenario : Scenario or path
    workers : int
        1: tiles in this process (dask's synchronous scheduler); > 1: a local dask cluster of that
        many worker processes.
    scheduler : str, optional
        The address of a running dask scheduler to join ("local" is the same as none).
    fresh : bool
        Discard the run store of an earlier run and start over.
    output_path : path, optional
        Overrides ``scenario.output``; a path ending in ``.zarr`` writes a zarr store.
    timings : dict, optional
        Receives the seconds spent in the tiles on forcing, phase model and store writes (summed
        over workers), and on assembling and writing the result ("assemble").
    """
    sc = scenario if isinstance(scenario, Scenario) else load_scenario(scenario)
    if sc["grid"] is None:
        raise ConfigError(f"{sc.source}: [grid]: not a gridded scenario (it has [[site]]); use wetcycle.run")
    if not (isinstance(workers, int) and not isinstance(workers, bool) and workers >= 1):
        raise ConfigError(f"workers: {workers!r} is not allowed; allowed: a whole number >= 1")
    out_path = Path(output_path) if output_path else sc.output_path
    if write:
        check_output_path(out_path, "output_path" if output_path else "output", allow_zarr=True)
    if scheduler == "local":
        scheduler = None
    if scheduler is not None:
        # reach it first: an unreachable scheduler must not cost the finished tiles of --fresh
        _close(*dask_client(scheduler, workers))
    from .runner import phase_models
    tables = {m.tables.name: m.tables for m in phase_models(sc)}
    hashes = input_hashes(sc, tables)
    fp = fingerprint(sc, hashes)
    lats, lons = grid_axes(sc["grid"])
    shape = tile_shape(lats.size, lons.size, sc["grid"]["chunk_cells"])
    all_tiles = tiles(lats.size, lons.size, sc["grid"]["chunk_cells"])
    layout = _statistic_layout(sc)
    store = run_dir_for(out_path)
    with StoreLock(store):
        state = _open_store(sc, store, layout, shape, fp, fresh)
        todo = [t for t in all_tiles
                if state is None or np.isnan(state[t.rows[0]:t.rows[1], t.cols[0]:t.cols[1]]).any()]
        run = GridRun(sc, tables, str(store), cell_index(sc), layout)
        bar = None
        if progress:
            from .progress import bar as progress_bar
            from .progress import stage
            stage(f"{len(todo)} of {len(all_tiles)} tiles to compute"
                  + (f" on {workers} local worker processes" if workers > 1 and scheduler is None else "")
                  + "; each worker first compiles or loads the numba kernels and spins its cells up")
            bar = progress_bar(len(all_tiles), "tile", sc.name)
            bar.update(len(all_tiles) - len(todo))
        spent = timings if timings is not None else {}

        def finished(k, t):
            for key in ("forcing", "phase", "io", "cells"):
                spent[key] = spent.get(key, 0) + t[key]
            if bar is not None:
                bar.update(1)

        try:
            _execute(run, todo, workers, scheduler, finished)
        finally:
            if bar is not None:
                bar.close()
        import time
        t0 = time.perf_counter()
        ds = assemble(sc, store, hashes)
        probes = run_probes(sc, tables)
        if write:
            if probes is not None:
                write_result(probes, probes_path_for(out_path))
            write_grid_result(ds, out_path)
            shutil.rmtree(store)  # the result holds everything; a rerun starts afresh
        spent["assemble"] = time.perf_counter() - t0
    return ds


def probes_path_for(output_path):
    """Where the series of a grid's probe cells go: ``<output stem>.probes.nc``."""
    p = Path(output_path)
    return p.with_name(p.stem + ".probes.nc")


def run_probes(sc, tables):
    """Full series of the grid's named probe cells (``grid.probes``), as a site result; None if none.

    Each probe is the grid cell nearest its [latitude, longitude], with that cell's properties, run
    through the same path as the grid's tiles (same fixed spin-up), so its statistics equal the
    grid's at that cell.
    """
    from .runner import run
    probes = sc["grid"]["probes"]
    if not probes:
        return None
    g = sc["grid"]
    lats, lons = grid_axes(g)
    idx = cell_index(sc)
    cells = []
    for name, where in probes.items():
        ok = (isinstance(where, list) and len(where) == 2
              and all(isinstance(v, (int, float)) and not isinstance(v, bool) for v in where))
        if not ok:
            raise ConfigError(f"{sc.source}: grid.probes.{name}: {where!r} is not allowed; allowed: "
                              "[latitude, longitude] in degrees")
        i = int(np.argmin(np.abs(lats - where[0])))
        j = int(np.argmin(np.abs((lons - where[1] + 180.0) % 360.0 - 180.0)))
        if abs(lats[i] - where[0]) > 0.5 * g["lat_step"] + 1e-9 or \
                abs((lons[j] - where[1] + 180.0) % 360.0 - 180.0) > 0.5 * g["lon_step"] + 1e-9:
            raise ConfigError(f"{sc.source}: grid.probes.{name}: {where!r} is outside the grid")
        if idx[i, j] < 0:
            raise ConfigError(f"{sc.source}: grid.probes.{name}: the cell at {lats[i]:g} N, {lons[j]:g} E is masked")
        cells.append(dict(sc.sites[idx[i, j]], name=str(name)))
    sub = _sub_scenario(sc, [])
    sub.tables["output"]["series"] = True
    sub = dataclasses.replace(sub, sites=tuple(cells))
    ds = run(sub, write=False, tables=tables)
    ds.attrs["title"] = f"wetcycle probe cells of the gridded run {sc.name}"
    return ds


def assemble(sc, store, hashes=None):
    """The result of a finished run store: statistics on (salt, [bin,] lat, lon), CF-complete."""
    with xr.open_zarr(store, consolidated=False) as z:
        ds = z.load()
    if np.isnan(ds["cell_state"].values).any():
        raise InputDataError(f"run store: {str(store)!r} is not finished")
    bounds = [b for b in ("lat_bounds", "lon_bounds") if b in ds.variables]
    ds = ds[[k for k in _statistic_layout(sc) if k in ds] + bounds].set_coords(bounds)
    for k in ("fingerprint", "chunk_cells", "wetcycle_version"):
        ds.attrs.pop(k, None)
    planet = sc["scenario"]["planet"]
    t_end, first, info = run_period(sc)
    ds = add_time_bounds(ds, [t_end], t_end + first, time_attrs(info))
    ds = add_crs(ds, planet)
    from .runner import bin_coverage
    ds = frame_statistics(ds, sc, bin_coverage(sc))
    hab = sc["habitability"]
    years = t_end_years(sc, t_end, first)
    ds.attrs.update(
        title=f"wetcycle gridded result: {sc.name}", scenario_name=sc.name,
        scenario=sc.text or json.dumps(sc.tables, default=str), wetcycle_version=__version__,
        created=_dt.datetime.now(_dt.timezone.utc).strftime("%Y-%m-%dT%H:%M:%SZ"), caution=CAUTION,
        Conventions="CF-1.8", planet=planet, forcing=sc["forcing"]["kind"], law=sc["phase"]["law"],
        years=years, steps_per_sol=int(sc["clock"]["steps_per_sol"]),
        spinup_years=int(sc["clock"]["spinup_max_years"]) if sc["forcing"]["kind"] == "energy_balance" else 0,
        chunk_cells=int(sc["grid"]["chunk_cells"]),
        habitability_min_water_activity=float(hab["min_water_activity"]),
        habitability_min_temperature_K=float(hab["min_temperature"]),
        **phase_settings_attrs(sc["phase"]),
    )
    from .output import mixture_attrs, spinup_attrs
    ds.attrs.update(mixture_attrs(sc))
    if sc["forcing"]["kind"] == "energy_balance" and int(sc["clock"]["spinup_max_years"]) > 0:
        ds.attrs.update(spinup_attrs(sc))
    note_short_run(ds, years, planet)
    if sc["forcing"]["kind"] == "energy_balance":     # what the humidity rested on
        from .output import WATER_CAUTION
        from .runner import energy_balance_options
        ds.attrs["caution"] = CAUTION + " " + WATER_CAUTION
        for key, value in energy_balance_options(sc)[1].items():
            ds.attrs[key] = str(value)
    if hashes is not None:
        ds.attrs["input_sha256"] = json.dumps(hashes, sort_keys=True)
    if info.get("start_utc"):
        ds.attrs["start_utc"] = info["start_utc"]
    return ds


def t_end_years(sc, t_end, first):
    """Years simulated (the planet's years) by a run ending at ``t_end`` with a first step ``first``."""
    from .orbit import get_planet
    p = get_planet(sc["scenario"]["planet"])
    return float((t_end + first) / (p.year_sols * p.sol_s))


def write_grid_result(ds, path):
    """Write a gridded result: NetCDF, or a zarr store when ``path`` ends in ``.zarr`` (atomically)."""
    path = Path(path)
    if path.suffix.lower() != ".zarr":
        return write_result(ds, path)
    from .output import cf_encoded
    ds, enc = cf_encoded(ds)
    enc = {k: {kk: vv for kk, vv in v.items() if kk in ("_FillValue", "dtype")} for k, v in enc.items()}
    for k, v in list(enc.items()):
        if v.get("dtype") == "S1":  # zarr keeps text as text
            enc[k].pop("dtype")
    tmp = Path(tempfile.mkdtemp(prefix=f".{path.name}.", dir=path.parent))
    try:
        ds.to_zarr(tmp, mode="w", encoding=enc, consolidated=True, zarr_format=2)  # the widest-read format
        if path.exists():
            shutil.rmtree(path)
        os.replace(tmp, path)
        set_new_file_mode(path)
        os.chmod(path, 0o777 & ~_umask())
    finally:
        if tmp.exists():
            shutil.rmtree(tmp)
    return path


def _umask():
    from .output import _UMASK
    return _UMASK


def grid_coords(sc, n_ls):
    """Coordinates of a gridded result: salt, lat and lon with CF cell bounds, the bins."""
    import cf_xarray  # noqa: F401  (registers the .cf accessor)

    planet = sc["scenario"]["planet"]
    lats, lons = grid_axes(sc["grid"])
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
