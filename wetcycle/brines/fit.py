"""Fitting the mixing parameters (theta, psi) and double-salt ln K to published mixed-salt points.

Method (common practice in electrolyte thermodynamics; cf. Harvie, Møller & Weare 1984):
binary parameters fixed; the free c0 of ``data/mixing.toml`` fitted by
``scipy.optimize.least_squares`` to the tables with ``use = "fit"``, each residual divided by
its table's sigma, with weak Gaussian priors tying each parameter to its recalled 25 °C
starting value (scales :data:`PRIOR_SCALE`).  Residual kinds are described at the top of
``data/mixing.toml``.  :func:`report` evaluates every table (fitted and held out) for the
fitted parameters, the recalled starting values and the theta = psi = 0 baseline.
"""

from __future__ import annotations

import copy
import math

import numpy as np

from .. import __version__
from ..salts.pitzer import MW
from . import chemistry as ch
from .equilibrium import equilibrate
from .paths import freeze, mutual_deliquescence_rh

#: Prior scales of the free c0 around their starting values (theta, psi: a few times the spread of
#: published 25 °C values; ln K: one unit).
PRIOR_SCALE = {"theta": 0.05, "psi": 0.02, "lnK": 1.0}
UNITS = {"eutonic": "ln(IAP/K)", "mutual_deliquescence": "RH", "invariant": "ln(IAP/K)",
         "freezing_onset": "K", "eutectic": "K"}


def _salt_ions(salts_):
    pairs = {s.name: s for s in ch.binary_pairs().values()}
    out = {}
    for name, amount in salts_.items():
        s = pairs[name]
        for ion, nu in ((ch.ion_name(s.cation), s.nu_cation), (ch.ion_name(s.anion), s.nu_anion)):
            out[ion] = out.get(ion, 0.0) + nu * amount
    return out


def _wt_to_molality(wt):
    pairs = {s.name: s for s in ch.binary_pairs().values()}
    water = 1.0 - sum(wt.values()) / 100.0
    m = {}
    for name, w in wt.items():
        s = pairs[name]
        n = (w / 100.0) / s.molar_mass / water
        for ion, nu in ((ch.ion_name(s.cation), s.nu_cation), (ch.ion_name(s.anion), s.nu_anion)):
            m[ion] = m.get(ion, 0.0) + nu * n
    return m


def _si(chem, m, T, names):
    lng, lnaw, _, _ = chem.activities(np.array([m[i] for i in chem.ions]), T)
    mu = np.log([m[i] for i in chem.ions]) + lng
    out = []
    for nm in names:
        s = chem.solid(nm)
        v = s.hydration * lnaw - s.ln_k(T)
        for ion, nu in s.stoich:
            v += nu * mu[chem.index(ion)]
        out.append(v)
    return np.array(out)


def table_residuals(t, mixing):
    """Residuals of one [[data]] table (natural units) for ``mixing`` ("fitted", "start", "none" or a dict)."""
    kind = t["kind"]
    T = float(t["temperature"])
    ext = bool(t.get("extrapolate", False))
    if kind == "eutonic":
        m = _wt_to_molality(t["salts_wt_percent"])
        chem = ch.load(tuple(m), mixing)
        return _si(chem, m, T, t["solids"])
    if kind == "mutual_deliquescence":
        rh = mutual_deliquescence_rh(t["salts"], T, mixing=mixing, extrapolate_binaries=ext)
        return np.array([rh - float(t["rh"])])
    if kind == "invariant":
        d = mutual_deliquescence_rh(t["salts"], T, mixing=mixing, extrapolate_binaries=ext,
                                    exclude=tuple(t.get("exclude", ())) + (t["solids"][-1],), details=True)
        chem = ch.load(tuple(d["molality"]), mixing)
        return _si(chem, d["molality"], T, [t["solids"][-1]])
    if kind == "freezing_onset":
        ds = freeze(t["composition"], mixing=mixing, extrapolate_binaries=ext, step_K=0.25,
                    temperature_end_K=T - 15.0)
        sel = [k for k in range(ds.sizes["event"]) if str(ds.event_solid.values[k]) == t["solid"]]
        if not sel:
            return np.array([math.nan])
        k = sel[0]
        T_on = _refine_onset(t["composition"], t["solid"], float(ds.event_at[k]), mixing, ext)
        return np.array([T_on - T])
    if kind == "eutectic":
        ds = freeze(_salt_ions(t["salts"]), mixing=mixing, extrapolate_binaries=ext, step_K=0.5)
        return np.array([float(ds.attrs["eutectic_temperature_K"]) - T])
    raise ValueError(f"unknown kind {kind!r}")


def _refine_onset(comp, solid, T_first, mixing, ext):
    """Onset temperature of ``solid`` to 0.01 K by bisection between the step before and T_first."""
    from .paths import _neutral, check_composition
    vals, _ = check_composition(comp)
    chem = ch.load(tuple(vals), mixing)
    b = _neutral(chem, vals)
    lo, hi = T_first, T_first + 0.25
    for _ in range(5):
        mid = 0.5 * (lo + hi)
        r = equilibrate(chem, b, 1.0 / MW, mid)
        if any(nm == solid and x > 0 for nm, x in zip(r.solids, r.solid_moles)):
            lo = mid
        else:
            hi = mid
    return 0.5 * (lo + hi)


