"""Benchmark of the gridded engine: cell-steps per second, where the time goes, peak memory.

    python scripts/bench_grid.py --global          # the issue-12 target run (several minutes)
    python scripts/bench_grid.py --global --step 10  # the same on a 648-cell global grid (ratios)
    python scripts/bench_grid.py --global --spinup 2 --spinup-steps 0   # the settings before issue 12's spin-up work
    python scripts/bench_grid.py --cells 2000 --workers 1 2

``--global``: the full 2 x 2 degree grid of Mars, poles included (90 x 180 = 16,200 cells,
centres 89 S to 89 N), one Mars year (669 sols) at 48 steps per sol after the spin-up, three
salts (runs/grid_demo.toml's), uniform invented surface properties, on a local dask cluster of
2 worker processes.  Targets on the 2-core reference machine: under 5 minutes and under 4 GB.

Spin-up (design decision 11 asks for 2 years unless a change needs more, said here): 4 years
at 12 steps per sol and 300 settling sols at 48 (``--spinup 4 --spinup-steps 12 --settle-sols
300``, the uniform shift of the deep profile, ``--shift bottom``).  Two years at the run's step,
the earliest setting, leave cells poleward of about 50 deg far from their periodic state (daily
surface temperatures 20-65 K off a 10-year spin-up, vapour by factors of e^2 to e^10).  Three
years with ``--shift profile`` and 200 settling sols came as close to the reference as the
default before the radiation revision, not after it (``scripts/compare_spinup.py --cells
--reference 10``, README "Performance").

Measured figures and how they were taken: README "Performance".  Compare runs by CPU-seconds:
wall time depends on what else the shared machine runs.

Printed: wall time; cell-steps per second; the share of worker time spent on the forcing
(energy balance set-up, spin-up and blocks), the phase model (kernel and accumulators) and the
store writes, and the assembly of the result; peak memory (sum of the resident sets of this
process and its workers, sampled every 0.2 s with psutil); the measured start-up of a worker
(cluster start, then a one-cell tile on each worker: import, numba cache load, tables); and the
projection to a 1 x 1 degree grid (64,800 cells) on a 10-node cluster of such 2-core machines.
"""

import argparse
import math
import tempfile
import threading
import time
import tomllib
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]


def scenario(out, *, cells=None, sols=669, steps=48, spinup=2, global_grid=False, chunk_cells=64,
             spinup_steps=0, settle_sols=300, grid_step=2.0, shift="bottom"):
    from wetcycle.config import scenario_from_dict
    doc = tomllib.loads((ROOT / "runs" / "grid_demo.toml").read_text())
    doc["grid"].pop("properties", None)  # uniform properties over the benchmark grid
    doc["grid"].pop("property_variables", None)
    if global_grid:
        h = grid_step / 2.0
        doc["grid"].update(lat_min=-90.0 + h, lat_max=90.0 - h, lat_step=grid_step, lon_min=0.0,
                           lon_max=360.0 - grid_step, lon_step=grid_step)
    else:
        n_lat = max(int(math.sqrt(cells / 2)), 3)
        n_lon = max(int(math.ceil(cells / n_lat)), 1)
        doc["grid"].update(lat_min=-60.0, lat_max=60.0, lat_step=120.0 / max(n_lat - 1, 1),
                           lon_min=0.0, lon_max=359.0, lon_step=359.0 / max(n_lon - 1, 1))
    doc["grid"]["chunk_cells"] = chunk_cells
    doc["clock"].update(sols=sols, steps_per_sol=steps, spinup_max_years=spinup,
                        spinup_steps_per_sol=spinup_steps, spinup_settle_sols=settle_sols,
                        spinup_shift=shift)
    doc["clock"].pop("years", None)
    # named law (DESIGN decision 2 and 11): the README's grid figures were measured with the equilibrium law
    doc.setdefault("phase", {})["law"] = "equilibrium"
    doc["scenario"]["output"] = str(out)
    return scenario_from_dict(doc)


class MemorySampler(threading.Thread):
    """Peak of the summed resident memory of this process and its children, and their CPU time.

    CPU seconds (user + system, the last sample of each process) make the rate independent of
    other work sharing the machine: wall time is not.
    """

    def __init__(self):
        super().__init__(daemon=True)
        self.peak = 0
        self.cpu = {}
        self.stop = threading.Event()

    def run(self):
        import psutil
        me = psutil.Process()
        base = sum(me.cpu_times()[:2])
        while not self.stop.is_set():
            total = 0
            for p in [me] + me.children(recursive=True):
                try:
                    total += p.memory_info().rss
                    t = p.cpu_times()
                    self.cpu[p.pid] = t.user + t.system - (base if p.pid == me.pid else 0.0)
                except psutil.Error:
                    pass
            self.peak = max(self.peak, total)
            time.sleep(0.2)


