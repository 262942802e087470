"""The near-surface air at a lander at noon: ground, air at the sensor, wind, Ri_b and C_H U.

Reads a result with series (default: the validation run's ``runs/validation/out/landers.nc``,
written by ``scripts/validate_mars.py``) and prints, averaged over the sols of an Ls window at
each sol's step of largest sensible heat flux, what the surface layer worked with:

* ground and air (sensor height) temperature and their difference;
* the sensible heat flux H and the transfer velocity it implies, ``C_H U = H / (rho c_p dT)``;
* the wind setting, the convective velocity w* over the daytime layer and the gusty wind
  ``U_eff`` (surface_layer notes), and the bulk Richardson number at the sensor height;
* the same relation read the other way: the ground-air difference the published flux would
  need at the model's ``C_H U``, and the ``C_H U`` the published difference would need.

Usage:  python scripts/diagnose_air.py [RESULT] [--site NAME] [--ls LO HI]
                                        [--flux LO HI] [--difference LO HI]

Defaults: Viking Lander 1, Ls 97-117, against Sutton, Leovy & Tillman (1978, J. Atmos. Sci.
35, 2346; read): noon sensible heat 15-20 W m-2 from a ground-air difference of 20-30 K.
"""

from __future__ import annotations

import argparse
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]


def main(argv=None):
    import wetcycle
    from wetcycle.forcing.atmosphere import CP_AIR_MARS
    from wetcycle.forcing.column import WaterSettings
    from wetcycle.forcing.surface_layer import GUST_BETA
    from wetcycle.orbit import MARS

    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("result", nargs="?", default=str(ROOT / "runs" / "validation" / "out" / "landers.nc"))
    ap.add_argument("--site", default="Viking Lander 1")
    ap.add_argument("--ls", nargs=2, type=float, default=(97.0, 117.0))
    ap.add_argument("--flux", nargs=2, type=float, default=(15.0, 20.0), help="published noon H [W m-2]")
    ap.add_argument("--difference", nargs=2, type=float, default=(20.0, 30.0),
                    help="published noon ground-air difference [K]")
    a = ap.parse_args(argv)
    ds = wetcycle.open_result(a.result)
    names = [str(x) for x in ds["site"].values] if "site" in ds.coords else []
    if "site_name" in ds:
        names = [str(x) for x in ds["site_name"].values]
    if a.site not in names:
        ap.error(f"--site: {a.site!r} not in the result; sites: {', '.join(names)}")
    i = names.index(a.site)
    w = WaterSettings()
    g = MARS.gravity_m_s2
    r_air = 8.314462618 / MARS.molar_mass_air_kg_mol
    ls, sol = ds["solar_longitude"].values, ds["sol"].values
    sel = (ls >= a.ls[0]) & (ls < a.ls[1])
    get = {k: np.asarray(ds[k].isel(site=i).values, dtype=float)
           for k in ("surface_temperature", "air_temperature", "sensible_heat_flux", "surface_pressure")}
    rows = []
    for s in np.unique(sol[sel]):
        m = np.flatnonzero(sel & (sol == s))
        k = m[np.argmax(get["sensible_heat_flux"][m])]
        ts, ta, h, p = (get[v][k] for v in ("surface_temperature", "air_temperature", "sensible_heat_flux",
                                             "surface_pressure"))
        rho = p / (r_air * ta)
        chu = h / (rho * CP_AIR_MARS * (ts - ta))
        wst = np.cbrt(g * w.day_layer_m * max(h, 0.0) / (rho * CP_AIR_MARS * ta))
        ueff = np.hypot(w.wind_m_s, GUST_BETA * wst)
        ri = g * w.sensor_height_m * (ta - ts) / (0.5 * (ta + ts) * ueff ** 2)
        rows.append((ts, ta, ts - ta, h, rho * CP_AIR_MARS, chu, wst, ueff, ri))
    if not rows:
        ap.error(f"--ls: no sols of the result in Ls {a.ls[0]:g}-{a.ls[1]:g}")
    ts, ta, dt, h, rcp, chu, wst, ueff, ri = np.mean(rows, axis=0)
    print(f"{a.site}, Ls {a.ls[0]:g}-{a.ls[1]:g}, {len(rows)} sols, at each sol's largest H:")
    print(f"  ground {ts:.1f} K, air at {w.sensor_height_m:g} m {ta:.1f} K, difference {dt:.1f} K")
    print(f"  H {h:.2f} W m-2, rho c_p {rcp:.1f} J m-3 K-1, C_H U {100 * chu:.2f} cm s-1")
    print(f"  wind {w.wind_m_s:g} m s-1, w* {wst:.2f} m s-1 (over {w.day_layer_m:g} m), U_eff {ueff:.2f} m s-1, "
          f"Ri_b {ri:.3f}")
    print(f"  published H {a.flux[0]:g}-{a.flux[1]:g} W m-2 would need a difference of "
          f"{a.flux[0] / (rcp * chu):.0f}-{a.flux[1] / (rcp * chu):.0f} K at this C_H U; "
          f"the published {a.difference[0]:g}-{a.difference[1]:g} K would need C_H U "
          f"{100 * a.flux[0] / (rcp * a.difference[1]):.1f}-{100 * a.flux[1] / (rcp * a.difference[0]):.1f} cm s-1")


if __name__ == "__main__":
    main()
