"""``wetcycle.run_dataset``: the phase model over an xarray Dataset, lazily with dask.

The reference of these tests is ``wetcycle.run_series`` on one cell's series (itself checked
against published tables in test_phase.py and test_phase_metastable.py): every statistic and every
per-step variable of every cell must be bitwise equal, for dask-chunked input, for either
humidity variable, for extra dimensions and any dimension order.  Unit conversions are checked
against their definitions: 0 degC = 273.15 K and 1 hPa = 100 Pa exactly (BIPM, SI Brochure,
9th ed. 2019), 1 % = 0.01.  The relative humidity from vapour pressure is checked at the triple
point of water, 273.16 K and 611.657 Pa (IAPWS R14-08).

The forcing is invented for these tests: a few cells, two Mars sols of a sinusoidal diurnal
cycle whose amplitude falls with latitude, humidity high in the cold night, a frost cover at
night in the coldest row, and a varying surface pressure.
"""

import numpy as np
import pytest
import xarray as xr

import wetcycle
from wetcycle.errors import InputDataError
from wetcycle.forcing.vapour import relative_humidity_for_salt
from wetcycle.water import saturation_vapor_pressure_liquid

SOL = 88775.244                     # s, Mars solar day (Allison & McEwen 2000)
STEPS = 48                          # per sol: small arrays keep the tests fast
SALTS = ["Ca(ClO4)2", "Mg(ClO4)2"]
LAT = np.array([-30.0, 0.0, 45.0])
LON = np.array([0.0, 120.0])


def invented_forcing(vapour=False, frost=True):
    """An invented forcing on (time, lat, lon): numbers of our own, not from any site or model."""
    t = np.arange(0, 2 * SOL, SOL / STEPS)
    ph = 2 * np.pi * (t[:, None, None] / SOL + LON[None, None, :] / 360.0)
    amp = (32.0 - 0.3 * np.abs(LAT))[None, :, None]
    T = 212.0 + amp * np.sin(ph) + 0.0 * ph
    rh = np.clip(0.95 - 0.9 * (T - 185.0) / 60.0, 0.02, 1.0)
    e = rh * saturation_vapor_pressure_liquid(T)
    P = 620.0 + 15.0 * np.cos(2 * np.pi * t / SOL)
    data = {"surface_temperature": (("time", "lat", "lon"), T, {"units": "K"}),
            "surface_pressure": (("time",), P, {"units": "Pa"})}
    if vapour:
        data["vapor_pressure"] = (("time", "lat", "lon"), e, {"units": "Pa"})
    else:
        data["relative_humidity"] = (("time", "lat", "lon"), rh, {"units": "1"})
    if frost:
        fr = np.where((T < 195.0) & (LAT[None, :, None] > 40.0), 0.02, 0.0)
        data["water_frost"] = (("time", "lat", "lon"), fr, {"units": "kg m-2"})
    return xr.Dataset(data, coords={"time": ("time", t, {"units": "s"}), "lat": ("lat", LAT), "lon": ("lon", LON)})


def cell_reference(forcing, salt, **sel):
    """run_series on one cell of an SI forcing (the reference path)."""
    c = forcing.isel(**sel)
    T = c["surface_temperature"].values
    rh = (c["relative_humidity"].values if "relative_humidity" in c
          else relative_humidity_for_salt(c["vapor_pressure"].values, T))
    kw = {}
    if "water_frost" in c:
        kw["frost_kg_m2"] = c["water_frost"].values
    if "surface_pressure" in c:
        kw["surface_pressure_Pa"] = c["surface_pressure"].values
    return wetcycle.run_series(salt, c["time"].values, T, rh, **kw)


def assert_cell_equal(cell, ref):
    for k in ref.data_vars:
        np.testing.assert_array_equal(cell[k].values, ref[k].values, err_msg=k)
    np.testing.assert_array_equal(cell["time"].values, ref["time"].values)


@pytest.fixture(scope="module")
def chunked_result():
    fc = invented_forcing().chunk({"lat": 2, "lon": 1})
    return fc, wetcycle.run_dataset(fc, SALTS, series=True)


def test_chunked_input_gives_a_lazy_result(chunked_result):
    _, ds = chunked_result
    import dask.array as da
    for k, v in ds.data_vars.items():
        if "lat" in v.dims:
            assert isinstance(v.data, da.Array), k
    assert ds["liquid_hours"].dims == ("salt", "lat", "lon")
    assert ds["phase_state"].dims == ("salt", "time", "lat", "lon")
    assert list(ds.salt.values) == SALTS
    assert ds["liquid_hours"].chunks == ((1, 1), (2, 1), (1, 1))


