"""Benchmark: a gridded run, cells x steps per second, wall time, peak memory, 1 vs 2 workers.

    python scripts/bench_grid.py [--cells 2000] [--sols 669] [--steps 48] [--spinup 2]

Runs an invented uniform grid (about --cells cells between 60 S and 60 N) with three salts
for --sols sols at --steps steps per sol after a fixed --spinup years, once with one worker
and once with two, and prints the figures.  Peak memory is the largest resident set of this
process and its worker children (resource.getrusage).  Issue 5 targets on a 2-core machine:
a 2 x 2 degree global grid (16,200 cells), one Mars year after spin-up, 48 steps per sol,
three salts, in under 5 minutes with under 4 GB peak memory.
"""

import argparse
import math
import resource
import tempfile
import time
import tomllib
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]


def scenario(n_cells, sols, steps, spinup, out):
    from wetcycle.config import scenario_from_dict
    doc = tomllib.loads((ROOT / "runs" / "grid_demo.toml").read_text())
    doc["grid"].pop("properties", None)  # uniform properties over the benchmark grid
    doc["grid"].pop("property_variables", None)
    n_lat = max(int(math.sqrt(n_cells / 2)), 3)
    n_lon = max(int(math.ceil(n_cells / n_lat)), 1)
    doc["grid"].update(lat_min=-60.0, lat_max=60.0, lat_step=120.0 / max(n_lat - 1, 1),
                       lon_min=0.0, lon_max=359.0, lon_step=359.0 / max(n_lon - 1, 1), chunk_cells=256)
    doc["clock"].update(sols=sols, steps_per_sol=steps, spinup_max_years=spinup)
    doc["clock"].pop("years", None)
    doc["scenario"]["output"] = str(out)
    return scenario_from_dict(doc)


def main():
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("--cells", type=int, default=2000)
    ap.add_argument("--sols", type=int, default=669)
    ap.add_argument("--steps", type=int, default=48)
    ap.add_argument("--spinup", type=int, default=2)
    ap.add_argument("--workers", type=int, nargs="+", default=[1, 2], help="worker counts to time")
    a = ap.parse_args()
    from wetcycle.grid import run_grid
    walls = {}
    with tempfile.TemporaryDirectory() as tmp:
        run_grid(scenario(8, 2, a.steps, 0, Path(tmp) / "warm.nc"))  # compile and build tables first
        for workers in a.workers:
            sc = scenario(a.cells, a.sols, a.steps, a.spinup, Path(tmp) / f"w{workers}.nc")
            n = len(sc.sites)
            t0 = time.perf_counter()
            run_grid(sc, workers=workers)
            walls[workers] = time.perf_counter() - t0
            rate = n * a.sols * a.steps / walls[workers]
            print(f"workers {workers}: {n} cells x {a.sols * a.steps} steps ({a.spinup} spin-up years, "
                  f"3 salts): {walls[workers]:.1f} s, {rate:.3e} cell-steps/s")
    peak_mb = max(resource.getrusage(resource.RUSAGE_SELF).ru_maxrss,
                  resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss) / 1024.0
    if 1 in walls and 2 in walls:
        print(f"speed-up 1 -> 2 workers: {walls[1] / walls[2]:.2f}x")
    print(f"peak resident memory (largest process): {peak_mb:.0f} MB")


if __name__ == "__main__":
    main()
