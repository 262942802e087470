"""Forcing driver: blocks, state, chunking, spin-up (wetcycle.forcing.driver)."""

import dataclasses
import subprocess
import sys

import numpy as np
import pytest

from wetcycle.clock import make_clock
from wetcycle.errors import ConfigError
from wetcycle.forcing import driver as dr
from wetcycle.forcing.supply import constant_mixing_ratio_table
from wetcycle.water import saturation_vapor_pressure_ice, saturation_vapor_pressure_liquid

# Invented cells: equatorial, mid-latitude slope with a buried salt, ice-cemented
# high-latitude soil.
CELLS = dict(latitude_deg=[0.0, -40.0, 68.0], longitude_deg=[10.0, 200.0, 300.0],
             elevation_m=[-2000.0, 1000.0, -4000.0], albedo=[0.22, 0.27, 0.2],
             thermal_inertia=[250.0, 400.0, 200.0], slope_deg=[0.0, 15.0, 0.0],
             slope_azimuth_deg=[0.0, 180.0, 0.0], salt_depth_m=[0.0, 0.01, 0.005],
             layer2_depth_m=[np.inf, np.inf, 0.3])


@pytest.fixture(scope="module")
def setup():
    clock = make_clock("mars", steps_per_sol=24, n_sols=4, start_ls=120.0)
    cells = dr.make_cells(**CELLS)
    model = dr.prepare_forcing(cells, clock)
    return clock, cells, model


def test_block_outputs_shapes_and_units(setup):
    clock, cells, model = setup
    state = dr.initial_state(model, clock)
    new, out = dr.forcing_block(model, state, clock)
    assert set(out) == set(dr.OUTPUT_UNITS)
    for k, v in out.items():
        assert v.shape == (clock.steps_per_sol, cells.n_cells), k
        assert np.all(np.isfinite(v)), k
    assert new.step == clock.steps_per_sol and state.step == 0
    # RH definitions (Murphy & Koop 2005 via wetcycle.water), at the salt temperature
    np.testing.assert_allclose(out["relative_humidity"] * saturation_vapor_pressure_liquid(
        out["salt_temperature"]), out["vapor_pressure"], rtol=1e-12)
    cold = out["salt_temperature"] <= 273.16        # Murphy & Koop's ice formula ends at the triple point
    assert cold.any()
    np.testing.assert_allclose(out["relative_humidity_ice"][cold] * saturation_vapor_pressure_ice(
        out["salt_temperature"][cold]), out["vapor_pressure"][cold], rtol=1e-12)
    # a surface crust sees the surface temperature
    np.testing.assert_array_equal(out["salt_temperature"][:, 0], out["surface_temperature"][:, 0])


def test_blocks_chain_exactly(setup):
    # One call over 2 sols == two 1-sol calls with the state carried (restartable).
    clock, _, model = setup
    s0 = dr.initial_state(model, clock)
    s2, both = dr.forcing_block(model, s0, clock, 2 * clock.steps_per_sol)
    s1, first = dr.forcing_block(model, s0, clock)
    s1b, second = dr.forcing_block(model, s1, clock)
    for k in both:
        np.testing.assert_array_equal(both[k], np.concatenate([first[k], second[k]]))
    for f in ("temperature", "co2_frost", "regolith_water", "air_vapour_density", "air_temperature"):
        np.testing.assert_array_equal(getattr(s2.column, f), getattr(s1b.column, f))


def test_results_do_not_depend_on_chunking(setup):
    # A chunk is a pure function of its cells: each cell alone gives the same numbers as the
    # three together, bit for bit (invariant: per-cell Newton convergence and per-cell reductions
    # in a fixed summation order).
    clock, cells, model = setup
    _, together = dr.forcing_block(model, dr.initial_state(model, clock), clock, 48)
    for i in range(cells.n_cells):
        one = dr.make_cells(**{k: [v[i]] for k, v in CELLS.items()})
        m1 = dr.prepare_forcing(one, clock)
        _, alone = dr.forcing_block(m1, dr.initial_state(m1, clock), clock, 48)
        for k in together:
            np.testing.assert_array_equal(alone[k][:, 0], together[k][:, i])


def test_results_do_not_depend_on_chunking_in_wide_blocks():
    # Chunks wider than 32 cells run in 64-cell blocks with partial second solves: a cell's
    # numbers must still equal those of the cell alone, bit for bit (invariant).  Invented cells.
    clock = make_clock("mars", steps_per_sol=48, n_sols=2, start_ls=300.0)
    rng = np.random.default_rng(7)
    n = 70
    props = dict(latitude_deg=rng.uniform(-80, 80, n), longitude_deg=rng.uniform(0, 360, n),
                 thermal_inertia=rng.uniform(150, 600, n), albedo=rng.uniform(0.1, 0.3, n),
                 layer2_depth_m=np.where(rng.random(n) < 0.3, rng.uniform(0.03, 0.3, n), np.inf))
    cells = dr.make_cells(**props)
    model = dr.prepare_forcing(cells, clock)
    _, together = dr.forcing_block(model, dr.initial_state(model, clock), clock, 96)
    for i in (0, 33, 64, 69):
        one = dr.make_cells(**{k: [v[i]] for k, v in props.items()})
        m1 = dr.prepare_forcing(one, clock)
        _, alone = dr.forcing_block(m1, dr.initial_state(m1, clock), clock, 96)
        for k in together:
            np.testing.assert_array_equal(alone[k][:, 0], together[k][:, i], err_msg=f"{k} cell {i}")