def test_every_cell_equals_run_series_with_relative_humidity(chunked_result):
    fc, ds = chunked_result
    ds = ds.compute()
    fc = fc.compute()
    for salt in SALTS:
        for i in range(LAT.size):
            for j in range(LON.size):
                assert_cell_equal(ds.sel(salt=salt).isel(lat=i, lon=j), cell_reference(fc, salt, lat=i, lon=j))
    # the forcing reaches both outcomes for both salts, so the comparison is not of zeros alone
    # (Mg(ClO4)2 eutectic ~206 K, Ca(ClO4)2 ~198 K, both with deliquescence RH well below 0.9)
    for salt in SALTS:
        lh = ds["liquid_hours"].sel(salt=salt).values
        assert np.any(lh > 0), salt
    assert np.any(ds["water_exchanged"].values > 0) and np.any(ds["ice_water"].values >= 0)


def test_every_cell_equals_run_series_with_vapour_pressure():
    fc = invented_forcing(vapour=True, frost=False)
    ds = wetcycle.run_dataset(fc.chunk({"lat": 1}), SALTS, series=True, law="equilibrium").compute()
    for salt in SALTS:
        for i in range(LAT.size):
            for j in range(LON.size):
                ref = cell_reference(fc, salt, lat=i, lon=j)
                ref_eq = wetcycle.run_series(salt, ref["time"].values, ref["salt_temperature"].values,
                                             ref["relative_humidity"].values,
                                             surface_pressure_Pa=ref["surface_pressure"].values, law="equilibrium")
                assert_cell_equal(ds.sel(salt=salt).isel(lat=i, lon=j), ref_eq)
    assert np.any(ds["liquid_hours"].values > 0)


def test_relative_humidity_from_vapour_pressure_at_the_triple_point():
    # IAPWS R14-08: the triple point of water, 273.16 K and 611.657 Pa, is saturated (RH 1);
    # 1e-6 covers Murphy & Koop's formula there (611.6570 Pa) and the 6-digit pressure.
    rh = relative_humidity_for_salt(np.array([611.657, 305.8285, 900.0]), np.full(3, 273.16))
    assert rh[0] == pytest.approx(1.0, abs=1e-6)
    assert rh[1] == pytest.approx(0.5, abs=1e-6)
    assert rh[2] == 1.0                             # supersaturated air is clipped to saturation


def test_extra_dimensions_pass_through_and_dimension_order_does_not_matter():
    fc = invented_forcing()
    members = xr.concat([fc, fc.assign(relative_humidity=fc["relative_humidity"] * 0.8)],
                        dim=xr.DataArray([1, 2], dims="ensemble", name="ensemble"))
    swapped = members.transpose("ensemble", "lon", "time", "lat").chunk({"ensemble": 1, "lon": 1})
    t0 = np.datetime64("2031-03-01T00:00:00", "ns")
    swapped = swapped.assign_coords(time=t0 + (swapped["time"].values * 1e9).astype("timedelta64[ns]"))
    ds = wetcycle.run_dataset(swapped, SALTS[0], series=True).compute()
    assert ds["liquid_hours"].dims == ("salt", "ensemble", "lon", "lat")
    assert ds["liquid_fraction"].dims == ("salt", "time", "ensemble", "lon", "lat")
    np.testing.assert_array_equal(ds["ensemble"].values, [1, 2])
    assert ds["time"].attrs["units"] == "seconds since 2031-03-01 00:00:00.000"
    for m in (0, 1):
        for i in range(LAT.size):
            for j in range(LON.size):
                cell = ds.isel(salt=0, ensemble=m, lat=i, lon=j)
                ref = cell_reference(swapped.isel(ensemble=m).compute(), SALTS[0], lat=i, lon=j)
                assert ref["time"].attrs == cell["time"].attrs
                assert_cell_equal(cell, ref)
    # the drier member is a different series (the extra dimension is not collapsed)
    assert not np.array_equal(ds["liquid_fraction"].isel(ensemble=0).values,
                              ds["liquid_fraction"].isel(ensemble=1).values)


