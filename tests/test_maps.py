"""Maps of gridded results draw one panel per salt (own or shared scale) and refuse bad input clearly.

The gridded result here is synthetic: invented per-cell values (a smooth function of
latitude and longitude, NaN over masked polar bands) arranged as (salt, lat, lon) with
the attributes of wetcycle.vocabulary.  A plotting test needs a field with structure,
not physics; what is checked is how the figure draws it.
"""

import numpy as np
import pytest
import xarray as xr

from wetcycle import maps
from wetcycle.errors import ConfigError, InputDataError, WetcycleError
from wetcycle.vocabulary import attrs

SALTS = ("Mg(ClO4)2", "CaCl2", "NaCl")
POLAR = 62.5                 # |lat| beyond this: masked cells (invented mask)
PNG_MIN_BYTES = 20_000       # a 150-dpi multi-panel PNG; an empty or failed canvas is a few kB


def make_grid(dlat=5.0, dlon=10.0):
    """A small invented gridded result (salt, lat, lon) with CF coordinate attributes."""
    lat = np.arange(-90.0 + dlat / 2, 90.0, dlat)
    lon = np.arange(dlon / 2, 360.0, dlon)
    la, lo = np.meshgrid(np.radians(lat), np.radians(lon), indexing="ij")
    base = 600.0 * np.cos(la) ** 4 * (1.0 + 0.3 * np.sin(lo))       # invented smooth field [hour]
    hours = np.stack([base * f for f in (1.0, 0.55, 0.2)])
    hours[:, np.abs(lat) > POLAR, :] = np.nan
    events = np.where(np.isfinite(hours), np.round(hours / 6.0), np.nan)
    by_ls = np.repeat(hours[..., None] / 12.0, 12, axis=-1)
    coords = dict(salt=("salt", list(SALTS)),
                  lat=("lat", lat, attrs("latitude") | {"axis": "Y"}),
                  lon=("lon", lon, attrs("longitude") | {"axis": "X"}),
                  ls_bin=("ls_bin", 15.0 + 30.0 * np.arange(12)))
    data = {"liquid_hours_per_year": (("salt", "lat", "lon"), hours, attrs("liquid_hours_per_year")),
            "wet_events_per_year": (("salt", "lat", "lon"), events, attrs("wet_events_per_year")),
            "liquid_hours_by_ls": (("salt", "lat", "lon", "ls_bin"), by_ls, attrs("liquid_hours_by_ls"))}
    ds = xr.Dataset(data, coords=coords)
    ds.attrs.update(scenario_name="grid-test", Conventions="CF-1.8")
    return ds


@pytest.fixture(scope="module")
def grid():
    return make_grid()


def _panels(fig):
    return [ax for ax in fig.axes if ax.get_label().startswith("map ")]


def _meshes(fig):
    """The QuadMesh of each map panel (the colour bar draws one of its own: left out)."""
    from matplotlib.collections import QuadMesh
    return [c for ax in _panels(fig) for c in ax.collections if isinstance(c, QuadMesh)]


def test_png_written_atomically(grid, tmp_path):
    out = maps.plot_map(grid, tmp_path / "hours.png")
    assert out == tmp_path / "hours.png"
    assert out.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    assert out.stat().st_size > PNG_MIN_BYTES
    assert sorted(p.name for p in tmp_path.iterdir()) == ["hours.png"]    # no temporary file left


@pytest.mark.parametrize("suffix", [".pdf", ".svg"])
def test_vector_formats(grid, tmp_path, suffix):
    out = maps.plot_map(grid, tmp_path / f"m{suffix}", salts="CaCl2")
    assert out.stat().st_size > 2_000        # a real page, not an empty file


def test_panels_and_colour_bar(grid):
    fig = maps.map_figure(grid, shared_scale=True)
    assert len(fig.axes) == len(SALTS) + 1                   # one panel per salt + one colour bar
    panels = _panels(fig)
    assert [ax.get_title(loc="left").splitlines()[0] for ax in panels] == list(SALTS)
    cbar = [ax for ax in fig.axes if ax.get_label() == "colour bar"][0]
    label = cbar.get_ylabel()
    assert "hours per Mars year with liquid brine" in label and "[h per Mars year]" in label
    texts = [t.get_text() for t in fig.texts]
    assert any("grid-test" in t and "liquid_hours_per_year" in t for t in texts)       # title
    assert maps.CAVEAT in texts
    assert any(ax.get_xlabel() == "longitude [°E]" for ax in panels)
    assert all(ax.get_ylabel() in ("latitude [°N]", "") for ax in panels)
    assert panels[0].get_ylabel() == "latitude [°N]"
    assert all(ax.get_aspect() == 1.0 for ax in panels)      # equal aspect in degrees


