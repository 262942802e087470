"""Replays of published laboratory experiments with ``wetcycle.run_series`` (README, "Lab replays").

    python scripts/validate_lab_replays.py            # prints the README's three tables

1. Isothermal up-and-down humidity ramps: the RH at which each salt deliquesces and effloresces,
   against the published DRH/ERH (single particles: the equilibrium law).
2. Cooling at constant vapour pressure: where a brine nucleates ice, against the published
   ice-supersaturation limit (Rivera-Valentin et al. 2020) and supercooling (Toner et al. 2014).
3. Vapour-only versus ice-contact deliquescence above the eutectic (Fischer et al. 2014), with the
   default law and loading.

The same checks, with their tolerances, are tests in tests/test_phase_metastable.py; this script
prints the numbers for the README.  Forcing programmes are our own (ramps, holds).
"""

import numpy as np

import wetcycle
from wetcycle import salts
from wetcycle.phase import states
from wetcycle.water import ice_water_activity, saturation_vapor_pressure_liquid

#: (salt, T [K], published ERH, source)
ERH = [
    ("NaCl", 298.15, 0.45, "Tang & Munkelwitz 1993 (from memory)"),
    ("KCl", 298.15, 0.60, "Martin 2000 review (from memory)"),
    ("Na2SO4", 298.15, 0.57, "Tang & Munkelwitz 1994 (from memory)"),
    ("MgCl2", 298.15, 0.09, "Gupta et al. 2015, 3-11 % (read)"),
    ("NaClO4", 273.15, 0.13, "Gough et al. 2011 (read)"),
    ("NaClO4", 228.0, 0.13, "Gough et al. 2011 (read); 8 K below the eutectic"),
    ("Mg(ClO4)2", 273.15, 0.19, "Gough et al. 2011 (read)"),
    ("Mg(ClO4)2", 223.0, 0.19, "Gough et al. 2011 (read)"),
    ("Ca(ClO4)2", 250.0, 0.15, "Nuding et al. 2014 (from memory)"),
    ("CaCl2", 298.15, None, "no sharp efflorescence; amorphous when dry (Gough 2016; Guo 2019)"),
    ("MgSO4", 298.15, None, "no efflorescence: gel (Zhang & Chan 2000)"),
]


def ramp(values, n_per):
    out = [np.linspace(a, b, n_per, endpoint=False) for a, b in zip(values[:-1], values[1:])]
    return np.concatenate(out + [[values[-1]]])


def humidity_ramp(salt, T):
    s = salts.load(salt)
    drh = float(s.deliquescence_rh(T))
    top = min(drh + 0.04, 0.995)
    if T < 273.15:
        top = min(top, 0.99 * s.metastability["ice_nucleation_rh_ice"] * float(ice_water_activity(T)))
    rh = ramp([max(drh - 0.15, 0.02), top, 0.01], 600)
    ds = wetcycle.run_series(salt, np.arange(rh.size) * 60.0, np.full(rh.size, T), rh, law="equilibrium")
    ph = ds.phase_state.values
    wet = np.isin(ph, states.LIQUID)
    i_wet = int(np.argmax(wet))
    down = np.arange(rh.size) > np.argmax(rh)
    dry = np.flatnonzero(down & ~wet)
    i_dry = int(dry[0]) if dry.size else None
    limit = bool(np.any(ds.validity_flag.values & 2))
    return drh, rh[i_wet], (rh[i_dry] if i_dry is not None else np.nan), limit


def cooling_ramp(salt, T0, T1, rh0, n=1500):
    e = rh0 * float(saturation_vapor_pressure_liquid(T0))
    T = np.linspace(T0, T1, n)
    rh = np.minimum(e / saturation_vapor_pressure_liquid(T), 1.0)
    ds = wetcycle.run_series(salt, np.arange(n) * 60.0, T, rh, law="equilibrium")
    i = int(np.argmax(ds.ice_water.values > 0)) if np.any(ds.ice_water.values > 0) else None
    j = int(np.argmax(ds.phase_state.values == states.FROZEN)) if np.any(ds.phase_state.values == states.FROZEN) else None
    s = salts.load(salt)
    out = dict(e=e)
    if i is not None:
        out["T_ice"] = T[i]
        out["rh_ice"] = rh[i] / float(ice_water_activity(T[i]))
        m = float(s.molality_at_water_activity(float(ds.brine_water_activity[i - 1]), T[i - 1]))
        out["supercooling"] = float(s.ice_liquidus_temperature(m)) - T[i]
    if j is not None:
        out["T_frozen"] = T[j]
    return out