def test_celsius_percent_and_hectopascal_are_converted():
    si = invented_forcing(vapour=True, frost=False)
    T_C = si["surface_temperature"].values - 273.15
    e_hPa = si["vapor_pressure"].values / 100.0
    P_hPa = si["surface_pressure"].values / 100.0
    other = si.assign(surface_temperature=(si["surface_temperature"].dims, T_C, {"units": "degC"}),
                      vapor_pressure=(si["vapor_pressure"].dims, e_hPa, {"units": "hPa"}),
                      surface_pressure=(("time",), P_hPa, {"units": "hPa"}))
    # the SI forcing the conversions must give: 0 degC = 273.15 K, 1 hPa = 100 Pa (SI Brochure 2019)
    ref = si.assign(surface_temperature=(si["surface_temperature"].dims, T_C + 273.15, {"units": "K"}),
                    vapor_pressure=(si["vapor_pressure"].dims, e_hPa * 100.0, {"units": "Pa"}),
                    surface_pressure=(("time",), P_hPa * 100.0, {"units": "Pa"}))
    a = wetcycle.run_dataset(other.chunk({"lat": 1}), SALTS[0], series=True).compute()
    b = wetcycle.run_dataset(ref, SALTS[0], series=True)
    xr.testing.assert_identical(a, b)

    rh = invented_forcing(frost=False)
    pct = rh.assign(relative_humidity=(rh["relative_humidity"].dims, rh["relative_humidity"].values * 100.0,
                                       {"units": "%"}))
    frac = rh.assign(relative_humidity=(rh["relative_humidity"].dims, pct["relative_humidity"].values * 0.01,
                                        {"units": "1"}))
    unitless = frac.copy()
    del unitless["relative_humidity"].attrs["units"]       # no units attribute: SI (a fraction) assumed
    a = wetcycle.run_dataset(pct, SALTS[1])
    xr.testing.assert_identical(a, wetcycle.run_dataset(frac, SALTS[1]))
    xr.testing.assert_identical(a, wetcycle.run_dataset(unitless, SALTS[1]))


@pytest.mark.parametrize("var, units, allowed", [
    ("surface_temperature", "degF", "'K', 'kelvin'"),
    ("relative_humidity", "g/kg", "'1', '', '%'"),
    ("surface_pressure", "atm", "'Pa', 'hPa'"),
])
def test_bad_units_are_refused_in_one_line(var, units, allowed):
    fc = invented_forcing()
    fc[var].attrs["units"] = units
    with pytest.raises(InputDataError) as err:
        wetcycle.run_dataset(fc, SALTS[0])
    msg = str(err.value)
    assert "\n" not in msg
    assert msg.startswith(f"{var}: units {units!r} are not allowed; allowed: {allowed}")


def test_bad_time_and_missing_or_doubled_humidity_are_refused():
    fc = invented_forcing()
    hours = fc.assign_coords(time=("time", fc["time"].values / 3600.0, {"units": "hours since 2031-01-01"}))
    with pytest.raises(InputDataError, match=r"^time: units 'hours since 2031-01-01' are not allowed"):
        wetcycle.run_dataset(hours, SALTS[0])
    with pytest.raises(InputDataError, match="neither relative_humidity nor vapor_pressure"):
        wetcycle.run_dataset(fc.drop_vars("relative_humidity"), SALTS[0])
    both = fc.assign(vapor_pressure=fc["relative_humidity"] * 0 + 0.1)
    with pytest.raises(InputDataError, match="both relative_humidity and vapor_pressure"):
        wetcycle.run_dataset(both, SALTS[0])
    with pytest.raises(InputDataError, match="no 'surface_temperature'"):
        wetcycle.run_dataset(fc.drop_vars("surface_temperature"), SALTS[0])


def test_values_out_of_range_are_refused_when_computed():
    fc = invented_forcing()
    fc["relative_humidity"] = fc["relative_humidity"] * 100.0     # percent, but labelled a fraction
    lazy = wetcycle.run_dataset(fc.chunk({"lat": 1}), SALTS[0])
    with pytest.raises(InputDataError, match=r"^relative_humidity: .* is outside 0 to 1 \(a fraction"):
        lazy.compute()
    cold = invented_forcing()
    cold["surface_temperature"] = cold["surface_temperature"] - 273.15     # degC labelled K
    with pytest.raises(InputDataError, match=r"^surface_temperature: .* is outside 50 to 400 K"):
        wetcycle.run_dataset(cold, SALTS[0])


def test_variables_carry_the_names_and_attributes_of_result_files(chunked_result):
    from wetcycle.vocabulary import attrs
    fc, ds = chunked_result
    ref = cell_reference(fc.compute(), SALTS[0], lat=0, lon=0)
    assert set(ref.data_vars) == set(ds.data_vars)
    for k in ref.variables:
        assert ds[k].attrs == ref[k].attrs, k
    for k in ds.data_vars:
        assert ds[k].attrs == attrs(k), k          # the one vocabulary output.py writes from
    assert ds.attrs["Conventions"] == "CF-1.8" and "not evidence" in ds.attrs["caution"]
    assert ds.attrs["phase_law"] == wetcycle.phase.DEFAULTS["law"]