def free_parameters(mix):
    """[(group, key, start, current)] of the c0 values marked fit = true."""
    out = []
    for group in ("theta", "psi"):
        for ions, e in mix[group].items():
            if e["fit"][0]:
                out.append((group, ions, float(e["start"][0]), float(e["c"][0])))
    for d in mix["solids"]:
        if d["fit"][0]:
            out.append(("lnK", d["name"], float(d["start"][0]), float(d["lnk"][0])))
    return out


def with_values(mix, params, x):
    """A copy of the parsed mixing file with the free c0 set to ``x``."""
    m = copy.deepcopy(mix)
    for (group, key, _, _), v in zip(params, x):
        if group == "lnK":
            for d in m["solids"]:
                if d["name"] == key:
                    d["lnk"] = d["lnk"].copy()
                    d["lnk"][0] = v
        else:
            m[group][key]["c"] = m[group][key]["c"].copy()
            m[group][key]["c"][0] = v
    return m


def fit(verbose=0):
    """Least-squares fit; returns (params, x, result)."""
    from scipy.optimize import least_squares

    base = ch.mixing_file(use_fitted=False)
    params = free_parameters(base)
    tables = [t for t in base["data"] if t.get("use", "fit") == "fit"]

    def fun(x):
        mix = with_values(base, params, x)
        parts = []
        for t in tables:
            r = table_residuals(t, mix) / float(t["sigma"])
            parts.append(np.where(np.isnan(r), 30.0, r))
        parts.append(np.array([(v - p[2]) / PRIOR_SCALE[p[0]] for p, v in zip(params, x)]))
        return np.concatenate(parts)

    x0 = np.array([p[2] for p in params])
    res = least_squares(fun, x0, method="trf", x_scale=[PRIOR_SCALE[p[0]] for p in params],
                        diff_step=1e-4, verbose=verbose, max_nfev=200)
    return params, res.x, res


def report(mixes):
    """Per-table residual rows for each named parameter set {label: mixing}."""
    base = ch.mixing_file(use_fitted=False)
    rows = []
    for k, t in enumerate(base["data"]):
        row = dict(table=k + 1, kind=t["kind"], use=t.get("use", "fit"), units=UNITS[t["kind"]],
                   sigma=float(t["sigma"]), extrapolated=bool(t.get("extrapolate", False)), source=t["source"])
        for label, mixing in mixes.items():
            try:
                r = table_residuals(t, mixing)
            except Exception as exc:  # a failed evaluation is reported, not hidden
                r = np.array([math.nan])
                row[f"{label}_error"] = str(exc)[:200]
            row[label] = [float(v) for v in r]
        rows.append(row)
    return rows


def fitted_section(params, x, res, rows):
    lines = [ch.FIT_MARKER, "[fitted]", 'by = "scripts/fit_mixing.py"', f'wetcycle_version = "{__version__}"',
             'method = "scipy.optimize.least_squares (trf): use=fit tables / sigma, priors on c0 around the recalled values"']
    if res is not None:
        lines.append(f"cost = {float(res.cost)!r}")
    for group in ("theta", "psi"):
        lines.append("")
        lines.append(f"[fitted.{group}]  # c0..c3; only c0 was free")
        for (g, key, _, _), v in zip(params, x):
            if g == group:
                lines.append(f'"{"-".join(key)}" = [{float(v)!r}, 0.0, 0.0, 0.0]')
    lines.append("")
    lines.append("[fitted.lnK]")
    for (g, key, _, _), v in zip(params, x):
        if g == "lnK":
            lines.append(f'"{key}" = [{float(v)!r}, 0.0, 0.0, 0.0]')
    for r in rows:
        lines.append("")
        lines.append("[[fitted.residual]]  # model - published, in `units`; fitted / start (recalled 25 °C values) / "
                     "baseline (theta = psi = 0)")
        src = r["source"].replace("\\", "\\\\").replace('"', '\\"')
        lines.append(f'table = {r["table"]}\nkind = "{r["kind"]}"\nuse = "{r["use"]}"\nunits = "{r["units"]}"')
        lines.append(f'sigma = {r["sigma"]!r}\nextrapolated = {str(r["extrapolated"]).lower()}\nsource = "{src}"')
        for label in ("fitted", "start", "baseline"):
            vals = ", ".join("nan" if math.isnan(v) else f"{v:.6g}" for v in r[label])
            lines.append(f"{label} = [{vals}]")
    return "\n".join(lines) + "\n"


def write_fitted(text, path=ch.MIXING_PATH):
    raw = path.read_text(encoding="utf-8")
    head = raw.split(ch.FIT_MARKER)[0].rstrip("\n") + "\n\n"
    path.write_text(head + text, encoding="utf-8")