def test_kernel_cell_order_changes_no_number(monkeypatch):
    # The column kernel takes a chunk's cells sorted by their number of water-column nodes
    # (column._cell_order) so that its blocks hold like columns; outputs and the state must be
    # bit for bit those of the chunk's own order, in the chunk's order (invariant).  Invented
    # cells with thermal inertias and buried layers that give 12-20 vapour nodes.
    from wetcycle.forcing import column
    clock = make_clock("mars", steps_per_sol=48, n_sols=2, start_ls=60.0)
    rng = np.random.default_rng(11)
    n = 150
    cells = dr.make_cells(rng.uniform(-70, 70, n), rng.uniform(0, 360, n),
                          thermal_inertia=rng.uniform(80, 600, n), albedo=rng.uniform(0.1, 0.3, n),
                          salt_depth_m=rng.uniform(0, 0.02, n),
                          layer2_depth_m=np.where(rng.random(n) < 0.3, rng.uniform(0.05, 0.5, n), np.inf))
    model = dr.prepare_forcing(cells, clock)
    sorted_model = model.column
    assert column._blocked(sorted_model)["order"] is not None      # the sorted path is taken
    monkeypatch.setattr(column, "_cell_order", lambda nodes, cb: None)
    own_model = dataclasses.replace(model.column)                    # fresh block cache
    assert column._blocked(own_model)["order"] is None
    s0 = dr.initial_state(model, clock).column
    ls = np.asarray(clock.ls_deg[:96])
    p, tau, eps, tf = dr._atmosphere_inputs(model, ls)
    w = model.supply.column(ls, cells.latitude_deg, cells.longitude_deg)
    args = (clock.declination_rad[:96], clock.distance_au[:96], dr._hour_angle0(clock, 0, 96), tau, p, eps, w, tf)
    st_a, out_a = column.column_block(sorted_model, s0, *args)
    st_b, out_b = column.column_block(own_model, s0, *args)
    for k in out_a:
        np.testing.assert_array_equal(out_a[k], out_b[k], err_msg=k)
    for f in dataclasses.fields(st_a):
        np.testing.assert_array_equal(getattr(st_a, f.name), getattr(st_b, f.name), err_msg=f.name)


def test_kernel_cell_order_keeps_like_cells_in_place():
    # Cells that all have the same number of vapour nodes keep their own order (no copies).
    from wetcycle.forcing.column import _cell_order
    assert _cell_order(np.full(200, 14.0), 64) is None
    # two deep columns in each block: sorted, one block holds only shallow ones (32 rows, not 40)
    nodes = np.array([20.0] * 2 + [12.0] * 100 + [20.0] * 2)
    order = _cell_order(nodes, 64)
    np.testing.assert_array_equal(order, np.r_[np.arange(2, 102), 0, 1, 102, 103])   # stable sort
    # and where sorting saves no row, the chunk's own order
    assert _cell_order(np.array([20.0] * 3 + [12.0] * 70), 64) is None


def test_iter_forcing_covers_the_clock(setup):
    clock, cells, model = setup
    starts = []
    state = dr.initial_state(model, clock)
    for start, state, out in dr.iter_forcing(model, state, clock):
        starts.append(start)
        assert out["surface_temperature"].shape == (clock.steps_per_sol, cells.n_cells)
    assert starts == list(range(0, clock.n_steps, clock.steps_per_sol))
    assert state.step == clock.n_steps
    with pytest.raises(ConfigError, match="past the clock"):
        dr.forcing_block(model, state, clock)


def test_spin_up_reaches_a_periodic_state():
    # After spin-up, running the preceding year once more from the returned state changes the
    # daily min/mean/max surface temperature by less than the tolerance (definition of the
    # periodic state, common practice).
    clock = make_clock("mars", steps_per_sol=32, n_sols=2, start_ls=0.0)
    cells = dr.make_cells([5.0, -70.0], [0.0, 90.0], thermal_inertia=[300.0, 150.0])
    model = dr.prepare_forcing(cells, clock, dr.ForcingOptions(annual_depths=3.0))
    su = dr.spin_up(model, clock, tol_k=0.2, max_years=12)
    assert su.converged and 2 <= su.years <= 12 and su.changes[-1] < 0.2
    again = dr.spin_up(model, clock, su.state, tol_k=0.2, lead_sols=0, accelerate=False)
    assert again.years == 2 and again.changes[0] < 0.2