def test_statistics_alone_and_streamed_in_short_blocks_are_the_same(chunked_result, monkeypatch):
    # run_cells streams the series in blocks carrying the state and the accumulators: blocks of
    # 7 steps (not a divisor of the 96 steps) must give bitwise the statistics of one block
    import wetcycle.block
    fc, full = chunked_result
    monkeypatch.setattr(wetcycle.block, "BLOCK_STEPS", 7)
    short = wetcycle.run_dataset(fc, SALTS, series=False)
    assert "time" not in short.dims and "phase_state" not in short
    short, full = short.compute(), full.compute()
    for k in short.data_vars:
        np.testing.assert_array_equal(short[k].values, full[k].values, err_msg=k)
    streamed = wetcycle.run_dataset(fc, SALTS[0], series=True).compute()
    np.testing.assert_array_equal(streamed["liquid_water"].values, full["liquid_water"].sel(salt=[SALTS[0]]).values)


def test_a_time_axis_in_several_chunks_streams_and_equals_one_chunk(chunked_result):
    # DESIGN decision 1: a time axis longer than memory streams through the block function,
    # carrying the state.  Time chunks of 25 steps (not a divisor of the 96) stay separate chunks
    # in the result (never gathered into one), and every statistic and per-step variable equals
    # the one-chunk result bitwise (which equals run_series, above).
    fc, full = chunked_result
    streamed = wetcycle.run_dataset(fc.chunk({"lat": 2, "lon": 1, "time": 25}), SALTS, series=True)
    assert streamed["phase_state"].chunks[1] == (25, 25, 25, 21)
    assert streamed["liquid_hours"].chunks == ((1, 1), (2, 1), (1, 1))
    streamed, full = streamed.compute(), full.compute()
    for k in full.data_vars:
        np.testing.assert_array_equal(streamed[k].values, full[k].values, err_msg=k)
    assert np.any(full["liquid_hours"].values > 0)


def test_streamed_vapour_pressure_without_pressure_and_a_single_cell():
    # the same bitwise equality for the other humidity variable, the default surface pressure (a
    # NumPy array among dask ones) and a series with no dimension but time
    fc = invented_forcing(vapour=True).drop_vars("surface_pressure").isel(lat=2, lon=0)
    one = wetcycle.run_dataset(fc, SALTS[0], series=True, law="equilibrium")
    many = wetcycle.run_dataset(fc.chunk({"time": 10}), SALTS[0], series=True, law="equilibrium")
    assert len(many["liquid_water"].chunks[-1]) == 10
    many = many.compute()
    for k in one.data_vars:
        np.testing.assert_array_equal(many[k].values, one[k].values, err_msg=k)
    assert float(one["liquid_hours"].sum()) > 0


def test_streamed_values_out_of_range_are_refused_when_computed():
    fc = invented_forcing()
    fc["relative_humidity"] = fc["relative_humidity"] * 100.0     # percent, but labelled a fraction
    lazy = wetcycle.run_dataset(fc.chunk({"lat": 1, "time": 30}), SALTS[0])
    with pytest.raises(InputDataError, match=r"^relative_humidity: .* is outside 0 to 1 \(a fraction"):
        lazy.compute()


def test_masked_cells_are_selected_out_by_stacking_and_come_back_as_nan():
    # the README's recipe for a land-only (NaN-masked) field: stack the cells, drop the all-NaN
    # ones, run, unstack.  The masked cell is NaN; every other cell equals its unmasked run.
    fc = invented_forcing()
    hole = (fc.lat == 0.0) & (fc.lon == 120.0)
    masked = fc.copy()
    for k in ("surface_temperature", "relative_humidity"):
        masked[k] = fc[k].where(~hole)
    land = masked.stack(cell=("lat", "lon")).dropna("cell", how="all", subset=["surface_temperature"])
    ds = wetcycle.run_dataset(land, SALTS[0]).unstack("cell")
    ref = wetcycle.run_dataset(fc, SALTS[0])
    lh = ds["liquid_hours"].sel(salt=SALTS[0]).transpose("lat", "lon")
    assert np.isnan(lh.sel(lat=0.0, lon=120.0)) and int(lh.isnull().sum()) == 1
    keep = ~hole.transpose("lat", "lon").values
    np.testing.assert_array_equal(lh.values[keep], ref["liquid_hours"].sel(salt=SALTS[0]).values[keep])


def test_readme_example_runs_as_written():
    # README, "From xarray: run_dataset": the snippet runs as printed (documentation kept true)
    import re
    from pathlib import Path
    text = (Path(__file__).resolve().parents[1] / "README.md").read_text(encoding="utf-8")
    section = text.split("### From xarray: `run_dataset`")[1]
    code = re.search(r"```python\n(.+?)```", section, flags=re.S).group(1)
    scope = {}
    exec(compile(code, "README.md", "exec"), scope)
    ds = scope["ds"]
    assert ds["liquid_hours"].dims == ("salt", "lat", "lon")
    assert float(ds["liquid_hours"].sel(salt="Ca(ClO4)2").min()) > 0
