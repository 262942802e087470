"""Forcing from NetCDF files on (time, lat, lon), as climate models and gridded records write them.

References: the file's own numbers read with netCDF4 (the Unidata library, independent of
xarray's decoding) at the records the clock meets; CF conventions sec. 4.4.1 (the "noleap"
calendar of the demo file); the periodic solution of the heat equation (Carslaw & Jaeger 1959,
"Conduction of Heat in Solids", sec. 2.6) for the temperature at depth under a sinusoidal surface.
"""

import tomllib
from pathlib import Path

import numpy as np
import pytest

from wetcycle.clock import make_clock
from wetcycle.config import load_scenario, scenario_from_dict
from wetcycle.errors import ConfigError, InputDataError
from wetcycle.forcing.files import read_netcdf_cells, salt_temperature_from_surface
from wetcycle.grid import run_grid
from wetcycle.orbit import get_planet
from wetcycle.runner import run
from wetcycle.water import saturation_vapor_pressure_liquid

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "forcing" / "climate_demo.nc"
VARS = {"time": "time", "temperature": "ts", "vapor_pressure": "e", "surface_pressure": "ps"}


def test_cells_read_from_the_file_whatever_its_layout():
    # The demo file: lat descending, lon in -180..180, dimensions (time, lon, lat), e in hPa.
    import netCDF4
    with netCDF4.Dataset(DEMO) as nc:
        lat, lon = nc["lat"][:], nc["lon"][:]
        ts, e = nc["ts"][:], nc["e"][:]           # (time, lon, lat), raw numbers
    clock = make_clock("earth", steps_per_sol=8, n_sols=3, start_utc="2031-01-05T00:00:00Z")
    want_lat, want_lon = np.array([-71.5, -70.5]), np.array([350.0, 348.0])   # 0-360 here
    q = read_netcdf_cells(DEMO, clock, VARS, want_lat, want_lon)
    for c, (la, lo) in enumerate(zip(want_lat, want_lon)):
        i = int(np.flatnonzero(lat == la)[0])
        j = int(np.flatnonzero(lon == lo - 360.0)[0])
        # clock steps are 3 h like the file's records, so each step meets a record exactly
        np.testing.assert_allclose(q["temperature_K"][:, c], ts[:24, j, i], rtol=0, atol=1e-4)  # float32 file
        np.testing.assert_allclose(q["vapor_pressure_Pa"][:, c], 100.0 * e[:24, j, i], rtol=1e-6)  # hPa -> Pa


def test_cells_outside_the_file_refused():
    clock = make_clock("earth", steps_per_sol=8, n_sols=1, start_utc="2031-01-05T00:00:00Z")
    with pytest.raises(InputDataError, match="does not cover latitude -60") as ei:
        read_netcdf_cells(DEMO, clock, VARS, [-60.0], [350.0])
    assert "\n" not in str(ei.value)
    with pytest.raises(ConfigError, match="forcing.variables.colour"):
        read_netcdf_cells(DEMO, clock, dict(VARS, colour="ts"), [-71.0], [350.0])


def test_temperature_at_depth_matches_the_periodic_heat_equation():
    # Surface T = T0 + A sin(w t): at depth z the amplitude is A exp(-z/d), d = sqrt(2 kappa / w)
    # (Carslaw & Jaeger 1959, sec. 2.6).  Tolerance 3 %: the column's discretisation (a first
    # layer of 0.1 skin depth, stretched by 1.2) and the finite spin-up.
    earth = get_planet("earth")
    inertia, rho, cp = 600.0, 1500.0, 800.0
    kappa = (inertia / (rho * cp)) ** 2
    w = 2 * np.pi / 86400.0
    d = np.sqrt(2 * kappa / w)
    dt = 900.0
    t = np.arange(0, 20 * 86400.0, dt)
    surf = (250.0 + 20.0 * np.sin(w * t))[:, None] * np.ones((1, 3))
    depth = np.array([0.0, 0.5 * d, 1.0 * d])
    T = salt_temperature_from_surface(surf, dt, depth, inertia, rho, cp, earth)
    last = slice(-int(86400 / dt), None)               # the last day
    amp = 0.5 * (T[last].max(axis=0) - T[last].min(axis=0))
    np.testing.assert_array_equal(T[:, 0], surf[:, 0])  # depth 0: the surface itself
    np.testing.assert_allclose(amp[1:], 20.0 * np.exp(-depth[1:] / d), rtol=0.03)


def test_grid_scenario_runs_from_the_climate_file_and_does_not_depend_on_tiling(tmp_path):
    sc = load_scenario(ROOT / "runs" / "grid_climate_demo.toml")
    doc = tomllib.loads((ROOT / "runs" / "grid_climate_demo.toml").read_text())
    doc["clock"]["sols"] = 3
    doc["forcing"]["path"] = str(DEMO)
    a = run_grid(scenario_from_dict(dict(doc, scenario=dict(doc["scenario"], output=str(tmp_path / "a.nc")))))
    doc["grid"]["chunk_cells"] = 3
    b = run_grid(scenario_from_dict(dict(doc, scenario=dict(doc["scenario"], output=str(tmp_path / "b.nc")))))
    assert a.liquid_hours_per_year.dims == ("salt", "lat", "lon") and a.sizes["lon"] == 5
    assert np.isfinite(a.liquid_hours_per_year.values).all()
    assert float(a.liquid_hours_per_year.sel(salt="CaCl2").max()) > 0  # the warm, moist corner deliquesces
    for k in a.data_vars:
        if "lat" in a[k].dims:
            np.testing.assert_array_equal(a[k].values, b[k].values, err_msg=k)  # tiling invariant
    assert sc["forcing"]["variables"]["temperature"] == "ts"