def test_spin_up_of_a_cell_does_not_depend_on_its_chunk_mates():
    # A cell's spun-up state is kept from the year it converged: running it alone or beside a
    # slower cell gives the same state, bit for bit (invariant).
    clock = make_clock("mars", steps_per_sol=32, n_sols=2, start_ls=0.0)
    both = dr.make_cells([5.0, -75.0], [0.0, 90.0], thermal_inertia=[300.0, 120.0])
    one = dr.make_cells([5.0], [0.0], thermal_inertia=[300.0])
    sb = dr.spin_up(dr.prepare_forcing(both, clock), clock, tol_k=0.2, max_years=12)
    so = dr.spin_up(dr.prepare_forcing(one, clock), clock, tol_k=0.2, max_years=12)
    assert sb.cell_years[0] == so.cell_years[0]
    np.testing.assert_array_equal(sb.state.column.temperature[:, 0], so.state.column.temperature[:, 0])
    nv = so.state.column.regolith_water.shape[0]      # the cell's own water nodes
    np.testing.assert_array_equal(sb.state.column.regolith_water[:nv, 0], so.state.column.regolith_water[:, 0])


def test_water_frost_holds_ice_saturation_at_the_surface():
    # Where water frost lies, the surface vapour pressure is p_ice(T_s) (Murphy & Koop 2005
    # eq. 7), so a surface salt sees RH_ice = 1 (to the accuracy of the kernel's saturation
    # table, < 1e-4 at the coldest, tests/test_column.py).
    clock = make_clock("mars", steps_per_sol=24, n_sols=3, start_ls=300.0)
    cells = dr.make_cells([-75.0], [0.0])
    model = dr.prepare_forcing(cells, clock)
    st = dr.initial_state(model, clock)
    w = st.column.regolith_water.copy()
    w[0] += 0.02 / model.column.control_volume[0]          # 20 g m-2 of frost on the surface
    st = dr.ForcingState(dataclasses.replace(st.column, regolith_water=w), 0)
    _, out = dr.forcing_block(model, st, clock, 24)
    frosty = out["water_frost"][:, 0] > 0
    assert frosty.any() and out["water_frost"][0, 0] > 0.015
    np.testing.assert_allclose(out["relative_humidity_ice"][frosty, 0], 1.0, rtol=1e-4)


def test_water_supply_choices_reach_the_air(setup):
    # A constant mixing ratio supply: the free-atmosphere vapour pressure is vmr x p (Dalton).
    clock, cells, _ = setup
    model = dr.prepare_forcing(cells, clock, dr.ForcingOptions(water_supply=constant_mixing_ratio_table(1e-4)))
    _, out = dr.forcing_block(model, dr.initial_state(model, clock), clock)
    np.testing.assert_allclose(out["free_vapor_pressure"], 1e-4 * out["surface_pressure"], rtol=1e-9)
    assert np.all(out["air_vapor_pressure"] >= 0) and np.all(out["vapor_pressure"] >= 0)
    # the default climatology is drier in southern winter at 40 S than at the equator (Smith 2002)
    m = dr.prepare_forcing(cells, clock)
    _, o2 = dr.forcing_block(m, dr.initial_state(m, clock), clock)
    assert o2["free_vapor_pressure"][0, 1] < o2["free_vapor_pressure"][0, 0]


def test_ice_layer_properties_reach_the_columns(setup):
    # The ice-cemented layer of cell 3 (top at 0.3 m; default invented properties
    # I = 2000, rho = 2000, c = 1000) sets k = I^2 / (rho c) below 0.3 m.
    _, cells, model = setup
    cols = model.energy.columns
    z = cols.depth[:, 2]
    k_el = cols.conductance[:-1, 2] * np.diff(z)
    below, above = z[:-1] >= 0.3, z[1:] <= 0.3
    np.testing.assert_allclose(k_el[below], 2000.0**2 / (2000.0 * 1000.0), rtol=1e-12)
    np.testing.assert_allclose(k_el[above], 200.0**2 / (1500.0 * 800.0), rtol=1e-12)


def test_driver_imports_nothing_from_phase_or_salts():
    code = ("import sys, wetcycle.forcing.driver; "
            "bad = [m for m in sys.modules if m.startswith(('wetcycle.phase', 'wetcycle.salts'))]; "
            "print(bad); sys.exit(1 if bad else 0)")
    r = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True)
    assert r.returncode == 0, r.stdout + r.stderr


def test_block_hour_angle_matches_the_clock():
    # The driver evaluates the hour angle on each block's slice; it must equal the
    # clock's own definition (plus half a step, the middle of the step), mod 2 pi.
    clock = make_clock("mars", steps_per_sol=24, n_sols=3, start_ls=33.0)
    h = dr._hour_angle0(clock, 10, 50)
    ref = clock.hour_angle_rad(0.0)[10:50] + np.pi / 24
    np.testing.assert_allclose(np.cos(h), np.cos(ref), atol=1e-12)
    np.testing.assert_allclose(np.sin(h), np.sin(ref), atol=1e-12)
