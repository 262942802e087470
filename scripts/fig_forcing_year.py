"""Figure: one Mars year of forcing at an equatorial and a high-latitude cell.

Two invented cells (properties below are made up for the demonstration) are spun
up to a periodic state and run for one Mars year.  Top row: daily minimum, mean
and maximum surface temperature against Ls, with the CO2 frost point.  Bottom
row: CO2 frost and water frost on the surface [kg m-2] (daily maximum).

Usage:  python scripts/fig_forcing_year.py OUT.png [--steps-per-sol 48]
"""

import argparse

import matplotlib

matplotlib.use("Agg")
import matplotlib.pyplot as plt  # noqa: E402
import numpy as np  # noqa: E402

from wetcycle.clock import make_clock  # noqa: E402
from wetcycle.forcing import driver as dr  # noqa: E402
from wetcycle.forcing.energy import co2_frost_point  # noqa: E402
from wetcycle.orbit import MARS  # noqa: E402

#: Invented demonstration cells (not real sites).
CELLS = {
    "equatorial cell (2 N, I = 250, A = 0.22)": dict(latitude_deg=2.0, longitude_deg=30.0,
                                                   elevation_m=-1000.0, albedo=0.22,
                                                   thermal_inertia=250.0),
    "high-latitude cell (72 S, I = 220, A = 0.25)": dict(latitude_deg=-72.0, longitude_deg=150.0,
                                                       elevation_m=1000.0, albedo=0.25,
                                                       thermal_inertia=220.0),
}


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("out", help="PNG file to write")
    ap.add_argument("--steps-per-sol", type=int, default=48)
    a = ap.parse_args()
    spd = a.steps_per_sol
    n_sols = int(round(MARS.year_sols))
    clock = make_clock("mars", steps_per_sol=spd, n_sols=n_sols, start_ls=0.0, year=36)
    props = {k: [c[k] for c in CELLS.values()] for k in next(iter(CELLS.values()))}
    cells = dr.make_cells(**props)
    out, info = dr.run_forcing(cells, clock, dr.ForcingOptions(dust=0.3), tol_k=0.1)
    print(f"spin-up: {info['spinup_years']} years, converged={info['spinup_converged']}, "
          f"last change {info['spinup_changes'][-1]:.3f} K")
    ls = np.asarray(clock.ls_deg).reshape(n_sols, spd)[:, 0]
    ts = out["surface_temperature"].reshape(n_sols, spd, -1)
    co2 = out["co2_frost"].reshape(n_sols, spd, -1).max(axis=1)
    h2o = out["water_frost"].reshape(n_sols, spd, -1).max(axis=1)
    tf = co2_frost_point(out["surface_pressure"]).reshape(n_sols, spd, -1).mean(axis=1)
    order = np.argsort(ls)
    fig, axes = plt.subplots(2, 2, figsize=(11, 7), sharex=True, constrained_layout=True)
    for j, name in enumerate(CELLS):
        ax = axes[0, j]
        ax.fill_between(ls[order], ts[order, :, j].min(axis=1), ts[order, :, j].max(axis=1),
                        color="tab:orange", alpha=0.3, label="daily min-max")
        ax.plot(ls[order], ts[order, :, j].mean(axis=1), color="tab:red", label="daily mean")
        ax.plot(ls[order], tf[order, j], color="tab:blue", ls="--", lw=1, label="CO2 frost point")
        ax.set_title(name, fontsize=10)
        ax.set_ylabel("surface temperature [K]")
        ax.set_ylim(130, 310)
        ax.legend(loc="lower right", fontsize=8)
        lo, hi = ts[:, :, j].min(), ts[:, :, j].max()
        print(f"{name}: surface T {lo:.1f}-{hi:.1f} K; max CO2 frost {co2[:, j].max():.1f} kg m-2;"
              f" max water frost {h2o[:, j].max():.2e} kg m-2")
        ax = axes[1, j]
        ax.plot(ls[order], co2[order, j], color="tab:blue", label="CO2 frost")
        ax.set_ylabel("CO2 frost [kg m-2]", color="tab:blue")
        ax.set_ylim(0, max(1.0, 1.1 * co2[:, j].max()))
        ax2 = ax.twinx()
        ax2.plot(ls[order], 1e3 * h2o[order, j], color="tab:green", label="water frost")
        ax2.set_ylabel("water frost [g m-2] (daily max)", color="tab:green")
        ax2.set_ylim(0, 1.1e3 * max(h2o[:, j].max(), 1e-6))
        ax.set_xlabel("Ls [deg]")
        ax.set_xlim(0, 360)
        ax.set_xticks(range(0, 361, 60))
    fig.suptitle(f"wetcycle forcing, one Mars year (MY 36), {spd} steps per sol, "
                 f"dust tau = 0.3; invented cells", fontsize=11)
    fig.savefig(a.out, dpi=110)
    print(f"wrote {a.out}")


if __name__ == "__main__":
    main()
