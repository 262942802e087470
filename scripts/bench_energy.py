"""Benchmark: the coupled column kernel against the dry energy-balance kernel, per core.

For the same cells (2,000 by default, differing properties, 30 layers, 96 steps per sol),
single-threaded, it times

* the dry kernel, ``wetcycle.forcing.energy.energy_block``: surface energy balance, CO2
  frost and conduction (the forcing as it was before the water cycle: "today");
* the coupled kernel, ``wetcycle.forcing.column.column_block``: the same ground heat plus
  sensible heat and the air at the sensor height, the grey atmosphere, the near-surface
  air layer and the regolith water column (pore vapour, adsorbate, ice; one implicit
  tridiagonal solve per step, a Langmuir partition per node);

and prints both in cell-steps and layer-steps per second and core, and the cost ratio
coupled / dry.  What counts as a layer: a node of a cell's finite-volume grid.  The
thermal layers are the regolith column's nodes (the same for both kernels); the coupled
kernel also solves the nodes of each cell's regolith water column (its own count, the
nodes down to ``water_column_depth``), so its cost is given per thermal layer-step and per
(thermal + vapour) layer-step.  Both kernels start from a state run for ``--lead`` sols
(a settled diurnal cycle), and both receive the same per-step inputs (pressure, dust,
frost point from the default seasonal cycles).

It also keeps the comparison of the dry kernel with the same physics written the
straightforward way (``energy_block_reference``: Python loop over steps, one stacked
scipy banded solve per Newton iteration) and with the conduction sweeps alone (the floor).

Times are CPU times of this process, so other people's work on a shared machine disturbs them
less.  The two kernels are called in turn, ``--repeat`` pairs (default 9): the rates are the best
of each, and the cost ratio is also printed as the median of the pairs' ratios, which holds when
the machine's speed drifts between calls (the older best-of figures moved by +-15 % from run to
run); run it a few times and quote the range.

Usage:  python scripts/bench_energy.py [--cells 2000] [--sols 5] [--lead 2] [--ref-steps 96]
"""

import os