def worker_startup(workers, tmp):
    """Seconds to start a local cluster, and then for a one-cell tile on each worker (cold worker)."""
    from wetcycle import grid
    from wetcycle.runner import phase_models
    t0 = time.perf_counter()
    client, cluster = grid.dask_client(None, workers)
    t_cluster = time.perf_counter() - t0
    try:
        sc = scenario(Path(tmp) / "s.nc", cells=8, sols=1, steps=48, spinup=0)
        tables = {m.tables.name: m.tables for m in phase_models(sc)}
        t1 = time.perf_counter()
        futs = [client.submit(_one_cell, sc, tables, pure=False, workers=[w])
                for w in client.scheduler_info()["workers"]]
        client.gather(futs)
        t_first = time.perf_counter() - t1
    finally:
        grid._close(client, cluster)
    return t_cluster, t_first


def _one_cell(sc, tables):
    import dataclasses

    from wetcycle.runner import statistics
    statistics(dataclasses.replace(sc, sites=sc.sites[:1]), tables)


def main():
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("--global", dest="global_grid", action="store_true", help="the 2 x 2 degree global grid")
    ap.add_argument("--cells", type=int, default=2000)
    ap.add_argument("--step", type=float, default=2.0,
                    help="with --global: grid spacing in degrees (e.g. 10: a 648-cell global grid, poles included)")
    ap.add_argument("--sols", type=int, default=669)
    ap.add_argument("--steps", type=int, default=48)
    ap.add_argument("--spinup", type=int, default=4, help="spin-up years (see the notes above)")
    ap.add_argument("--spinup-steps", type=int, default=12,
                    help="steps per sol of the spin-up years (0: the run's own; see clock.spinup_steps_per_sol)")
    ap.add_argument("--settle-sols", type=int, default=300, help="clock.spinup_settle_sols")
    ap.add_argument("--shift", default="bottom", choices=("bottom", "profile"), help="clock.spinup_shift")
    ap.add_argument("--chunk-cells", type=int, default=512, help="cells per tile (default 512: eight of the column kernel's 64-cell blocks, no padding)")
    ap.add_argument("--workers", type=int, nargs="+", default=[2], help="worker counts to time")
    a = ap.parse_args()
    from wetcycle.grid import run_grid
    with tempfile.TemporaryDirectory() as tmp:
        run_grid(scenario(Path(tmp) / "warm.nc", cells=8, sols=2, steps=a.steps, spinup=0))  # compile first
        t_cluster, t_first = worker_startup(max(a.workers), tmp)
        print(f"worker start-up: local cluster {t_cluster:.1f} s, then a first one-cell tile on each worker "
              f"{t_first:.1f} s (import, numba cache, tables)")
        for workers in a.workers:
            sc = scenario(Path(tmp) / f"w{workers}.nc", cells=a.cells, sols=a.sols, steps=a.steps,
                          spinup=a.spinup, global_grid=a.global_grid, chunk_cells=a.chunk_cells,
                          spinup_steps=a.spinup_steps, settle_sols=a.settle_sols, grid_step=a.step,
                          shift=a.shift)
            n = len(sc.sites)
            steps = a.sols * a.steps
            mem = MemorySampler()
            mem.start()
            spent = {}
            t0 = time.perf_counter()
            run_grid(sc, workers=workers, timings=spent)
            wall = time.perf_counter() - t0
            mem.stop.set()
            mem.join()
            rate = n * steps / wall
            work = spent["forcing"] + spent["phase"] + spent["io"]
            cpu = sum(mem.cpu.values())
            print(f"workers {workers}: {n} cells x {steps} steps ({a.spinup} spin-up years at {a.spinup_steps or a.steps} steps per sol"
                  f"{f' + {a.settle_sols} sols at {a.steps}' if 0 < a.spinup_steps < a.steps else ''}, {a.shift} shift, 3 salts): "
                  f"{wall:.1f} s ({wall / 60:.2f} min), {rate:.3e} cell-steps/s, "
                  f"peak memory {mem.peak / 1e9:.2f} GB (this process + workers)")
            print(f"  CPU time {cpu:.0f} s: {n * steps / cpu:.3e} cell-steps per CPU-second; on {workers} idle "
                  f"cores this run would take about {cpu / workers:.0f} s (load average now "
                  f"{__import__('os').getloadavg()[0]:.1f})")
            print(f"  worker time: forcing {100 * spent['forcing'] / work:.0f} %, phase model "
                  f"{100 * spent['phase'] / work:.0f} %, store writes {100 * spent['io'] / work:.1f} %; "
                  f"assembling the result {spent['assemble']:.1f} s")
            per_worker = n * steps / cpu if cpu else float("nan")  # cell-steps per CPU-second: one busy core
            cells_1deg = 180 * 360
            nodes, per_node = 10, 2
            compute = cells_1deg * steps / (per_worker * nodes * per_node)
            assemble = spent["assemble"] * cells_1deg / n
            total = t_cluster + t_first + compute + assemble
            print(f"  projection, 1 x 1 degree ({cells_1deg} cells) on {nodes} nodes x {per_node} workers: "
                  f"start-up {t_cluster + t_first:.0f} s + compute {compute:.0f} s + assembly {assemble:.0f} s "
                  f"= {total / 60:.1f} min (per-core rate {per_worker:.3e} cell-steps per CPU-second, from this run)")
            full = 90 * 180 * steps / per_worker / 2
            print(f"  the 2 x 2 degree global grid (16,200 cells) on 2 idle cores at this rate: about "
                  f"{full / 60:.1f} min")


if __name__ == "__main__":
    main()