def kinetics(salt, T, hours=3.0):
    rh = 0.95 * float(ice_water_activity(T))
    t = np.arange(0.0, hours * 3600.0 + 1.0, 300.0)
    s = salts.load(salt)
    res = {}
    for label, frost in (("vapour only", 0.0), ("touching frost", 0.5)):
        ds = wetcycle.run_series(salt, t, np.full(t.size, T), np.full(t.size, rh), frost_kg_m2=frost)
        ph = ds.phase_state.values
        liq = np.isin(ph, states.LIQUID)
        full = np.isin(ph, (states.BRINE, states.BRINE_WITH_ICE))
        res[label] = dict(first_liquid_min=(t[np.argmax(liq)] / 60.0 if liq.any() else np.nan),
                          full_min=(t[np.argmax(full)] / 60.0 if full.any() else np.nan),
                          water_end=float(ds.liquid_water[-1]))
    n = 0.05 / s.molar_mass
    res["brine_water_at_rh"] = n / float(s.molality_at_water_activity(rh, T))
    res["rh"], res["drh"] = rh, float(s.deliquescence_rh(T))
    return res


def main():
    print("1. Isothermal humidity ramps (equilibrium law), RH up from DRH-0.15 and down to 0.01, 1e-4 per minute-ish")
    print("| salt | T [K] | DRH model | deliquesced at | published ERH | effloresced at | source |")
    print("|---|---|---|---|---|---|---|")
    for salt, T, erh, src in ERH:
        drh, up, down, limit = humidity_ramp(salt, T)
        d = f"{down:.3f}" + (" (end of model range)" if limit else "") if np.isfinite(down) else "stays liquid"
        e = f"{erh:.2f}" if erh is not None else "none"
        print(f"| {salt} | {T:.2f} | {drh:.3f} | {up:.3f} | {e} | {d} | {src} |")
    print()
    print("2. Cooling at constant vapour pressure (equilibrium law)")
    print("| salt | start | first ice at | RH over ice there | supercooling below its own freezing point | frozen at |")
    print("|---|---|---|---|---|---|")
    for salt, T0, T1, rh0 in (("Ca(ClO4)2", 235.0, 195.0, 0.45), ("Mg(ClO4)2", 240.0, 200.0, 0.6),
                              ("NaCl", 275.0, 248.0, 0.86), ("CaCl2", 250.0, 212.0, 0.62)):
        r = cooling_ramp(salt, T0, T1, rh0)
        ti = f"{r['T_ice']:.1f} K" if "T_ice" in r else "none"
        ri = f"{r['rh_ice']:.3f}" if "rh_ice" in r else "-"
        sc = f"{r['supercooling']:.1f} K" if "supercooling" in r else "-"
        tf = f"{r['T_frozen']:.1f} K" if "T_frozen" in r else "-"
        print(f"| {salt} | {T0:.0f} K, RH {rh0:.2f} ({r['e']:.3g} Pa) | {ti} | {ri} | {sc} | {tf} |")
    print()
    print("3. Deliquescence above the eutectic, default law and loading, air at RH_ice 0.95, 3 h")
    print("| salt | T [K] | RH (DRH) | vapour only: liquid from / fully dissolved | touching frost: liquid from / dissolved | brine water after 3 h, vapour only (equilibrium value) |")
    print("|---|---|---|---|---|---|")
    for salt, T in (("Ca(ClO4)2", 220.0), ("Ca(ClO4)2", 205.0), ("Mg(ClO4)2", 225.0), ("NaClO4", 245.0)):
        r = kinetics(salt, T)
        v, f = r["vapour only"], r["touching frost"]
        fm = lambda x: "not within 3 h" if not np.isfinite(x) else f"{x:.0f} min"
        print(f"| {salt} | {T:.0f} | {r['rh']:.3f} ({r['drh']:.3f}) | {fm(v['first_liquid_min'])} / {fm(v['full_min'])} "
              f"| {fm(f['first_liquid_min'])} / {fm(f['full_min'])} | {v['water_end'] * 1e3:.1f} g m-2 "
              f"({r['brine_water_at_rh'] * 1e3:.1f}) |")


if __name__ == "__main__":
    main()
