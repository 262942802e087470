"""Stable phase assemblage of a closed salt-water system: Gibbs-energy minimisation with an active set.

Method
------
At fixed temperature and pressure the stable state minimises the Gibbs energy (common
practice; e.g. Harvie, Greenberg & Weare 1987, Geochim. Cosmochim. Acta 51, 1045, who
minimise it for the same Pitzer model).  With x_s >= 0 the moles of each solid s
(ice is the solid H2O with ln K = ln a_w,ice; Murphy & Koop 2005), the liquid holds
n_i = b_i - sum_s A_is x_s moles of ion i and n_w = W - sum_s h_s x_s moles of water,
and, up to a constant,

    G / RT = sum_i n_i ln(m_i gamma_i) + n_w ln a_w + sum_s x_s ln K_s ,

whose gradient is dG/dx_s = -SI_s with the saturation index SI_s = ln IAP_s - ln K_s.
The minimum satisfies x_s SI_s = 0, SI_s <= 0 (each solid present is saturated, every
other undersaturated).  G is convex in x wherever the Pitzer liquid is stable, so the
minimum is unique and reached from any feasible start.  The solver is a projected
Newton method on the set of solids present (the active set): the Hessian is
[A; h]^T H_liq [A; h], with H_liq the ideal part in closed form plus the excess part
from ln gamma by central differences; a step that empties a solid removes it, the most
supersaturated absent solid is added once the present ones are nearly saturated, steps
keep every liquid amount positive (fraction to the boundary) and decrease G (Armijo).
Directions along which G is linear (the liquid's amount at fixed composition when the
solids fix it, or a reaction among solids alone) are followed to the boundary they
reach.  When the liquid vanishes the solid-only minimum is a linear programme
(min sum_s x_s ln K_s subject to A x = b, h.x = W, x >= 0; ``scipy.optimize.linprog``).

Validity: that of :class:`~wetcycle.brines.chemistry.Chemistry`; this module does not
check temperatures against the binaries' ranges (the path functions do).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
from numba import njit

from ..errors import ValidityError
from ..salts.pitzer import MW
from . import carbonate as co
from .pitzer import activity_full


@njit(cache=True)
def _state(x, b, W, A, h, lnK, T, z, nc, alpha, beta, thc, tha, psc, psa, J, DJ, meta, nn, lam, want_h, lng, H):
    """(G, SI, feasible) at x; fills lng and, if want_h, the Hessian H (S, S)."""
    n = b.shape[0]
    S = x.shape[0]
    nion = b - A @ x
    nw = W - h @ x
    SI = np.empty(S)
    if nw <= 0.0:
        return math.inf, SI, False
    for i in range(n):
        if not (nion[i] > 0.0):
            return math.inf, SI, False
    m = nion / (nw * MW)
    lnaw, phi, ionic = activity_full(m, T, z, nc, alpha, beta, thc, tha, psc, psa, J, DJ, meta, nn, lam, lng)
    if lnaw != lnaw:
        return math.inf, SI, False
    mu = np.log(m) + lng
    G = 0.0
    for i in range(n):
        G += nion[i] * mu[i]
    G += nw * lnaw
    for s in range(S):
        G += x[s] * lnK[s]
        v = h[s] * lnaw - lnK[s]
        for i in range(n):
            v += A[i, s] * mu[i]
        SI[s] = v
    if want_h:
        # excess part: Gam[i, j] = d ln gamma_i / d m_j by central differences, symmetrised
        Gam = np.empty((n, n))
        mp = m.copy()
        lp = np.empty(n)
        lm = np.empty(n)
        for j in range(n):
            dm = 1e-6 * m[j] + 1e-10
            mp[j] = m[j] + dm
            activity_full(mp, T, z, nc, alpha, beta, thc, tha, psc, psa, J, DJ, meta, nn, lam, lp)
            mp[j] = m[j] - dm if m[j] > dm else m[j]
            lo = mp[j]
            activity_full(mp, T, z, nc, alpha, beta, thc, tha, psc, psa, J, DJ, meta, nn, lam, lm)
            mp[j] = m[j]
            for i in range(n):
                Gam[i, j] = (lp[i] - lm[i]) / (m[j] + dm - lo)
        for i in range(n):
            for j in range(i + 1, n):
                g = 0.5 * (Gam[i, j] + Gam[j, i])
                Gam[i, j] = g
                Gam[j, i] = g
        Hl = np.empty((n + 1, n + 1))
        inv = 1.0 / (nw * MW)
        ww = 0.0
        for i in range(n):
            sw = 0.0
            for j in range(n):
                Hl[i, j] = Gam[i, j] * inv
                sw += m[j] * Gam[i, j]
                ww += m[i] * m[j] * Gam[i, j]
            Hl[i, i] += 1.0 / nion[i]
            Hl[i, n] = -1.0 / nw - sw / nw
            Hl[n, i] = Hl[i, n]
        Hl[n, n] = nion.sum() / (nw * nw) + MW * ww / nw
        E = np.empty((n + 1, S))
        for s in range(S):
            for i in range(n):
                E[i, s] = A[i, s]
            E[n, s] = h[s]
        Hx = E.T @ (Hl @ E)
        for r in range(S):
            for c in range(S):
                H[r, c] = Hx[r, c]
    return G, SI, True


@dataclass
class Equilibrium:
    """One equilibrium state.  Amounts in mol (per the caller's basis, e.g. per kg of initial water)."""

    temperature: float
    solids: tuple                 # names of the solids considered (order of the arrays below)
    solid_moles: np.ndarray       # mol of each considered solid
    saturation_index: np.ndarray  # ln(IAP/K) of each considered solid (NaN without liquid)
    ion_moles: np.ndarray         # mol of each ion in the liquid
    liquid_water_mol: float
    molality: np.ndarray          # mol/kg of each ion in the liquid (NaN without liquid)
    ln_gamma: np.ndarray
    ln_aw: float
    phi: float
    ionic_strength: float
    liquid: bool
    converged: bool
    iterations: int
    message: str = ""
    not_considered: tuple = field(default=())
    co2_from_gas: float = 0.0     # mol of CO2 taken up from the gas (open system; negative: degassed)
    ph: float = math.nan          # -log10(m_H gamma_H), Pitzer scale (NaN without the carbonate system)

    def present(self, tiny=0.0):
        """Names of the solids present (moles above ``tiny``)."""
        return tuple(n for n, x in zip(self.solids, self.solid_moles) if x > tiny)

    @property
    def water_activity(self):
        return math.exp(self.ln_aw) if self.liquid else math.nan


def considered_solids(chem, T, exclude=(), include_double_outside=False):
    """Indices of the solids of ``chem`` that take part at T, and names of those left out with the reason.

    Ice only at or below 273.16 K; double salts only inside their ln K validity range;
    ``exclude`` (names or mineral names) leaves solids out on request (metastable assemblages).
    """
    keep, left = [], []
    excl = set(exclude)
    known = set(chem.solid_names) | {s.mineral for s in chem.solids if s.mineral}
    bad = [e for e in excl if e not in known]
    if bad:
        raise ValidityError(f"exclude: {bad[0]!r} is not a solid of ions {', '.join(chem.ions)}; "
                            f"solids: {', '.join(chem.solid_names)}")
    for k, s in enumerate(chem.solids):
        if s.name in excl or (s.mineral and s.mineral in excl):
            continue
        if s.origin == "ice":
            if T <= 273.16:
                keep.append(k)
            continue
        below_ok = s.keep_below and T < s.T_min
        if (s.origin == "double salt" or s.narrow) and not include_double_outside and not below_ok \
                and not (s.T_min <= T <= s.T_max):
            left.append(s.name)
            continue
        keep.append(k)
    return np.array(keep, dtype=np.int64), tuple(left)


def _lp_solids(A, h, lnK, b, W, bounds=(0, None)):
    """Solid-only minimum: min lnK.x, A x = b, h.x = W, x >= 0 (reaction extents free).  None if infeasible."""
    from scipy.optimize import linprog
    Aeq = np.vstack([A, h[None, :]])
    beq = np.concatenate([b, [W]])
    scale = np.maximum(np.abs(beq), 1e-300)
    res = linprog(lnK, A_eq=Aeq / scale[:, None], b_eq=beq / scale, bounds=bounds, method="highs")
    if res.status != 0:
        return None
    x = res.x.copy()
    if not isinstance(bounds, list):
        x = np.maximum(x, 0.0)
    else:
        for k, (lo, _) in enumerate(bounds):
            if lo is not None:
                x[k] = max(x[k], 0.0)
    return x


def equilibrate(chem, b, W, T, *, exclude=(), start=None, tol=1e-9, max_iter=400, co2_pressure_Pa=None):
    """Stable assemblage of ``b`` mol of each ion (order ``chem.ions``) and ``W`` mol of water at T [K].

    Parameters
    ----------
    chem : :class:`~wetcycle.brines.chemistry.Chemistry`
    b : array (n,) [mol], every entry > 0 and charge-neutral (with the carbonate system, see
        :func:`wetcycle.brines.carbonate.seed` for giving H, OH, CO2, HCO3, CO3 positive amounts)
    W : float [mol] > 0
    T : float [K]
    exclude : names or minerals of solids to leave out (metastable equilibrium on request)
    start : dict {solid name: mol} to start from (e.g. the previous step of a path), or None
    tol : float; |SI| below which a present solid counts as saturated [-]
    co2_pressure_Pa : float [Pa] or None; a fixed CO2 pressure (open system: CO2 exchanges with an
        unlimited gas); None: closed system.  Needs a chemistry with the carbonate system.

    Returns
    -------
    :class:`Equilibrium`; ``converged`` False (with ``message``) when the iteration limit is reached.

    With the carbonate system the homogeneous equilibria (and the gas) are extra columns whose
    extents have no sign constraint; after each accepted step their extents are folded into the
    liquid's amounts (b, W), so small amounts such as H+ are carried directly, not as differences.
    """
    b = np.array(b, dtype=float)
    if b.shape != (chem.n,) or not np.all(b > 0) or not W > 0:
        raise ValidityError(f"composition: every ion amount and the water must be positive, got {b.tolist()}, {W}")
    if co2_pressure_Pa is not None and not chem.carbon:
        raise ValidityError("co2_pressure_Pa: needs the carbonate system (a chemistry with HCO3, CO3 or CO2)")
    cols, left = considered_solids(chem, T, exclude)
    A_all, h_all = chem.stoichiometry
    A = np.ascontiguousarray(A_all[:, cols])
    h = np.ascontiguousarray(h_all[cols])
    lnK = np.ascontiguousarray(chem.ln_k(T)[cols])
    names = tuple(chem.solid_names[k] for k in cols)
    Ssol = len(cols)
    gas_col = -1
    if chem.carbon:
        Af, hf, lnKf, fnames = co.reaction_columns(chem, T, co2_pressure_Pa)
        if co2_pressure_Pa is not None:
            gas_col = Ssol + len(fnames) - 1
        A = np.ascontiguousarray(np.hstack([A, Af]))
        h = np.concatenate([h, hf])
        lnK = np.concatenate([lnK, lnKf])
    S = A.shape[1]
    free = list(range(Ssol, S))
    args = chem.at(T)
    nn, lam = chem.neutral_args
    if lam is None:
        lam = np.zeros((0, chem.n))
    lng = np.empty(chem.n)
    H = np.empty((S, S))
    cur = dict(b=b, W=float(W), gas=0.0)

    def state(x, want_h=False):
        return _state(x, cur["b"], cur["W"], A, h, lnK, args[0], *args[1:], nn, lam, want_h, lng, H)

    def fold(x):
        # fold the extents of the unconstrained reactions into the liquid's amounts
        if free:
            y = x[Ssol:].copy()
            cur["b"] = cur["b"] - A[:, Ssol:] @ y
            cur["W"] = cur["W"] - h[Ssol:] @ y
            if gas_col >= 0:
                cur["gas"] += y[gas_col - Ssol]
            x[Ssol:] = 0.0

    x = np.zeros(S)
    if start:
        for k, nm in enumerate(names):
            x[k] = max(float(start.get(nm, 0.0)), 0.0)
        # pull the start back toward x = 0 (always feasible) until the liquid keeps every amount positive
        for _ in range(60):
            if state(x)[2] and (W - h @ x) > 1e-6 * W and np.all(b - A @ x > 1e-9 * b):
                break
            x *= 0.5
        else:
            x[:] = 0.0
    active = set(np.flatnonzero(x[:Ssol] > 0).tolist()) | set(free)
    it = 0
    converged = False
    liquid = True
    message = ""
    while it < max_iter:
        it += 1
        G, SI, ok = state(x, True)
        if not ok:
            message = "liquid state became infeasible"
            break
        out = [k for k in range(Ssol) if k not in active]
        inner = max((abs(SI[k]) for k in active), default=0.0)
        best = max(out, key=lambda k: SI[k]) if out else -1
        smax = SI[best] if out else -math.inf
        if (inner < tol and smax <= tol) or (it > 30 and inner < 1e3 * tol and smax <= 1e3 * tol):
            # the looser test: amounts of a nearly exhausted ion are differences of nearly equal
            # numbers, which caps the attainable precision of SI near 1e-8 (round-off, not physics)
            converged = True
            break
        if smax > tol and (inner < 1e-2 or not active):
            active.add(best)
        P = sorted(active)
        if not P:
            message = "no solid to add yet unconverged"
            break
        bb, WW = cur["b"], cur["W"]
        nion = bb - A @ x
        nw = WW - h @ x
        null_move = False
        while True:
            HP = H[np.ix_(P, P)]
            gP = SI[P]
            # with the carbonate system the Hessian spans many decades (1/m_H against 1/m_Cl):
            # Jacobi scaling keeps its null-space test meaningful (without it, unchanged)
            if free:
                dg = np.diag(HP)
                sc = 1.0 / np.sqrt(np.where(dg > 0, dg, 1.0))
            else:
                sc = np.ones(len(P))
            w, V = np.linalg.eigh(HP * np.outer(sc, sc))
            gs = gP * sc
            wmax = max(w.max(), 1e-300)
            # a reaction among the carbonate species alone can be ~1e-10 of the scaled diagonal
            # (it cancels H+, whose 1/m_H dominates) yet is never null: a tighter threshold then
            null = w < (1e-13 if free else 1e-9) * wmax
            if null.any():
                gn = V[:, null].T @ gs
                if np.linalg.norm(gn) > 1e-10 * (1.0 + np.linalg.norm(gs)):
                    null_move = True
                    d = sc * (V[:, null] @ gn)
                    break
            keep = ~null
            d = sc * (V[:, keep] @ ((V[:, keep].T @ gs) / w[keep]))
            # a solid at zero that the step would make negative leaves the set before the step
            blocked = [k for j, k in enumerate(P) if k < Ssol and x[k] <= 0.0 and d[j] < 0.0]
            if not blocked:
                break
            for k in blocked:
                active.discard(k)
            P = sorted(active)
            if not P:
                break
        if not P:
            continue
        if null_move:
            # G is linear along d: go to the boundary it reaches
            amax = math.inf
            hit = None
            for j, k in enumerate(P):
                if k < Ssol and d[j] < 0:
                    a = -x[k] / d[j]
                    if a < amax:
                        amax, hit = a, k
            dion = A[:, P] @ d
            dw = h[P] @ d
            liq_a = math.inf
            for i in range(chem.n):
                if dion[i] > 0:
                    liq_a = min(liq_a, nion[i] / dion[i])
            if dw > 0:
                liq_a = min(liq_a, nw / dw)
            if liq_a <= amax:
                liquid = False
                break
            x[P] += amax * d
            x[hit] = 0.0
            active.discard(hit)
            x[:Ssol][x[:Ssol] < 0] = 0.0
            fold(x)
            continue
        # ratio test: solids stay >= 0
        amax, hit = 1.0, None
        for j, k in enumerate(P):
            if k < Ssol and d[j] < 0 and x[k] + d[j] < 0:
                a = -x[k] / d[j]
                if a < amax:
                    amax, hit = a, k
        # fraction to the boundary: each liquid amount keeps at least 10 % of itself
        dion = A[:, P] @ d
        dw = h[P] @ d
        alim = 1.0
        for i in range(chem.n):
            if dion[i] > 0:
                alim = min(alim, 0.9 * nion[i] / dion[i])
        if dw > 0:
            alim = min(alim, 0.9 * nw / dw)
        alpha = min(amax, alim)
        if alim < amax:
            hit = None
        slope = -(gP @ d)
        for _ in range(50):
            xt = x.copy()
            xt[P] += alpha * d
            if hit is not None and alpha == amax:
                xt[hit] = 0.0
            xt[:Ssol][xt[:Ssol] < 0] = 0.0
            Gt, _, okt = state(xt)
            if okt and Gt <= G + 1e-4 * alpha * slope + 1e-12 * abs(G):
                break
            alpha *= 0.5
            hit = None
        else:
            message = "line search failed"
            break
        x = xt
        fold(x)
        if hit is not None:
            active.discard(hit)
        bb, WW = cur["b"], cur["W"]
        if (WW - h @ x) < 1e-10 * WW or np.any(bb - A @ x < 1e-14 * bb):
            liquid = False
            break
    bb, WW = cur["b"], cur["W"]
    if not liquid:
        bounds = [(0, None)] * Ssol + [(None, None)] * (S - Ssol)
        xs = _lp_solids(A, h, lnK, bb, WW, bounds)
        if xs is None:
            return _result(chem, T, names, x, bb, WW, A, h, lnK, args, False, it,
                           "the liquid vanishes but no solid assemblage holds this water and these ions "
                           "(dehydration beyond the model's solids)", left, liquid=False, solid_only=True,
                           Ssol=Ssol)
        return _result(chem, T, names, xs, bb, WW, A, h, lnK, args, True, it, "", left, liquid=False,
                       solid_only=True, Ssol=Ssol, gas=cur["gas"] + (xs[gas_col] if gas_col >= 0 else 0.0))
    if not converged and not message:
        message = f"no convergence in {max_iter} iterations"
    return _result(chem, T, names, x, bb, WW, A, h, lnK, args, converged, it, message, left, Ssol=Ssol,
                   gas=cur["gas"])


def _result(chem, T, names, x, b, W, A, h, lnK, args, converged, it, message, left, liquid=True, solid_only=False,
            Ssol=None, gas=0.0):
    n = chem.n
    Ssol = len(names) if Ssol is None else Ssol
    if solid_only:
        nan = np.full(n, np.nan)
        return Equilibrium(T, names, x[:Ssol], np.full(len(names), np.nan), np.zeros(n), 0.0, nan, nan.copy(),
                           math.nan, math.nan, math.nan, False, converged, it, message, left, co2_from_gas=gas)
    nion = b - A @ x
    nw = W - h @ x
    m = nion / (nw * MW)
    lng = np.empty(n)
    nn, lam = chem.neutral_args
    if lam is None:
        lam = np.zeros((0, n))
    lnaw, phi, ionic = activity_full(m, args[0], *args[1:], nn, lam, lng)
    mu = np.log(m) + lng
    SI = A.T @ mu + h * lnaw - lnK
    return Equilibrium(T, names, x[:Ssol].copy(), SI[:Ssol], nion, nw, m, lng, lnaw, phi, ionic, True, converged, it,
                       message, left, co2_from_gas=gas, ph=co.ph(chem, m, lng))