def test_site_scenario_takes_a_netcdf_forcing_path(tmp_path):
    # Issue: a NetCDF forcing.path was refused although the field table allows it.
    doc = {"scenario": {"name": "nc_site", "planet": "earth", "output": str(tmp_path / "s.nc")},
           "clock": {"start_utc": "2031-01-05T00:00:00Z", "sols": 2, "steps_per_sol": 24},
           "site": [{"name": "Plateau edge (invented)", "latitude": -70.5, "longitude": -12.0}],
           "forcing": {"kind": "file", "path": str(DEMO), "variables": VARS},
           "salt": [{"name": "CaCl2"}]}
    ds = run(scenario_from_dict(doc))
    assert ds.sizes["time"] == 48 and np.isfinite(ds.surface_temperature).all()
    doc["forcing"].pop("variables")
    with pytest.raises(ConfigError, match="forcing.variables: required"):
        run(scenario_from_dict(doc))


def test_buried_salt_sees_the_vapour_pressure_at_its_own_temperature(tmp_path):
    # A salt below the surface, forced by a file with no salt temperature: the column gives its
    # temperature, and its relative humidity is the file's vapour pressure over the saturation
    # pressure at that temperature (Murphy & Koop 2005, eq. 10; iapws IAPWS-95 at 273.16 K below),
    # not at the surface's.
    from iapws import IAPWS95
    doc = {"scenario": {"name": "nc_buried", "planet": "earth", "output": str(tmp_path / "s.nc")},
           "clock": {"start_utc": "2031-01-05T00:00:00Z", "sols": 2, "steps_per_sol": 24},
           "site": [{"name": "Buried crust (invented)", "latitude": -70.5, "longitude": -12.0, "salt_depth": 0.05,
                     "thermal_inertia": 600.0}],
           "forcing": {"kind": "file", "path": str(DEMO), "variables": VARS},
           "salt": [{"name": "CaCl2"}],
           "output": {"series": True}}
    ds = run(scenario_from_dict(doc), write=False).isel(site=0)
    Ts, T0, e = ds.salt_temperature.values, ds.surface_temperature.values, ds.vapor_pressure.values
    assert np.max(np.abs(Ts - T0)) > 2.0  # the depth matters at this site
    want = np.clip(e / saturation_vapor_pressure_liquid(Ts.astype(float)), 0, 1)
    np.testing.assert_allclose(ds.relative_humidity.values, want, rtol=1e-5)  # float32 series
    # the saturation formula itself at the triple point against IAPWS-95 (iapws): 611.657 Pa
    assert abs(saturation_vapor_pressure_liquid(273.16) / (IAPWS95(T=273.16, x=0).P * 1e6) - 1) < 1e-4


@pytest.mark.parametrize("kind", ["csv", "prescribed"])
def test_csv_and_prescribed_forcing_honour_salt_depth(kind, tmp_path):
    # salt_depth was ignored outside NetCDF forcing: the salt sat at the surface temperature.  The
    # column under the surface series gives its temperature; the daily amplitude at depth z falls
    # as exp(-z/d) (Carslaw & Jaeger 1959, sec. 2.6), so a buried salt swings less than the surface.
    if kind == "csv":
        doc = tomllib.loads((ROOT / "runs" / "analog_file_demo.toml").read_text())
        base = ROOT / "runs"
    else:
        doc = {"scenario": {"name": "presc", "planet": "earth", "output": "x.nc"},
               "clock": {"start_utc": "2031-01-05T00:00:00Z", "sols": 4, "steps_per_sol": 48},
               "site": [{"name": "Invented flat", "latitude": 10.0, "longitude": 20.0}],
               "forcing": {"kind": "prescribed", "temperature_mean": 250.0, "temperature_diurnal_amplitude": 20.0,
                           "vapor_pressure_mean": 30.0},
               "salt": [{"name": "CaCl2"}], "output": {"series": True}}
        base = tmp_path
    for s in doc["site"]:
        s["salt_depth"] = 0.03
    ds = run(scenario_from_dict(doc, base_dir=base), write=False).isel(site=0)
    surf, salt = ds.surface_temperature.values, ds.salt_temperature.values
    assert np.ptp(salt) < 0.8 * np.ptp(surf)
    want = np.clip(ds.vapor_pressure.values / saturation_vapor_pressure_liquid(salt.astype(float)), 0, 1)
    np.testing.assert_allclose(ds.relative_humidity.values, want, rtol=1e-5)  # float32 series
