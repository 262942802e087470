"""How far a spin-up at fewer steps per sol moves the counted year (issue 12, section 4).

    python scripts/compare_spinup.py runs/demo.toml runs/validation/landers.toml runs/validation/caps.toml
    python scripts/compare_spinup.py --cells            # the benchmark's cells at 15 latitudes
    python scripts/compare_spinup.py --cells --reference 10 --variants 12:4:300 12:3:200:profile

Each scenario is run (no file written) with its own spin-up (``clock.spinup_steps_per_sol = 0``,
every year at the run's step) and with each variant ``STEPS:YEARS[:SETTLE[:SHIFT]]`` (spin-up years at
STEPS steps per sol with backward Euler, then SETTLE sols at the run's step; STEPS 0 = the run's
own step; YEARS replaces ``spinup_max_years``, ``*`` keeps the scenario's; SHIFT sets
``clock.spinup_shift``, bottom or profile).  ``--cells`` builds a site scenario from the
grid benchmark's settings (uniform albedo 0.22, thermal inertia 250, elevation -2000 m, 48 steps
per sol, three salts, equilibrium law, spin-up of exactly YEARS years as grid tiles do) at
latitudes 89 S to 89 N; ``--reference N`` adds a full-step spin-up of exactly N years (no early
stop) as the yardstick of a periodic state.  ``--cache DIR`` keeps the base and reference runs as
NetCDF files in DIR (named by scenario and setting) and reuses them on the next call;
``--no-base`` compares the variants with the reference only.  Printed per site, between a variant and the base (or the reference): the
largest change over the counted year of the daily minimum and maximum surface temperature [K]
(and on how many sols it exceeds 1 K), the first and last sol with CO2 frost (at any step), the
largest |ln| ratio of the daily-mean vapour pressure at the salt, and per salt the hours of
liquid.  Spin-up CPU time is not separated here (see scripts/bench_grid.py).
"""

import argparse
import copy
import time
import tomllib
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
LATS = (-89.0, -85.0, -75.0, -70.0, -65.0, -60.0, -50.0, -30.0, 0.0, 30.0, 50.0, 60.0, 65.0, 75.0, 85.0, 89.0)


def cells_doc():
    doc = tomllib.loads((ROOT / "runs" / "grid_demo.toml").read_text())
    doc.pop("grid")
    doc["scenario"]["name"] = "spinup_cells"
    doc["clock"].update(sols=669, steps_per_sol=48, spinup_max_years=2, spinup_tolerance_K=1e-4)
    doc["clock"].pop("years", None)
    doc.setdefault("phase", {})["law"] = "equilibrium"
    doc["site"] = [dict(name=f"lat{lat:+.0f}", latitude=lat, longitude=0.0, albedo=0.22, thermal_inertia=250.0,
                        elevation=-2000.0) for lat in LATS]
    return doc


def run(doc, source, steps, years, settle, fixed, cache=None, shift=None):
    import xarray as xr
    from wetcycle.config import scenario_from_dict
    from wetcycle.runner import run as run_scenario
    d = copy.deepcopy(doc)
    d.setdefault("output", {})["series"] = True
    c = d["clock"]
    c["spinup_steps_per_sol"] = steps
    if settle is not None:
        c["spinup_settle_sols"] = settle
    if years is not None:
        c["spinup_max_years"] = years
    if fixed:
        c["spinup_tolerance_K"] = 1e-4
    if shift is not None:
        c["spinup_shift"] = shift
    sc = scenario_from_dict(d, source=source, base_dir=str(Path(source).parent))
    path = None
    if cache is not None:
        path = Path(cache) / f"{Path(source).stem}_{steps}_{years}_{settle}_{int(fixed)}.nc"
        if path.exists():
            with xr.open_dataset(path) as ds:
                return ds.load(), float(ds.attrs["compare_cpu_s"])
    t0 = time.process_time()
    ds = run_scenario(sc, write=False)
    cpu = time.process_time() - t0
    if path is not None:
        path.parent.mkdir(parents=True, exist_ok=True)
        keep = ds[["surface_temperature", "co2_frost", "vapor_pressure", "liquid_hours"]]
        keep.attrs.update(ds.attrs, compare_cpu_s=cpu)
        keep.to_netcdf(path)
    return ds, cpu


