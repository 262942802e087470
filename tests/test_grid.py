"""Gridded runs: chunk independence, worker independence, kill and resume, masking, CF coordinates.

Checks are invariants of the design (common practice for chunked computations: a chunk is a
pure function of its inputs) plus the CF-1.8 conventions for latitude/longitude coordinates.
"""

import tomllib
from pathlib import Path

import numpy as np
import pytest

from wetcycle import cli
from wetcycle.config import scenario_from_dict
from wetcycle.errors import ConfigError
from wetcycle.grid import run_dir_for, run_grid
from wetcycle.output import open_result

ROOT = Path(__file__).resolve().parents[1]
STATS = ("liquid_hours_per_year", "longest_liquid_spell_hours", "wet_events_per_year",
         "habitable_hours_per_year", "liquid_hours_by_ls")


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
    for k in STATS:
        x, y = a[k].values, b[k].values
        assert np.array_equal(np.isnan(x), np.isnan(y)), k
        # bitwise identical whatever the chunking or worker count (invariant)
        np.testing.assert_array_equal(x, y, err_msg=k)


def test_grid_layout_and_cf_coordinates(reference):
    ds = reference
    assert ds.liquid_hours_per_year.dims == ("salt", "lat", "lon")
    assert ds.lat.attrs["standard_name"] == "latitude" and ds.lat.attrs["units"] == "degrees_north"
    assert ds.lon.attrs["standard_name"] == "longitude" and ds.lon.attrs["units"] == "degrees_east"
    assert list(ds.lat.values) == [-60.0, -30.0, 0.0, 30.0, 60.0]
    # the mask: |lat| > 50 deg not modelled (NaN), the rest finite
    lh = ds.liquid_hours_per_year.values
    assert np.all(np.isnan(lh[:, [0, 4], :])) and np.all(np.isfinite(lh[:, 1:4, :]))
    assert ds.attrs["spinup_years"] == 2 and "caution" in ds.attrs


@pytest.mark.parametrize("chunk_cells", [1, 4])
def test_statistics_do_not_depend_on_chunking(tmp_path, reference, chunk_cells):
    same(run_grid(scenario_from_dict(grid_doc(tmp_path, chunk_cells=chunk_cells))), reference)


def test_statistics_do_not_depend_on_worker_count(tmp_path, reference):
    same(run_grid(scenario_from_dict(grid_doc(tmp_path, chunk_cells=2)), workers=2), reference)


def test_threads_give_the_same_statistics(tmp_path, reference):
    # In-process executor with two threads (the kernels release the GIL).
    same(run_grid(scenario_from_dict(grid_doc(tmp_path, chunk_cells=2)), workers=2, threads=True), reference)


def test_dask_local_cluster_gives_the_same_statistics(tmp_path, reference):
    # The same chunk function on a local dask.distributed cluster of two worker processes.
    pytest.importorskip("dask.distributed")
    same(run_grid(scenario_from_dict(grid_doc(tmp_path, chunk_cells=3)), workers=2, scheduler="local"),
         reference)


def test_unreachable_scheduler_is_one_clear_error(tmp_path):
    pytest.importorskip("dask.distributed")
    with pytest.raises(ConfigError, match="scheduler"):
        run_grid(scenario_from_dict(grid_doc(tmp_path)), scheduler="tcp://127.0.0.1:1")


def test_kill_and_resume_gives_the_same_result(tmp_path, reference):
    sc = scenario_from_dict(grid_doc(tmp_path, chunk_cells=2))
    with pytest.raises(KeyboardInterrupt):
        run_grid(sc, stop_after_chunks=2)
    out = tmp_path / "grid.nc"
    assert not out.exists()  # nothing half-written
    assert len(list(run_dir_for(out).glob("chunk_*.npz"))) == 2
    ds = run_grid(sc)  # the same command again: skips the two finished chunks
    same(ds, reference)
    same(open_result(out), reference)


def test_changed_scenario_refuses_to_resume(tmp_path):
    sc = scenario_from_dict(grid_doc(tmp_path, chunk_cells=3))
    with pytest.raises(KeyboardInterrupt):
        run_grid(sc, stop_after_chunks=1)
    changed = scenario_from_dict(grid_doc(tmp_path, chunk_cells=3, albedo=0.3))
    with pytest.raises(ConfigError, match="--fresh"):
        run_grid(changed)
    # an unreachable scheduler fails before --fresh discards anything (port 9 'discard': nothing listens)
    with pytest.raises(ConfigError, match="could not be reached"):
        run_grid(changed, fresh=True, scheduler="tcp://127.0.0.1:9")
    assert len(list(run_dir_for(tmp_path / "grid.nc").glob("chunk_*.npz"))) == 1
    ds = run_grid(changed, fresh=True)
    assert ds.sizes["lat"] == 5


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
