"""Gridded runs: tile and worker independence, kill and resume, locks, fingerprints, CF coordinates.

Checks are invariants of the design (common practice for chunked computations: a tile is a
pure function of its inputs) plus the CF-1.8 conventions for latitude/longitude coordinates.
"""

import os
import shutil
import signal
import subprocess
import sys
import time
import tomllib
from pathlib import Path

import numpy as np
import pytest
import xarray as xr

from wetcycle import cli, grid
from wetcycle.config import scenario_from_dict
from wetcycle.errors import ConfigError
from wetcycle.grid import StoreLock, run_dir_for, run_grid
from wetcycle.output import open_result

ROOT = Path(__file__).resolve().parents[1]


def grid_doc(tmp_path, chunk_cells=3, **grid):
    doc = tomllib.loads((ROOT / "runs" / "demo.toml").read_text())
    doc.pop("site")
    doc["grid"] = dict(lat_min=-60.0, lat_max=60.0, lat_step=30.0, lon_min=0.0, lon_max=120.0, lon_step=60.0,
                       mask_abs_latitude_above=50.0, chunk_cells=chunk_cells, albedo=0.22, thermal_inertia=250.0)
    doc["grid"].update(grid)
    doc["clock"].update(sols=3, steps_per_sol=24, spinup_max_years=2)
    doc["clock"].pop("years", None)
    doc["salt"] = doc["salt"][:2]
    doc["scenario"]["output"] = str(tmp_path / "grid.nc")
    return doc


@pytest.fixture(scope="module")
def reference(tmp_path_factory):
    tmp = tmp_path_factory.mktemp("ref")
    return run_grid(scenario_from_dict(grid_doc(tmp, chunk_cells=9)))


def same(a, b):
    # every statistic of the result, not a subset
    names = [k for k in a.data_vars if "lat" in a[k].dims]
    assert sorted(names) == sorted(k for k in b.data_vars if "lat" in b[k].dims)
    assert len(names) >= 14
    for k in names:
        x, y = a[k].values, b[k].values
        assert np.array_equal(np.isnan(x), np.isnan(y)), k
        # bitwise identical whatever the tiling or worker count (invariant)
        np.testing.assert_array_equal(x, y, err_msg=k)


def test_grid_layout_and_cf_coordinates(reference):
    ds = reference
    assert ds.liquid_hours_per_year.dims == ("salt", "lat", "lon")
    assert ds.liquid_hours_by_ls.dims == ("salt", "ls_bin", "lat", "lon")  # CF-1.8 sec. 2.4: X, Y last
    assert ds.lat.attrs["standard_name"] == "latitude" and ds.lat.attrs["units"] == "degrees_north"
    assert ds.lon.attrs["standard_name"] == "longitude" and ds.lon.attrs["units"] == "degrees_east"
    assert list(ds.lat.values) == [-60.0, -30.0, 0.0, 30.0, 60.0]
    # the mask: |lat| > 50 deg not modelled (NaN), the rest finite
    lh = ds.liquid_hours_per_year.values
    assert np.all(np.isnan(lh[:, [0, 4], :])) and np.all(np.isfinite(lh[:, 1:4, :]))
    assert ds.attrs["spinup_years"] == 2 and "caution" in ds.attrs
    # what the humidity rested on is recorded, as in site results (the humidity issue)
    assert "climatology" in ds.attrs["water_supply"] and "dust" in ds.attrs["dust_model"]


@pytest.mark.parametrize("chunk_cells", [1, 4])
def test_statistics_do_not_depend_on_tiling(tmp_path, reference, chunk_cells):
    same(run_grid(scenario_from_dict(grid_doc(tmp_path, chunk_cells=chunk_cells))), reference)


def test_statistics_do_not_depend_on_the_run_blocks(tmp_path, reference, monkeypatch):
    # invariant: the forcing and the phase model stream a run in blocks of FORCING_BLOCK_SOLS sols
    # (here one sol per block against the reference's one block of 3 sols); every statistic,
    # the summed water fluxes included, is bitwise the same
    from wetcycle import runner
    monkeypatch.setattr(runner, "FORCING_BLOCK_SOLS", 1)
    same(run_grid(scenario_from_dict(grid_doc(tmp_path, chunk_cells=9))), reference)