def daily(ds, name, how):
    spd = int(ds.attrs["steps_per_sol"])
    a = ds[name].transpose(..., "time").values
    a = a.reshape(a.shape[:-1] + (a.shape[-1] // spd, spd))
    return getattr(a, how)(axis=-1)


def compare(a, b, label):
    sites = [str(s) for s in a["site"].values]
    tmin = np.abs(daily(a, "surface_temperature", "min") - daily(b, "surface_temperature", "min"))
    tmax = np.abs(daily(a, "surface_temperature", "max") - daily(b, "surface_temperature", "max"))
    dt = np.maximum(tmin, tmax)
    fa, fb = daily(a, "co2_frost", "max") > 0, daily(b, "co2_frost", "max") > 0
    vp = np.abs(np.log(np.maximum(daily(a, "vapor_pressure", "mean"), 1e-30)
                       / np.maximum(daily(b, "vapor_pressure", "mean"), 1e-30)))
    la, lb = a["liquid_hours"].values, b["liquid_hours"].values   # (salt, site)
    salts = [str(s) for s in a["salt"].values]
    print(f"  {label}")
    print(f"    {'site':10s} {'max dT':>7s} {'sols>1K':>7s}  {'CO2 frost sols (first-last)':>30s}  {'max|dln e|':>10s}  "
          + "  ".join(f"{s + ' h':>18s}" for s in salts))

    def span(f):
        i = np.flatnonzero(f)
        return f"{i[0]}-{i[-1]} ({i.size})" if i.size else "none"
    for k, s in enumerate(sites):
        fr = f"{span(fa[k])} / {span(fb[k])}"
        liq = "  ".join(f"{la[j, k]:8.1f}/{lb[j, k]:<8.1f}" + " " * max(0, len(salts[j]) - 16) for j in range(len(salts)))
        print(f"    {s:10s} {dt[k].max():7.2f} {int((dt[k] > 1.0).sum()):7d}  {fr:>30s}  {vp[k].max():10.3f}  {liq}")


def main():
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("scenarios", nargs="*")
    ap.add_argument("--cells", action="store_true", help="the benchmark's cells at 16 latitudes")
    ap.add_argument("--variants", nargs="+", default=["12:4:300", "12:3:200:profile"],
                    help="STEPS:YEARS[:SETTLE[:SHIFT]]")
    ap.add_argument("--reference", type=int, default=0, help="also a full-step spin-up of this many years")
    ap.add_argument("--cache", help="folder keeping the base and reference runs for the next call")
    ap.add_argument("--no-base", action="store_true", help="compare the variants with the reference only")
    a = ap.parse_args()
    jobs = [(tomllib.loads(Path(p).read_text()), str(Path(p).resolve()), False) for p in a.scenarios]
    if a.cells:
        jobs.append((cells_doc(), str(ROOT / "runs" / "spinup_cells.toml"), True))
    for doc, source, fixed in jobs:
        print(f"{Path(source).name}: {len(doc['site'])} sites, {doc['clock'].get('steps_per_sol')} steps per sol, "
              f"spin-up up to {doc['clock'].get('spinup_max_years')} years"
              + (" (exactly, as grid tiles)" if fixed else " (to the scenario's tolerance)"), flush=True)
        base = ref = None
        if not a.no_base:
            base, tb = run(doc, source, 0, None, None, fixed, a.cache)
            print(f"  base (spin-up at the run's step): {tb:.0f} CPU-s, {base.attrs['spinup_years']} spin-up years",
                  flush=True)
        if a.reference:
            ref, tr = run(doc, source, 0, a.reference, None, True, a.cache)
            print(f"  reference ({a.reference} full-step years): {tr:.0f} CPU-s", flush=True)
            if base is not None:
                compare(base, ref, "base vs reference (a / b)")
        for v in a.variants:
            parts = v.split(":")
            steps, years = int(parts[0]), (None if parts[1] == "*" else int(parts[1]))
            settle = int(parts[2]) if len(parts) > 2 and parts[2] else None
            shift = parts[3] if len(parts) > 3 else None
            ds, tv = run(doc, source, steps, years, settle, fixed, shift=shift)
            print(f"  variant {v}: {tv:.0f} CPU-s, {ds.attrs['spinup_years']} spin-up years", flush=True)
            if base is not None:
                compare(ds, base, f"variant {v} vs base (a / b)")
            if ref is not None:
                compare(ds, ref, f"variant {v} vs reference (a / b)")


if __name__ == "__main__":
    main()