def test_own_colour_scale_per_salt_by_default(grid):
    # Issue: on one scale a salt with 111 h looked like zero.  Each panel runs from 0 to its own max.
    fig = maps.map_figure(grid)
    meshes = _meshes(fig)
    bars = [ax for ax in fig.axes if ax.get_label() == "colour bar"]
    assert len(meshes) == len(bars) == len(SALTS)
    for m, salt in zip(meshes, SALTS):
        own = np.nanmax(grid["liquid_hours_per_year"].sel(salt=salt).values)
        assert m.get_clim() == (0.0, pytest.approx(own))     # exact: the salt's data maximum
    texts = [t.get_text() for t in fig.texts]
    assert any("hours per Mars year with liquid brine [h per Mars year]" in t for t in texts)


def test_shared_colour_scale(grid):
    fig = maps.map_figure(grid, shared_scale=True)
    meshes = _meshes(fig)
    assert len(meshes) == len(SALTS)
    limits = {m.get_clim() for m in meshes}
    assert len(limits) == 1                                   # same vmin/vmax on every panel
    vmin, vmax = limits.pop()
    assert vmin == 0.0                                        # hours count from zero
    assert vmax == pytest.approx(np.nanmax(grid["liquid_hours_per_year"].values))   # exact: data maximum
    assert meshes[0].cmap.name.startswith(maps.MAP_COLORMAP)


def test_subset_keeps_scale_of_chosen_salts(grid):
    fig = maps.map_figure(grid, salts=["nacl", "CaCl2"], stat="wet_events_per_year", shared_scale=True)
    meshes = _meshes(fig)
    assert len(fig.axes) == 3
    vmax = np.nanmax(grid["wet_events_per_year"].sel(salt=["NaCl", "CaCl2"]).values)
    assert all(m.get_clim() == (0.0, vmax) for m in meshes)


def test_masked_cells_and_edges(grid):
    fig = maps.map_figure(grid)
    mesh = _meshes(fig)[0]
    arr = mesh.get_array()
    expected = ~np.isfinite(grid["liquid_hours_per_year"].isel(salt=0).values)
    assert expected.any() and not expected.all()
    np.testing.assert_array_equal(np.ma.getmaskarray(arr).reshape(expected.shape), expected)
    assert mesh.cmap.get_bad()[3] == 0.0                     # masked cells transparent over...
    ground = [p for p in _panels(fig)[0].patches if p.get_hatch()]
    assert ground and ground[0].get_facecolor()[:3] == (1.0, 1.0, 1.0)   # ...white hatching, outside cividis
    legend_text = [t.get_text() for leg in fig.legends for t in leg.get_texts()]
    assert any("masked" in t for t in legend_text)
    # cell edges midway between centres: common practice for pcolormesh; outer edges
    # half a spacing out, so a 5-degree grid centred at -87.5..87.5 spans -90..90 exactly
    xy = mesh.get_coordinates()                               # (nlat + 1, nlon + 1, 2)
    np.testing.assert_allclose(xy[:, 0, 1], np.arange(-90.0, 90.1, 5.0))
    np.testing.assert_allclose(xy[0, :, 0], np.arange(0.0, 360.1, 10.0))


def test_cf_bounds_used():
    ds = make_grid(dlat=30.0, dlon=90.0)
    ds = ds.isel(lat=slice(1, 5))                             # centres -45, -15, 15, 45
    b = np.stack([ds["lat"].values - 10.0, ds["lat"].values + 10.0], axis=1)
    # non-adjoining bounds are refused: a map needs contiguous cells
    ds_gap = ds.assign(lat_bnds=(("lat", "nv"), b))
    ds_gap["lat"].attrs["bounds"] = "lat_bnds"
    with pytest.raises(InputDataError, match="contiguous"):
        maps.map_figure(ds_gap)
    b = np.stack([ds["lat"].values - 15.0, ds["lat"].values + 15.0], axis=1)
    ds_ok = ds.assign(lat_bnds=(("lat", "nv"), b))
    ds_ok["lat"].attrs["bounds"] = "lat_bnds"
    xy = _meshes(maps.map_figure(ds_ok))[0].get_coordinates()
    np.testing.assert_allclose(xy[:, 0, 1], [-60.0, -30.0, 0.0, 30.0, 60.0])