def test_coarse_spinup_keeps_tile_independence(tmp_path, reference):
    # spin-up years at 6 steps per sol (backward Euler) and 5 settling sols at the run's 24: still
    # bitwise-identical statistics whatever the tiling (one cell per tile against 9), and not the
    # full-step spin-up's numbers (the option reaches the tiles)
    def doc(chunk):
        (tmp_path / f"c{chunk}").mkdir()
        d = grid_doc(tmp_path / f"c{chunk}", chunk_cells=chunk)
        d["clock"].update(spinup_steps_per_sol=6, spinup_settle_sols=5)
        return d
    a = run_grid(scenario_from_dict(doc(1)))
    same(a, run_grid(scenario_from_dict(doc(9))))
    assert a.attrs["spinup_steps_per_sol"] == 6 and a.attrs["spinup_settle_sols"] == 5
    assert reference.attrs["spinup_steps_per_sol"] == 24 and "spinup_settle_sols" not in reference.attrs
    names = [k for k in a.data_vars if "lat" in a[k].dims]
    assert any(not np.array_equal(a[k].values, reference[k].values, equal_nan=True) for k in names)


def test_profile_shift_keeps_tile_independence(tmp_path, reference):
    # the node-by-node shift of the deep profile after each coarse spin-up year (clock.spinup_shift
    # = "profile") is computed cell by cell: bitwise-identical statistics whatever the tiling (one
    # cell per tile against 9), recorded in the result, and not the uniform shift's numbers
    def doc(chunk, shift):
        (tmp_path / f"c{chunk}{shift}").mkdir()
        d = grid_doc(tmp_path / f"c{chunk}{shift}", chunk_cells=chunk)
        d["clock"].update(spinup_steps_per_sol=6, spinup_settle_sols=5, spinup_shift=shift)
        return d
    a = run_grid(scenario_from_dict(doc(1, "profile")))
    same(a, run_grid(scenario_from_dict(doc(9, "profile"))))
    assert a.attrs["spinup_shift"] == "profile"
    b = run_grid(scenario_from_dict(doc(9, "bottom")))
    assert "spinup_shift" not in b.attrs
    names = [k for k in a.data_vars if "lat" in a[k].dims]
    assert any(not np.array_equal(a[k].values, b[k].values, equal_nan=True) for k in names)


def test_local_cluster_gives_the_same_statistics(tmp_path, reference):
    # The same tile function on a local dask cluster of two worker processes, other tiles.
    same(run_grid(scenario_from_dict(grid_doc(tmp_path, chunk_cells=2)), workers=2), reference)


def test_unreachable_scheduler_is_one_clear_error(tmp_path, monkeypatch):
    monkeypatch.setattr(grid, "CONNECT_TIMEOUT", "0.5s")  # nothing listens on port 1: no need to wait
    t0 = time.monotonic()
    with pytest.raises(ConfigError, match="scheduler"):
        run_grid(scenario_from_dict(grid_doc(tmp_path)), scheduler="tcp://127.0.0.1:1")
    assert time.monotonic() - t0 < 8.0


def test_local_cluster_binds_localhost_only_and_serves_no_dashboard():
    # A local cluster is a private affair: every listening socket of this process and of its workers
    # on the loopback interface (RFC 1122 sec. 3.2.1.3), no dashboard.
    psutil = pytest.importorskip("psutil")
    client, cluster = grid.dask_client(None, 1)
    try:
        me = psutil.Process()
        addrs = [c.laddr for p in [me] + me.children(recursive=True)
                 for c in p.net_connections(kind="inet") if c.status == psutil.CONN_LISTEN]
        assert addrs and all(a.ip == "127.0.0.1" for a in addrs)
        assert 8787 not in {a.port for a in addrs}  # the dashboard's port: not served unless asked
    finally:
        grid._close(client, cluster)


