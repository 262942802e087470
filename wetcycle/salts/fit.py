"""Fitting a salt system's temperature dependence to published data points.

Common practice in electrolyte thermodynamics (e.g. Pitzer 1991, ch. 3;
Spencer, Møller & Weare 1990, Geochim. Cosmochim. Acta 54, 575): the 25 °C
Pitzer parameters come from the literature, and the temperature coefficients
of beta0, beta1, beta2, C_phi and ln K(T) of each solid are fitted jointly to

* freezing points: at the ice liquidus a_w(m, T_f) = a_w,ice(T_f);
* solubilities: ln IAP(m_sat, T) = ln K(T) for the solid named;
* eutectic and peritectic points: both of the above for the two solids;
* deliquescence humidities: a_w(m_sat(T), T) = RH_d;
* osmotic coefficients and water activities;
* water activities of crystal-free supersaturated brines (the branch of
  :mod:`wetcycle.salts.metastable`, whose curvature c2, c3 may be fitted);
* solid-state hydration humidities between two salt solids:
  RH = (K_high / K_low)^(1 / (n_high - n_low)) (humidity-buffer and vapour-pressure data).

Each point is weighted by its table's stated uncertainty ``sigma`` (K for
freezing points, relative for solubilities, absolute for RH / phi / a_w), so
residuals are dimensionless.  Weak Gaussian priors on the free temperature
coefficients (scales in :data:`PRIOR_SCALE`) keep the nearly collinear
1/T and ln T terms well posed where data are sparse.  The solver is
``scipy.optimize.least_squares`` (trust-region reflective).

:func:`fit_file` fits a data file; :func:`write_fitted` rewrites the part
of the file below :data:`~wetcycle.salts.datafile.FIT_MARKER`;
:func:`table_residuals` recomputes residuals for the tests.
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
from scipy.optimize import least_squares

from .. import __version__
from ..water import ice_activity_kernel
from . import datafile
from . import metastable as mt
from . import pitzer as pz

#: Prior scales of the temperature coefficients c1, c2, c3 (Pitzer beta's,
#: C_phi) and of ln K's c2, c3: about ten times the magnitudes seen in
#: published temperature functions (common practice: weak regularisation).
PRIOR_SCALE = {
    "beta": (3000.0, 20.0, 0.05),
    "cphi": (300.0, 2.0, 0.005),
    "lnK": (None, 300.0, 1.0),
}
#: Physical constraint (Gibbs-Duhem stability of a single liquid phase; common
#: practice): ln a_w must decrease with molality everywhere in the validity
#: domain.  Checked on a grid of MONO_GRID = (n_T, n_m) points; a violation
#: d ln a_w / dm > -MONO_MARGIN adds a residual (violation / MONO_MARGIN).
MONO_GRID = (12, 40)
MONO_MARGIN = 1e-3

#: Residual assigned to a deliquescence or solubility point whose model
#: saturation cannot be found below m_max (in units of sigma).
MISSING_PENALTY = 30.0

UNITS = {"freezing": "K", "solubility": "relative", "eutectic": "K|relative",
         "peritectic": "relative", "deliquescence": "RH", "osmotic": "phi", "water_activity": "aw",
         "supersaturated": "aw", "hydration": "RH"}


#: Names accepted by ``free`` (besides the solids' names): the Pitzer parameters and the branch.
FREE_GROUPS = ("beta0", "beta1", "beta2", "cphi", "supersaturated")


class Model:
    """Maps a free-parameter vector onto packed Pitzer parameters and ln K coefficients.

    ``free``: None (every coefficient the data file's ``fit`` masks allow), or a collection of
    group names -- Pitzer parameters (``beta0``...), solid names, ``"supersaturated"`` -- to which
    the fit is restricted; the other coefficients stay at their current (fitted) values.  Used to
    refit one part of a system to new data without moving what other code was built on.
    """

    def __init__(self, info, free=None):
        s = info["system"]
        self.info = info
        self.base_coef = np.array(info["coef"], dtype=float)
        self.mask = np.array(info["fitmask"], dtype=bool)
        self.solids = info["solids"]
        self.solid_index = {d["name"]: k for k, d in enumerate(self.solids)}
        self.lnk0 = np.array([d["lnK"] for d in self.solids], dtype=float)
        self.lnk_mask = np.array([d["fit"] for d in self.solids], dtype=bool)
        self.hyd = np.array([d["hydration"] for d in self.solids], dtype=float)
        self.consts = (int(s["nu_cation"]), int(s["nu_anion"]), int(s["z_cation"]), int(s["z_anion"]),
                       info["alpha1"], info["alpha2"])
        self.m_hi = float(s["m_max"])
        self.sup = info.get("supersaturated")
        self.br0 = np.array(self.sup["c"], dtype=float) if self.sup else np.zeros(2)
        self.br_mask = np.array(self.sup["fit"], dtype=bool) if self.sup else np.zeros(2, dtype=bool)
        if free is not None:
            free = set(free)
            unknown = free - set(FREE_GROUPS) - set(self.solid_index)
            if unknown:
                from ..errors import ConfigError
                raise ConfigError(f"free: {sorted(unknown)[0]!r} is not a parameter group of {s['name']}; allowed: "
                                  f"{', '.join(list(FREE_GROUPS) + list(self.solid_index))}")
            for r, name in enumerate(pz.PARAM_NAMES):
                if name not in free:
                    self.mask[r] = False
            for name, j in self.solid_index.items():
                if name not in free:
                    self.lnk_mask[j] = False
            if "supersaturated" not in free:
                self.br_mask[:] = False
        self.n_free = int(self.mask.sum() + self.lnk_mask.sum() + self.br_mask.sum())

    def x0(self):
        return np.concatenate([self.base_coef[self.mask], self.lnk0[self.lnk_mask], self.br0[self.br_mask]])

    def unpack(self, x):
        coef = self.base_coef.copy()
        k = int(self.mask.sum())
        coef[self.mask] = x[:k]
        lnk = self.lnk0.copy()
        j = k + int(self.lnk_mask.sum())
        lnk[self.lnk_mask] = x[k:j]
        return coef, lnk

    def branch_c(self, x):
        """(c2, c3) of the supersaturated branch for the free-parameter vector x."""
        c = self.br0.copy()
        c[self.br_mask] = x[len(x) - int(self.br_mask.sum()):]
        return c

    def branch(self, p, c):
        """Packed branch vector for Pitzer vector p and curvature c (join at m_max)."""
        if self.sup is None:
            return mt.pack_branch(p, self.m_hi, self.m_hi)
        return mt.pack_branch(p, self.m_hi, self.sup["m_ext"], float(c[0]), float(c[1]), self.sup["T_ref"])

    def priors(self, x):
        coef, lnk = self.unpack(x)
        out = []
        for r in range(4):
            sc = PRIOR_SCALE["cphi" if r == 3 else "beta"]
            for c in range(4):
                if self.mask[r, c]:
                    if c == 0:
                        ref = self.base_coef[r, 0]
                        out.append((coef[r, 0] - ref) / (0.2 * abs(ref) + 0.02))
                    else:
                        out.append(coef[r, c] / sc[c - 1])
        for j in range(lnk.shape[0]):
            for c in (2, 3):
                if self.lnk_mask[j, c]:
                    out.append(lnk[j, c] / PRIOR_SCALE["lnK"][c - 1])
        return np.array(out)


def _lnk_at(c, T):
    return c[0] + c[1] * (1.0 / T - 1.0 / pz.T_REF) + c[2] * math.log(T / pz.T_REF) + c[3] * (T - pz.T_REF)


def _freeze_resid(p, m, T):
    """Freezing-point residual expressed in kelvin (ln a_w mismatch / d ln a_w,ice/dT)."""
    a_ice = ice_activity_kernel(T)
    if not (a_ice == a_ice) or T >= 273.16:
        return math.nan
    slope = (math.log(ice_activity_kernel(min(T + 0.01, 273.16))) - math.log(ice_activity_kernel(T - 0.01))) / (
        min(T + 0.01, 273.16) - (T - 0.01))
    return (pz.ln_aw_kernel(m, T, p) - math.log(a_ice)) / slope


def _sol_resid(p, lnk, n, m, T):
    """Solubility residual as a relative molality error (ln IAP mismatch / d ln IAP / d ln m)."""
    f = pz.ln_iap_kernel(m, T, p, n) - _lnk_at(lnk, T)
    h = 1e-4
    d = (pz.ln_iap_kernel(m * (1 + h), T, p, n) - pz.ln_iap_kernel(m * (1 - h), T, p, n)) / (2 * h)
    if abs(d) < 1e-3:
        d = math.copysign(1e-3, d if d != 0 else 1.0)
    return f / d


def _transition_resid(p, lnk_a, n_a, lnk_b, n_b, m, T):
    """Peritectic-temperature residual in kelvin.

    Two solids coexist with one solution when ln K_a - ln K_b = (n_a - n_b) ln a_w
    (their dissolution reactions differ only by n_a - n_b waters).  The mismatch
    at the tabulated point, divided by its temperature derivative, is the shift
    of the transition temperature.  Solubility curves that cross at a shallow
    angle (halite/hydrohalite) need this: their composition residuals barely
    constrain where they cross.
    """
    def g(t):
        return _lnk_at(lnk_a, t) - _lnk_at(lnk_b, t) - (n_a - n_b) * pz.ln_aw_kernel(m, t, p)

    h = 0.05
    d = (g(T + h) - g(T - h)) / (2 * h)
    if abs(d) < 1e-6:
        return math.nan
    return g(T) / d


def table_residuals(table, p, lnk_all, solid_index, hyd, m_hi, br=None):
    """Residuals of one data table in its natural units (K, relative, RH, phi, aw).

    ``br`` is the packed supersaturated branch (needed by ``supersaturated`` tables).

    Returns a float array, one entry per row (two per row for eutectic and
    peritectic points: one per solid).  NaN where the model has no value.
    """
    res = []
    kind = table.kind
    for i in range(table.temperature.size):
        T = float(table.temperature[i])
        m = float(table.molality[i])
        v = float(table.value[i])
        if kind == "freezing":
            res.append(_freeze_resid(p, m, T))
        elif kind == "solubility":
            j = solid_index[table.solid]
            res.append(_sol_resid(p, lnk_all[j], hyd[j], m, T))
        elif kind in ("eutectic", "peritectic"):
            for s in table.solids:
                if s == "ice":
                    res.append(_freeze_resid(p, m, T))
                else:
                    j = solid_index[s]
                    res.append(_sol_resid(p, lnk_all[j], hyd[j], m, T))
            if kind == "peritectic" and table.sigma_temperature > 0.0:
                a, b = (solid_index[s] for s in table.solids)
                res.append(_transition_resid(p, lnk_all[a], hyd[a], lnk_all[b], hyd[b], m, T))
        elif kind == "deliquescence":
            j = solid_index[table.solid]
            ms = pz.saturation_molality_kernel(_lnk_at(lnk_all[j], T), T, p, hyd[j], m_hi)
            res.append(math.exp(pz.ln_aw_kernel(ms, T, p)) - v if ms == ms else math.nan)
        elif kind == "osmotic":
            res.append(pz.osmotic_kernel(m, T, p) - v)
        elif kind == "water_activity":
            res.append(math.exp(pz.ln_aw_kernel(m, T, p)) - v)
        elif kind == "supersaturated":
            res.append(math.exp(mt.ln_aw_full_kernel(m, T, p, br)) - v)
        elif kind == "hydration":
            lo, hi = sorted((solid_index[s] for s in table.solids), key=lambda j: hyd[j])
            dn = hyd[hi] - hyd[lo]
            res.append(math.exp((_lnk_at(lnk_all[hi], T) - _lnk_at(lnk_all[lo], T)) / dn) - v)
    return np.array(res, dtype=float)


def _monotonic_penalty(p, Ts, ms):
    out = np.zeros(Ts.size * ms.size)
    h = 1e-3
    k = 0
    for T in Ts:
        for m in ms:
            d = (pz.ln_aw_kernel(m + h, T, p) - pz.ln_aw_kernel(m - h, T, p)) / (2 * h)
            out[k] = max(0.0, d + MONO_MARGIN) / MONO_MARGIN
            k += 1
    return out


def _branch_monotonic_penalty(p, br, Ts):
    """The supersaturated branch must keep ln a_w decreasing up to m_ext (same margin as Pitzer)."""
    xs = np.linspace(br[mt.B_JOIN], br[mt.B_EXT], 20)
    out = np.zeros(Ts.size * xs.size)
    k = 0
    for T in Ts:
        for m in xs:
            d = mt.branch_slope_kernel(max(m, br[mt.B_JOIN] * (1 + 1e-9)), T, p, br)
            out[k] = max(0.0, d + MONO_MARGIN) / MONO_MARGIN if d == d else 0.0
            k += 1
    return out


def _sigma_units(table):
    """sigma for each residual of a table (eutectic: K for ice, relative for the salt)."""
    if table.kind == "eutectic":
        # sigma [K] applies to the ice side; the salt side uses sigma_composition
        # (relative molality; default 2 %); a hydrate-hydrate eutectic has no ice side.
        per = [table.sigma if s == "ice" else table.sigma_composition for s in table.solids]
        return np.tile(per, table.temperature.size)
    if table.kind == "peritectic":
        # two composition residuals (relative), then the transition temperature (K) if given
        per = [table.sigma, table.sigma] + ([table.sigma_temperature] if table.sigma_temperature > 0.0 else [])
        return np.tile(per, table.temperature.size)
    return np.full(table.temperature.size, table.sigma)


def fit_info(info, use=("fit",), verbose=0, free=None):
    """Fit the free coefficients of a parsed data file; returns (coef, lnk, result, model).

    ``free`` restricts the fit to some parameter groups (see :class:`Model`).
    """
    model = Model(info, free)
    tables = [t for t in info["tables"] if t.use in use]
    sigmas = [_sigma_units(t) for t in tables]

    def fun(x):
        coef, lnk = model.unpack(x)
        p = pz.pack(*model.consts, coef)
        br = model.branch(p, model.branch_c(x))
        parts = []
        for t, sg in zip(tables, sigmas):
            r = table_residuals(t, p, lnk, model.solid_index, model.hyd, model.m_hi, br) / sg
            parts.append(np.where(np.isnan(r), MISSING_PENALTY, r))
        parts.append(model.priors(x))
        parts.append(_monotonic_penalty(p, mono_T, mono_m))
        if model.br_mask.any():
            parts.append(_branch_monotonic_penalty(p, br, mono_T))
        return np.concatenate(parts) if parts else np.zeros(1)

    s = info["system"]
    mono_T = np.linspace(float(s["T_min"]), min(float(s["T_max"]), pz.APHI_T_MAX), MONO_GRID[0])
    mono_m = np.linspace(0.02, float(s["m_max"]), MONO_GRID[1])
    x0 = model.x0()
    if model.n_free == 0:
        coef, lnk = model.unpack(x0)
        if model.sup is not None:
            model.fitted_branch_c = model.br0.copy()
        return coef, lnk, None, model
    result = least_squares(fun, x0, method="trf", x_scale="jac", max_nfev=4000, verbose=verbose)
    coef, lnk = model.unpack(result.x)
    if model.sup is not None:
        model.fitted_branch_c = model.branch_c(result.x)
    return coef, lnk, result, model


def residual_report(info, coef, lnk, branch_c=None):
    """Per-table residual statistics (all tables, fit and held-out test).

    ``branch_c``: (c2, c3) of the supersaturated branch (default: the data file's values).
    """
    model = Model(info)
    p = pz.pack(*model.consts, coef)
    br = model.branch(p, model.br0 if branch_c is None else np.asarray(branch_c, dtype=float))
    rows = []
    for t in info["tables"]:
        r = table_residuals(t, p, lnk, model.solid_index, model.hyd, model.m_hi, br)
        good = ~np.isnan(r)
        ok = r[good]
        z = ok / _sigma_units(t)[good]
        rows.append(dict(
            table=t.index + 1, kind=t.kind, use=t.use, source=t.source, units=UNITS[t.kind] + ("|K" if t.sigma_temperature > 0.0 else ""),
            sigma=t.sigma, n=int(r.size), n_missing=int(np.isnan(r).sum()),
            rms=float(np.sqrt(np.mean(ok**2))) if ok.size else float("nan"),
            max_abs=float(np.max(np.abs(ok))) if ok.size else float("nan"),
            rms_sigma=float(np.sqrt(np.mean(z**2))) if z.size else float("nan"),
        ))
    return rows


def _fmt(x):
    return repr(float(x))


def fitted_section(info, coef, lnk, result, branch_c=None):
    """TOML text of the regenerated section (below the marker)."""
    lines = [datafile.FIT_MARKER, "[fitted]", 'by = "scripts/fit_salts.py"',
             f'wetcycle_version = "{__version__}"',
             'method = "scipy.optimize.least_squares (trf), residuals weighted by each table\'s sigma, weak priors"']
    if result is not None:
        lines.append(f"cost = {_fmt(result.cost)}")
        lines.append(f"n_residuals = {int(result.fun.size)}")
    lines.append("")
    lines.append("[fitted.pitzer]  # c0..c3 of p(T) = c0 + c1 (1/T - 1/Tr) + c2 ln(T/Tr) + c3 (T - Tr), Tr = 298.15 K")
    for k, name in enumerate(pz.PARAM_NAMES):
        if name == "beta2" and not np.any(coef[k]) and not info["fitmask"][k].any():
            continue
        lines.append(f"{name} = [{', '.join(_fmt(v) for v in coef[k])}]")
    lines.append("")
    lines.append("[fitted.lnK]  # same temperature form")
    for d, row in zip(info["solids"], lnk):
        lines.append(f'"{d["name"]}" = [{", ".join(_fmt(v) for v in row)}]')
    if info.get("supersaturated") is not None:
        c = info["supersaturated"]["c"] if branch_c is None else branch_c
        lines.append("")
        lines.append("[fitted.supersaturated]  # c2, c3 of the supersaturated branch (wetcycle.salts.metastable)")
        lines.append(f"c = [{', '.join(_fmt(v) for v in c)}]")
    for r in residual_report(info, coef, lnk, branch_c):
        lines.append("")
        lines.append("[[fitted.residual]]")
        src = r["source"].replace("\\", "\\\\").replace('"', '\\"')
        lines.append(f'table = {r["table"]}\nkind = "{r["kind"]}"\nuse = "{r["use"]}"\nsource = "{src}"')
        lines.append(f'units = "{r["units"]}"\nsigma = {_fmt(r["sigma"])}\nn = {r["n"]}\nn_missing = {r["n_missing"]}')
        lines.append(f'rms = {_fmt(r["rms"])}\nmax_abs = {_fmt(r["max_abs"])}\nrms_sigma = {_fmt(r["rms_sigma"])}')
    return "\n".join(lines) + "\n"


def write_fitted(path, text):
    """Replace everything below the marker line of ``path`` with ``text``."""
    path = Path(path)
    src = path.read_text(encoding="utf-8")
    head = src.split(datafile.FIT_MARKER)[0].rstrip("\n") + "\n\n"
    path.write_text(head + text, encoding="utf-8")


def fit_file(path, from_scratch=False, verbose=0, free=None):
    """Fit one data file; returns (text of the fitted section, residual report, result).

    ``free``: restrict the fit to these parameter groups (see :class:`Model`); an empty collection
    only recomputes the residuals of the stored coefficients.
    """
    info = datafile.read(path, use_fitted=not from_scratch)
    coef, lnk, result, model = fit_info(info, verbose=verbose, free=free)
    bc = getattr(model, "fitted_branch_c", None)
    return fitted_section(info, coef, lnk, result, bc), residual_report(info, coef, lnk, bc), result