for _v in ("NUMBA_NUM_THREADS", "OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ[_v] = "1"  # measure single-threaded

import argparse  # noqa: E402
import time  # noqa: E402

import numpy as np  # noqa: E402

from wetcycle.clock import make_clock  # noqa: E402
from wetcycle.forcing import column, energy, regolith  # noqa: E402
from wetcycle.forcing import driver as dr  # noqa: E402
from wetcycle.forcing.atmosphere import column_ir_emissivity  # noqa: E402


def best_time(fn, repeat):
    """Smallest CPU time [s] of ``repeat`` calls."""
    best = np.inf
    for _ in range(repeat):
        t0 = time.process_time()
        fn()
        best = min(best, time.process_time() - t0)
    return best


def build(n_cells, n_layers, steps_per_sol, n_sols, seed=0):
    """Invented cells, the coupled (forcing) model, the dry model on the same grids, inputs."""
    rng = np.random.default_rng(seed)
    clock = make_clock("mars", steps_per_sol=steps_per_sol, n_sols=n_sols, start_ls=30.0)
    cells = dr.make_cells(
        rng.uniform(-85, 85, n_cells), rng.uniform(0, 360, n_cells),
        elevation_m=rng.uniform(-4000, 3000, n_cells), albedo=rng.uniform(0.1, 0.35, n_cells),
        thermal_inertia=rng.uniform(80.0, 600.0, n_cells), emissivity=rng.uniform(0.9, 1.0, n_cells),
        slope_deg=rng.uniform(0, 30, n_cells), slope_azimuth_deg=rng.uniform(0, 360, n_cells),
        salt_depth_m=rng.uniform(0, 0.02, n_cells), density=rng.uniform(1200, 1800, n_cells),
        heat_capacity=rng.uniform(700, 900, n_cells),
        layer2_depth_m=np.where(rng.random(n_cells) < 0.3, rng.uniform(0.05, 0.5, n_cells), np.inf),
        porosity=rng.uniform(0.2, 0.5, n_cells))
    fm = dr.prepare_forcing(cells, clock, dr.ForcingOptions(n_layers=n_layers))
    dry = energy.prepare_energy(
        fm.energy.columns, clock.dt_s, latitude_deg=cells.latitude_deg, longitude_deg=cells.longitude_deg,
        albedo=cells.albedo, emissivity=cells.emissivity, slope_deg=cells.slope_deg,
        slope_azimuth_deg=cells.slope_azimuth_deg, probe_depth=cells.salt_depth_m)
    # per-step inputs, the driver's defaults: seasonal pressure at the cells, dust, infrared
    # emissivity of the atmosphere, CO2 frost point, the water column of the climatology
    ls = np.asarray(clock.ls_deg)
    p = np.ascontiguousarray(fm.options.pressure(ls, cells.latitude_deg, cells.elevation_m))
    tau = fm.dust(ls, p)
    eps = column_ir_emissivity(tau, p, fm.options.co2_emissivity, fm.options.dust_ir_ratio)
    tf = energy.co2_frost_point(p)
    w = fm.supply.column(ls, cells.latitude_deg, cells.longitude_deg)
    h0 = clock.hour_angle_rad(0.0) + np.pi / steps_per_sol
    steps = (clock.declination_rad, clock.distance_au, h0)
    return clock, fm, dry, steps, (tau, p, eps, w, tf)


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--cells", type=int, default=2000)
    ap.add_argument("--layers", type=int, default=30)
    ap.add_argument("--steps-per-sol", type=int, default=96)
    ap.add_argument("--sols", type=int, default=5, help="sols timed")
    ap.add_argument("--lead", type=int, default=2, help="sols run before timing")
    ap.add_argument("--ref-steps", type=int, default=96)
    ap.add_argument("--repeat", type=int, default=9)
    a = ap.parse_args()
    spd = a.steps_per_sol
    clock, fm, dry, steps, (tau, p, eps, w, tf) = build(a.cells, a.layers, spd, a.lead + a.sols)
    nn = dry.columns.n_nodes
    nc = a.cells
    lead = slice(0, a.lead * spd)
    timed = slice(a.lead * spd, (a.lead + a.sols) * spd)
    n_steps = timed.stop - timed.start

    def step_args(sl):
        return tuple(x[sl] for x in steps)

    # lead-in (also compiles or loads the kernels), then the states at the timed sols' start
    st_dry, _ = energy.energy_block(dry, dry.initial_state(dr.initial_state(fm, clock).column.temperature[0]),
                                    *step_args(lead), tau[lead], p[lead])
    st_col, _ = column.column_block(fm.column, dr.initial_state(fm, clock).column, *step_args(lead),
                                    tau[lead], p[lead], eps[lead], w[lead], tf[lead], step0=0)
    out = {}

    def run_dry():
        out.update(energy.energy_block(dry, st_dry, *step_args(timed), tau[timed], p[timed])[1])

    def run_col():
        column.column_block(fm.column, st_col, *step_args(timed), tau[timed], p[timed], eps[timed],
                            w[timed], tf[timed], step0=timed.start)

    # the two kernels in turn (dry, coupled, dry, ...): the ratio of each pair is taken on the same
    # state of the machine, so its median holds when the machine's speed drifts between calls
    t_dry_all, t_col_all = [], []
    for _ in range(a.repeat):
        t_dry_all.append(best_time(run_dry, 1))
        t_col_all.append(best_time(run_col, 1))
    t_dry, t_col = min(t_dry_all), min(t_col_all)
    pair = np.array(t_col_all) / np.array(t_dry_all)
    cs = n_steps * nc
    nv_own = np.sum(np.isfinite(fm.column.next_distance), axis=0) + 1     # each cell's vapour nodes
    nv_mean = float(np.mean(nv_own))
    print(f"cells {nc}, {nn} thermal nodes ({nn - 1} layers), water column of {nv_mean:.1f} nodes per "
          f"cell on average ({nv_own.min()}-{nv_own.max()}), {spd} steps/sol, {a.sols} sols timed after "
          f"{a.lead}, single thread, best of {a.repeat} (CPU time)")
    print("a layer-step is one grid node advanced by one step: thermal = the regolith column's "
          f"{nn} nodes; thermal + vapour = those and the cell's own water-column nodes")
    r_cell = t_col / t_dry
    print(f"dry kernel (energy_block, today)    : {cs / t_dry:.3e} cell-steps/s/core, "
          f"{cs * nn / t_dry:.3e} layer-steps/s/core")
    print(f"coupled kernel (column_block)       : {cs / t_col:.3e} cell-steps/s/core, "
          f"{cs * nn / t_col:.3e} thermal layer-steps/s/core, "
          f"{cs * (nn + nv_mean) / t_col:.3e} thermal + vapour layer-steps/s/core")
    print(f"cost ratio coupled / dry            : {r_cell:.2f} per cell-step, {r_cell:.2f} per thermal "
          f"layer-step, {r_cell * nn / (nn + nv_mean):.2f} per (thermal + vapour) layer-step (best of each)")
    rv = pair * nn / (nn + nv_mean)
    print(f"  per interleaved pair ({a.repeat} pairs): median {np.median(pair):.2f} per cell-step, "
          f"{np.median(rv):.2f} per (thermal + vapour) layer-step (min {rv.min():.2f}, max {rv.max():.2f})")
    # the dry kernel against the straightforward reference and the conduction floor
    ts = np.full((n_steps, nc), 200.0)
    regolith.conduct_prescribed(st_dry.temperature, ts[:1], dry.factors)
    t_floor = best_time(lambda: regolith.conduct_prescribed(st_dry.temperature, ts, dry.factors), a.repeat)
    ns_r = min(a.ref_steps, n_steps)
    ref_sl = slice(timed.start, timed.start + ns_r)
    t0 = time.process_time()
    ref = energy.energy_block_reference(dry, st_dry, *step_args(ref_sl), tau[ref_sl], p[ref_sl])[1]
    t_ref = time.process_time() - t0
    diff = float(np.max(np.abs(ref["surface_temperature"] - out["surface_temperature"][:ns_r])))
    print(f"dry kernel / straightforward (scipy banded, {ns_r} steps): "
          f"{(t_ref / ns_r) / (t_dry / n_steps):.1f}x faster; "
          f"max |T_s difference| {diff:.2e} K")
    print(f"dry kernel / conduction sweeps alone: {t_dry / t_floor:.2f} (floor "
          f"{cs * nn / t_floor:.3e} layer-steps/s/core)")


if __name__ == "__main__":
    main()