def test_local_cluster_workers_keep_freed_memory_for_reuse():
    # dask's default MALLOC_TRIM_THRESHOLD_ of 64 KiB makes glibc map and page-fault every array over
    # 128 KiB afresh (a third more CPU time per tile, README "Performance"): the local workers start
    # with wetcycle's settings instead (glibc's environment variables: mallopt(3), common practice).
    client, cluster = grid.dask_client(None, 1)
    try:
        seen = client.run(lambda: {k: os.environ.get(k) for k in grid.WORKER_MALLOC_ENV})
        assert list(seen.values()) == [{k: str(v) for k, v in grid.WORKER_MALLOC_ENV.items()}]
    finally:
        grid._close(client, cluster)


def _write_toml(doc, path):
    lines = []
    for table, body in doc.items():
        items = body if isinstance(body, list) else [body]
        for it in items:
            lines.append(f"[[{table}]]" if isinstance(body, list) else f"[{table}]")
            for k, v in it.items():
                if isinstance(v, bool):
                    lines.append(f"{k} = {'true' if v else 'false'}")
                elif isinstance(v, str):
                    lines.append(f"{k} = {v!r}".replace("'", '"'))
                elif isinstance(v, dict):
                    inner = ", ".join(f'{a} = "{b}"' for a, b in v.items())
                    lines.append(f"{k} = {{ {inner} }}")
                else:
                    lines.append(f"{k} = {v!r}")
    path.write_text("\n".join(lines) + "\n")
    return path