def test_single_salt_string(grid):
    fig = maps.map_figure(grid, salts="Mg(ClO4)2")
    assert len(fig.axes) == 2


def test_netcdf_path_input(grid, tmp_path):
    nc = tmp_path / "grid.nc"
    grid.to_netcdf(nc)
    assert maps.plot_map(nc, tmp_path / "from-file.png").stat().st_size > PNG_MIN_BYTES


# ---- errors: one line, field named, what is allowed ----------------------------------
def _one_line(excinfo):
    msg = str(excinfo.value)
    assert "\n" not in msg
    assert isinstance(excinfo.value, WetcycleError)
    return msg


def test_error_stat_missing(grid, tmp_path):
    with pytest.raises(ConfigError) as e:
        maps.plot_map(grid, tmp_path / "x.png", stat="liquid_hours")
    msg = _one_line(e)
    assert "stat" in msg and "liquid_hours_per_year" in msg and "wet_events_per_year" in msg
    assert not (tmp_path / "x.png").exists()


def test_error_stat_not_per_cell(grid, tmp_path):
    with pytest.raises(ConfigError) as e:
        maps.plot_map(grid, tmp_path / "x.png", stat="liquid_hours_by_ls")
    msg = _one_line(e)
    assert "ls_bin" in msg and "(salt, lat, lon)" in msg


def test_error_salt_missing(grid, tmp_path):
    with pytest.raises(ConfigError) as e:
        maps.plot_map(grid, tmp_path / "x.png", salts=["CaCl2", "KClO4"])
    msg = _one_line(e)
    assert "KClO4" in msg and "CaCl2" in msg


def test_error_not_gridded(tmp_path):
    ds = xr.Dataset({"liquid_hours_per_year": (("salt", "site"), np.ones((1, 2)),
                                               attrs("liquid_hours_per_year"))},
                    coords=dict(salt=["NaCl"], site=["A", "B"]))
    with pytest.raises(InputDataError) as e:
        maps.plot_map(ds, tmp_path / "x.png")
    assert "not a gridded result: use wetcycle plot" in _one_line(e)


@pytest.mark.parametrize("name", ["map.jpg", "map", "map.PNG.bak"])
def test_error_suffix(grid, tmp_path, name):
    with pytest.raises(ConfigError) as e:
        maps.plot_map(grid, tmp_path / name)
    msg = _one_line(e)
    assert ".png" in msg and ".pdf" in msg and ".svg" in msg
    assert list(tmp_path.iterdir()) == []


def test_error_descending_and_single_cell(grid):
    with pytest.raises(InputDataError, match="ascending"):
        maps.map_figure(grid.isel(lat=slice(None, None, -1)))
    with pytest.raises(InputDataError, match="bounds"):
        maps.map_figure(grid.isel(lat=[10]))


def test_outer_latitude_edges_clipped_at_poles():
    ds = make_grid(dlat=30.0, dlon=90.0).isel(lat=[0, 2, 3, 5])         # centres -75, -15, 15, 75
    xy = _meshes(maps.map_figure(ds))[0].get_coordinates()
    # midway edges -45, 0, 45; outer edges half a spacing out (-105, 105) clipped to the poles
    np.testing.assert_allclose(xy[:, 0, 1], [-90.0, -45.0, 0.0, 45.0, 90.0])


def test_non_count_statistic_scales_to_data_range(grid):
    aw = 0.5 + 0.4 * grid["liquid_hours_per_year"] / 1000.0              # invented, NaN stays NaN
    ds = grid.assign(liquid_water_activity_min=aw.assign_attrs(attrs("liquid_water_activity_min")))
    fig = maps.map_figure(ds, stat="liquid_water_activity_min", shared_scale=True)
    lo, hi = np.nanmin(aw.values), np.nanmax(aw.values)
    assert all(m.get_clim() == pytest.approx((lo, hi)) for m in _meshes(fig))   # exact: data range
    assert "water activity" in [ax for ax in fig.axes if ax.get_label() == "colour bar"][0].get_ylabel()
