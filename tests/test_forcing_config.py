"""Scenario fields of the Mars forcing: choices, refusals and what results record.

Checks of behaviour (common practice for input validation: one line naming the field, the value
and what is allowed) and of the water-column table format; the physics is tested in
test_column.py and test_supply.py."""

import tomllib
from pathlib import Path

import numpy as np
import pytest

from wetcycle.config import scenario_from_dict
from wetcycle.errors import ConfigError, InputDataError
from wetcycle.runner import run

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "runs" / "demo.toml"


def _doc(**forcing):
    doc = tomllib.loads(DEMO.read_text())
    doc["clock"].update(sols=2, spinup_max_years=0, steps_per_sol=24)
    doc["clock"].pop("years", None)
    doc["forcing"].update(forcing)
    return doc


def test_energy_balance_fields_are_refused_with_other_kinds():
    doc = _doc(kind="prescribed", temperature_mean=220.0, vapor_pressure_mean=0.1, wind_speed=5.0)
    with pytest.raises(ConfigError, match="forcing.wind_speed: applies to forcing.kind = energy_balance only"):
        scenario_from_dict(doc, base_dir=DEMO.parent, source="t.toml")


def test_supply_choices_are_exclusive_and_recorded(tmp_path):
    with pytest.raises(ConfigError, match="give one or the other"):
        scenario_from_dict(_doc(water_column="x.csv", vapour_mixing_ratio=1e-4), base_dir=DEMO.parent)
    # an invented table of our own reaches the result's attributes with its hash
    tab = tmp_path / "col.csv"
    tab.write_text("ls_deg,latitude_deg,column_pr_um\n0,-90,5\n0,90,5\n180,-90,8\n180,90,8\n")
    sc = scenario_from_dict(_doc(water_column=str(tab)), base_dir=tmp_path, source="t.toml")
    ds = run(sc, write=False)
    assert str(tab) in ds.attrs["water_supply"] and len(ds.attrs["water_supply_sha256"]) == 64
    assert "climatology" in run(scenario_from_dict(_doc(), base_dir=DEMO.parent), write=False).attrs["water_supply"]


def test_implausible_table_values_name_the_row(tmp_path):
    tab = tmp_path / "col.csv"
    tab.write_text("ls_deg,latitude_deg,column_kg_m2\n0,0,0.01\n180,0,10\n")     # 10 kg m-2: a unit slip
    with pytest.raises(InputDataError, match="row 2: column_kg_m2 = 10 not allowed") as exc:
        run(scenario_from_dict(_doc(water_column=str(tab)), base_dir=tmp_path, source="t.toml"), write=False)
    assert "\n" not in str(exc.value)


def test_ice_table_depth_zero_is_refused_by_the_schema():
    doc = _doc()
    doc["site"][0]["ice_table_depth"] = 0.0
    with pytest.raises(ConfigError, match="ice_table_depth"):
        scenario_from_dict(doc, base_dir=DEMO.parent)


def test_a_salt_below_the_water_column_depth_still_runs():
    # the column extends itself two nodes past a deep salt (instead of refusing a valid depth)
    doc = _doc(water_column_depth=0.05)
    doc["site"][0]["salt_depth"] = 0.2
    ds = run(scenario_from_dict(doc, base_dir=DEMO.parent), write=False)
    assert np.all(np.isfinite(ds["vapor_pressure"].values))


def test_too_few_steps_for_the_surface_layer_are_refused_with_the_number_needed():
    # Issue requirement: a step the energy balance cannot follow is refused, derived from the
    # grid (Crank-Nicolson amplification of the surface node's fastest mode, Press et al. 2007
    # sec. 20.2), not guessed.  At thermal inertia 250, 8 steps per sol put a 20 N surface into
    # CO2 frost in northern summer (the humidity issue's measurement); 24 and more are fine.
    doc = _doc()
    doc["clock"]["steps_per_sol"] = 8
    with pytest.raises(ConfigError, match=r"clock.steps_per_sol: 8 is too few .* at least 2\d steps per sol"):
        run(scenario_from_dict(doc, base_dir=DEMO.parent, source="t.toml"), write=False)
    # the bound is exactly where |A| = 0.9: just above it the amplification is within the bound
    from wetcycle.clock import make_clock
    from wetcycle.forcing import driver as dr
    from wetcycle.forcing.energy import largest_time_step, surface_time_constant
    cells = dr.make_cells([20.0], [0.0], thermal_inertia=250.0)
    m = dr.prepare_forcing(cells, make_clock("mars", steps_per_sol=24, n_sols=1, start_ls=90.0))
    tau = surface_time_constant(m.energy.columns, cells.emissivity)[0]
    x = largest_time_step(m.energy.columns, cells.emissivity)[0] / tau
    assert (1 - 0.5 * x) / (1 + 0.5 * x) == pytest.approx(-0.9, rel=1e-12)


def test_backward_euler_has_no_zigzag_step_limit():
    # theta method amplification A = (1 - (1 - theta) x) / (1 + theta x) (Press et al. 2007,
    # Numerical Recipes, sec. 20.2): for theta = 1, A = 1 / (1 + x) lies in (0, 1] at any step,
    # so no step makes the surface zig-zag; the coarse spin-up relies on it
    from wetcycle.clock import make_clock
    from wetcycle.forcing import driver as dr
    from wetcycle.forcing.energy import largest_time_step
    cells = dr.make_cells([20.0], [0.0], thermal_inertia=250.0)
    m = dr.prepare_forcing(cells, make_clock("mars", steps_per_sol=24, n_sols=1, start_ls=90.0))
    assert np.isinf(largest_time_step(m.energy.columns, cells.emissivity, theta=1.0)).all()
    assert np.isfinite(largest_time_step(m.energy.columns, cells.emissivity, theta=0.5)).all()


def test_unknown_spinup_shift_is_one_clear_error():
    doc = _doc()
    doc["clock"]["spinup_shift"] = "middle"
    with pytest.raises(ConfigError, match=r"clock.spinup_shift: 'middle' is not allowed; allowed: bottom, profile"):
        scenario_from_dict(doc)


def test_spinup_steps_per_sol_above_the_run_step_is_one_clear_error():
    doc = _doc()
    doc["clock"].update(steps_per_sol=24, spinup_steps_per_sol=48)
    with pytest.raises(ConfigError, match=r"clock.spinup_steps_per_sol: 48 is more than steps_per_sol \(24\)"):
        scenario_from_dict(doc, base_dir=DEMO.parent, source="t.toml")