def test_sigkill_of_a_running_grid_leaves_no_worker_and_resumes(tmp_path, reference):
    # A real run of the command with 2 worker processes, killed with SIGKILL (cannot be caught)
    # once it has finished some tiles: no worker may survive it, the store keeps the finished tiles
    # (readable with xarray meanwhile), and the same command again gives the reference numbers.
    psutil = pytest.importorskip("psutil")
    doc = grid_doc(tmp_path, chunk_cells=1)
    path = _write_toml(doc, tmp_path / "g.toml")
    out = tmp_path / "grid.nc"
    store = run_dir_for(out)
    proc = subprocess.Popen([sys.executable, "-m", "wetcycle.cli", "run", str(path), "-q", "--workers", "2"],
                            stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    try:
        deadline = time.monotonic() + 240
        done = 0
        while time.monotonic() < deadline and proc.poll() is None:
            time.sleep(0.5)
            try:
                with xr.open_zarr(store, consolidated=False) as z:
                    done = int((z["cell_state"].values == 1).sum())
            except Exception:  # noqa: BLE001  (not created yet)
                continue
            if done >= 2:
                break
        assert proc.poll() is None and done >= 2, "the run finished or stalled before it could be killed"
        workers = psutil.Process(proc.pid).children(recursive=True)
        assert len(workers) >= 2
        proc.send_signal(signal.SIGKILL)
        proc.wait(30)
        gone, alive = psutil.wait_procs(workers, timeout=15)
        assert alive == [], f"worker processes outlived their parent: {[p.pid for p in alive]}"
    finally:
        if proc.poll() is None:
            proc.kill()
    assert not out.exists()  # nothing half-written
    with xr.open_zarr(store, consolidated=False) as z:
        state = z["cell_state"].values
        lh = z["liquid_hours_per_year"].values
    finished = state == 1
    assert finished.sum() >= 2 and np.isnan(state).any()
    np.testing.assert_array_equal(lh[:, finished], reference.liquid_hours_per_year.values[:, finished])
    ds = run_grid(scenario_from_dict(doc))  # the same run again: only the pending tiles
    same(ds, reference)
    same(open_result(out), reference)
    assert not store.exists()  # removed once the result is written


def test_changed_scenario_or_input_file_refuses_to_resume(tmp_path):
    # Issue: an edited property map reused old tiles.  The fingerprint holds every input by hash.
    shutil.copy(ROOT / "forcing" / "demo_region.nc", tmp_path / "map.nc")
    kw = dict(lat_min=-30.0, lat_max=30.0, lon_min=0.0, lon_max=90.0, lon_step=45.0,
              properties=str(tmp_path / "map.nc"), property_variables={"albedo": "alb"})
    sc = scenario_from_dict(grid_doc(tmp_path, **kw))
    run_grid(sc, write=False)  # keeps its store
    assert run_dir_for(tmp_path / "grid.nc").exists()
    with xr.open_dataset(tmp_path / "map.nc") as m:
        edited = m.load()
    edited["alb"] = edited["alb"] + 0.05
    edited.to_netcdf(tmp_path / "map.nc")
    sc2 = scenario_from_dict(grid_doc(tmp_path, **kw))
    with pytest.raises(ConfigError, match="different scenario, input file") as ei:
        run_grid(sc2)
    assert "\n" not in str(ei.value) and "--fresh" in str(ei.value)
    changed = scenario_from_dict(grid_doc(tmp_path, **dict(kw, albedo=0.3)))
    with pytest.raises(ConfigError, match="--fresh"):
        run_grid(changed)
    ds = run_grid(sc2, fresh=True)
    assert ds.sizes["lat"] == 3
    import json
    hashes = json.loads(ds.attrs["input_sha256"])
    from wetcycle.inputs import file_sha256
    assert hashes["grid.properties"]["sha256"] == file_sha256(tmp_path / "map.nc")  # FIPS 180-4 digest


def test_second_writer_refused_in_one_line(tmp_path, capsys):
    # One writer per run store: a second run (or a --fresh) while one holds the lock is refused.
    doc = grid_doc(tmp_path)
    path = _write_toml(doc, tmp_path / "g.toml")
    with StoreLock(run_dir_for(tmp_path / "grid.nc")):
        for extra in ([], ["--fresh"]):
            code = cli.main(["run", str(path), "-q"] + extra)
            err = capsys.readouterr().err
            assert code == 2 and err.count("\n") == 1 and "another wetcycle run" in err
    assert not (tmp_path / "grid.nc").exists()


def test_zarr_output(tmp_path, reference):
    sc = scenario_from_dict(grid_doc(tmp_path, chunk_cells=9))
    out = tmp_path / "res.zarr"
    ds = run_grid(sc, output_path=out)
    back = xr.open_zarr(out)
    same(back.load(), reference)
    assert back.liquid_hours_per_year.attrs["grid_mapping"] == "crs"


def test_grid_axes_stop_at_the_maximum():
    # A step that does not divide the span stops short of the maximum (never past it).
    from wetcycle.config import grid_axes
    lats, lons = grid_axes(dict(lat_min=-10.0, lat_max=10.0, lat_step=7.0, lon_min=0.0, lon_max=20.0, lon_step=5.0))
    np.testing.assert_allclose(lats, [-10.0, -3.0, 4.0])
    np.testing.assert_allclose(lons, [0.0, 5.0, 10.0, 15.0, 20.0])


def test_property_map_reaches_the_cells():
    # forcing/demo_region.nc (invented): albedo/inertia/elevation per cell from the file, the
    # NaN crater floor masks its cell, unmapped properties keep the grid-wide value.
    import xarray as xr
    doc = tomllib.loads((ROOT / "runs" / "grid_demo.toml").read_text())
    sc = scenario_from_dict(doc, base_dir=ROOT / "runs")
    f = xr.open_dataset(ROOT / "forcing" / "demo_region.nc")
    names = {s["name"] for s in sc.sites}
    assert len(sc.sites) == 9 * 7 - 1 and "cell_4_3" not in names  # (0 N, 45 E) lies in the crater
    for site in sc.sites[:10]:
        v = f.sel(lat=site["latitude"], lon=site["longitude"])
        assert site["albedo"] == pytest.approx(float(v.alb))
        assert site["thermal_inertia"] == pytest.approx(float(v.ti))
        assert site["emissivity"] == 0.95
    doc["grid"]["property_variables"] = {"albedo": "nope"}
    with pytest.raises(ConfigError, match="'nope' is not in"):
        scenario_from_dict(doc, base_dir=ROOT / "runs")
    doc["grid"]["property_variables"] = {"colour": "alb"}
    with pytest.raises(ConfigError, match="colour"):
        scenario_from_dict(doc, base_dir=ROOT / "runs")


def test_grid_config_errors():
    doc = grid_doc(Path("/tmp"))
    doc["site"] = [{"name": "x", "latitude": 0.0, "longitude": 0.0}]
    with pytest.raises(ConfigError, match="one or the other"):
        scenario_from_dict(doc)
    doc = grid_doc(Path("/tmp"), mask_abs_latitude_above=10.0, lat_min=20.0)
    with pytest.raises(ConfigError, match="masked"):
        scenario_from_dict(doc)


def test_cli_grid_run_summary_and_map(tmp_path, capsys):
    # runs/grid_demo.toml shortened to 2 sols on a coarse grid: run, summary, map
    text = (ROOT / "runs" / "grid_demo.toml").read_text()
    text = (text.replace("years = 1.0", "sols = 2").replace("spinup_max_years = 4", "spinup_max_years = 2")
            .replace("lat_step = 10.0", "lat_step = 40.0").replace("lon_step = 15.0", "lon_step = 45.0")
            .replace('output = "grid_demo/grid_demo.nc"', 'output = "g.nc"')
            .replace('"../forcing/demo_region.nc"', f'"{ROOT / "forcing" / "demo_region.nc"}"'))
    p = tmp_path / "g.toml"
    p.write_text(text)
    assert cli.main(["run", str(p), "-q"]) == 0
    out = capsys.readouterr().out
    assert "with liquid" in out and "Caution" in out
    assert cli.main(["summary", str(tmp_path / "g.nc")]) == 0
    assert "Ca(ClO4)2" in capsys.readouterr().out
    assert cli.main(["map", str(tmp_path / "g.nc"), "-o", str(tmp_path / "m.png")]) == 0
    assert (tmp_path / "m.png").stat().st_size > 10000
    ds = open_result(tmp_path / "g.nc")
    assert ds.liquid_hours_per_year.shape == (3, 3, 3)


def test_cli_workers_must_be_positive(tmp_path, capsys):
    text = (ROOT / "runs" / "grid_demo.toml").read_text()
    p = tmp_path / "g.toml"
    p.write_text(text.replace('output = "grid_demo/grid_demo.nc"', f'output = "{tmp_path / "g.nc"}"'))
    code = cli.main(["run", str(p), "--workers", "0", "-q"])
    err = capsys.readouterr().err
    assert code == 2 and err.count("\n") == 1 and "workers" in err
    assert not (tmp_path / "g.nc").exists()


def test_probe_cells_keep_series_equal_to_the_grid(tmp_path, reference):
    # Named probe cells of a grid get their full series (a site result beside the grid's); their
    # statistics are the grid's own at that cell (same path, same spin-up: exact).
    doc = grid_doc(tmp_path, chunk_cells=9, probes={"equator east": [1.0, 119.0], "south": [-30.0, 0.0]})
    run_grid(scenario_from_dict(doc))
    p = open_result(tmp_path / "grid.probes.nc")
    assert list(p.site.values) == ["equator east", "south"] and "phase_state" in p
    for site, (la, lo) in (("equator east", (0.0, 120.0)), ("south", (-30.0, 0.0))):
        for k in ("liquid_hours", "longest_liquid_spell_hours", "clamped_steps"):
            np.testing.assert_array_equal(p[k].sel(site=site).values,
                                          reference[k].sel(lat=la, lon=lo).values, err_msg=k)
    bad = grid_doc(tmp_path, probes={"pole": [89.0, 0.0]})
    with pytest.raises(ConfigError, match="grid.probes.pole"):
        run_grid(scenario_from_dict(bad))
