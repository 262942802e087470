"""Benchmark: coupled surface energy balance + regolith conduction, layer-steps per second.

Runs the numba kernel (wetcycle.forcing.energy.energy_block) and the same physics
written the straightforward way (energy_block_reference: Python loop over steps,
one stacked scipy banded solve per Newton iteration, NumPy surface logic) for
2,000 cells with differing properties, 30 layers, 96 steps per sol, single-threaded,
and prints both rates and their ratio, plus the largest difference between them.

Usage:  python scripts/bench_energy.py [--cells 2000] [--sols 5] [--ref-steps 96]
"""

import os

for _v in ("NUMBA_NUM_THREADS", "OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ[_v] = "1"  # measure single-threaded

import argparse  # noqa: E402
import time  # noqa: E402

import numpy as np  # noqa: E402

from wetcycle import orbit  # noqa: E402
from wetcycle.clock import make_clock  # noqa: E402
from wetcycle.forcing import energy, regolith  # noqa: E402


def best_time(fn, repeat):
    best = np.inf
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn()
        best = min(best, time.perf_counter() - t0)
    return best


def build(n_cells, n_layers, steps_per_sol, n_sols, seed=0):
    rng = np.random.default_rng(seed)
    clock = make_clock("mars", steps_per_sol=steps_per_sol, n_sols=n_sols, start_ls=30.0)
    sol_s = orbit.MARS.sol_s
    year_s = sol_s * orbit.MARS.year_sols
    ti = rng.uniform(80.0, 600.0, n_cells)
    cols = regolith.build_columns(ti, rng.uniform(1200, 1800, n_cells), rng.uniform(700, 900, n_cells),
                                  sol_s, year_s, n_layers=n_layers,
                                  layer2_depth=np.where(rng.random(n_cells) < 0.3,
                                                        rng.uniform(0.05, 0.5, n_cells), np.inf),
                                  layer2_inertia=2000.0, layer2_density=2000.0,
                                  layer2_heat_capacity=1000.0)
    model = energy.prepare_energy(
        cols, clock.dt_s, latitude_deg=rng.uniform(-85, 85, n_cells),
        longitude_deg=rng.uniform(0, 360, n_cells), albedo=rng.uniform(0.1, 0.35, n_cells),
        emissivity=rng.uniform(0.9, 1.0, n_cells), slope_deg=rng.uniform(0, 30, n_cells),
        slope_azimuth_deg=rng.uniform(0, 360, n_cells), probe_depth=rng.uniform(0, 0.02, n_cells))
    t_init = 160.0 + 60.0 * np.cos(model.latitude_rad)
    state = model.initial_state(t_init)
    h0 = clock.hour_angle_rad(0.0) + np.pi / steps_per_sol
    tau = rng.uniform(0.1, 1.0, n_cells)[None, :] * np.ones((clock.n_steps, 1))
    p = rng.uniform(300, 900, n_cells)[None, :] * np.ones((clock.n_steps, 1))
    return clock, model, state, (clock.declination_rad, clock.distance_au, h0, tau, p)


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--cells", type=int, default=2000)
    ap.add_argument("--layers", type=int, default=30)
    ap.add_argument("--steps-per-sol", type=int, default=96)
    ap.add_argument("--sols", type=int, default=5)
    ap.add_argument("--ref-steps", type=int, default=96)
    ap.add_argument("--repeat", type=int, default=5)
    a = ap.parse_args()
    clock, model, state, args = build(a.cells, a.layers, a.steps_per_sol, a.sols)
    nn = model.columns.n_nodes
    n_steps = clock.n_steps
    # warm up (compile / load cache) on one step
    energy.energy_block(model, state, *(x[:1] for x in args))
    out = {}

    def fast():
        out.update(energy.energy_block(model, state, *args)[1])

    t_fast = best_time(fast, a.repeat)
    ls_fast = n_steps * a.cells * nn / t_fast
    # floor: the conduction sweeps alone (precomputed elimination, prescribed surface)
    ts = np.full((n_steps, a.cells), 200.0)
    regolith.conduct_prescribed(state.temperature, ts[:1], model.factors)
    t_floor = best_time(lambda: regolith.conduct_prescribed(state.temperature, ts, model.factors),
                        a.repeat)
    ls_floor = n_steps * a.cells * nn / t_floor
    ns_r = min(a.ref_steps, n_steps)
    ref = {}

    def slow():
        ref.update(energy.energy_block_reference(model, state, *(x[:ns_r] for x in args))[1])

    t_ref = best_time(slow, 1)
    ls_ref = ns_r * a.cells * nn / t_ref
    diff = float(np.max(np.abs(ref["surface_temperature"] - out["surface_temperature"][:ns_r])))
    print(f"cells {a.cells}, nodes {nn} ({nn - 1} layers), {a.steps_per_sol} steps/sol, "
          f"single thread, best of {a.repeat}")
    print(f"numba energy balance + conduction : {ls_fast:.3e} layer-steps/s "
          f"({1e9 / ls_fast:.2f} ns per layer-step; {n_steps} steps in {t_fast:.3f} s)")
    print(f"straightforward (scipy banded)    : {ls_ref:.3e} layer-steps/s "
          f"({1e9 / ls_ref:.2f} ns per layer-step; {ns_r} steps in {t_ref:.3f} s)")
    print(f"ratio numba / straightforward     : {ls_fast / ls_ref:.1f}x")
    print(f"floor, conduction sweeps alone    : {ls_floor:.3e} layer-steps/s "
          f"({1e9 / ls_floor:.2f} ns per layer-step); full / floor = {t_fast / t_floor:.2f}")
    print(f"max |T_s difference| over the common steps: {diff:.2e} K")
    frac = float(np.mean(out["co2_frost"][-1] > 0))
    print(f"cells with CO2 frost at the end: {frac:.1%}")


if __name__ == "__main__":
    main()
