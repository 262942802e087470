"""Benchmark: the mixture phase kernel against the binary kernel, and the cost of a mixture's tables.

    python scripts/bench_mixture.py [--cells 2000] [--sols 10]

Prints salt-steps per second per core (one thread; CPU time, so that other work on a shared
machine counts less; best of five passes, repeated ``--rounds`` times alternating with the binary
kernel, best round) of ``wetcycle.phase.mixture_kernel`` for the equilibrium and vapour-limited
laws on the synthetic diurnal forcing of ``scripts/bench_phase.py`` (T 170-270 K, a range of
vapour pressures), beside the binary kernel on the same forcing and their ratio (the steadier
figure on a busy machine), and the CPU seconds taken to build the tables of the benchmark mixture
(an invented soil: 0.6 Mg(ClO4)2, 0.3 NaCl, 0.1 CaSO4 by mass, binaries extrapolated below their
ranges, 1 K spacing).  Issue 13 asks >= 1e7 salt-steps/s/core.
"""

import argparse
import sys
import time
from pathlib import Path

import numba
import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parent))
from bench_phase import bench_kernel, forcing, time_steps  # noqa: E402

MIXTURE = {"Mg(ClO4)2": 0.6, "NaCl": 0.3, "CaSO4": 0.1}


def bench_mixture(model, n_cells, n_sols, spd=96):
    rng = np.random.default_rng(1)
    T, rh = forcing(n_cells, n_sols * spd, spd, rng)
    return time_steps(model, model.initial_state(n_cells, 0.05, T[0]), T, rh, n_sols, spd,
                      wet=lambda r: r.liquid_fraction > 0, clock=time.process_time)


def main():
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("--cells", type=int, default=2000)
    ap.add_argument("--sols", type=int, default=10)
    ap.add_argument("--rounds", type=int, default=3)
    a = ap.parse_args()
    numba.set_num_threads(1)
    from wetcycle.brines.mixture import build_tables
    from wetcycle.phase.mixture_model import MixtureModel
    t0 = time.process_time()
    tb = build_tables(MIXTURE, name="bench soil", extrapolate_binaries=True)
    t_build = time.process_time() - t0
    print(f"tables of the bench mixture: {t_build:.1f} CPU s ({tb.u_dry.size} temperatures x {tb.aw.shape[1]} water "
          f"contents, {tb.T_min:g}-{tb.T_max:g} K; {tb.failed} unconverged states filled)")
    for law in ("equilibrium", "vapour_limited"):
        m = MixtureModel("bench soil", MIXTURE, law=law, extrapolate_binaries=True, tables=tb)
        rate = brate = 0.0
        for _ in range(a.rounds):
            r, share = bench_mixture(m, a.cells, a.sols)
            b, bshare = bench_kernel("Mg(ClO4)2", law, a.cells, a.sols, clock=time.process_time)
            rate, brate = max(rate, r), max(brate, b)
        print(f"{law:15s} mixture {rate:.3g} salt-steps/s/core, CPU time (liquid in {100 * share:.0f} % of steps); "
              f"binary Mg(ClO4)2 {brate:.3g} ({100 * bshare:.0f} %); ratio {rate / brate:.2f}; "
              f"target 1e7: {'met' if rate >= 1e7 else 'NOT met'}")


if __name__ == "__main__":
    main()
