"""Fit the ln K(T) of nahcolite and natron to the solubilities stored in wetcycle/brines/data/carbonate.toml.

    python scripts/fit_carbonate.py

For each [[solubility]] row marked use = "fit", ln IAP of the saturated solution is computed with the
model's own speciation and activities (closed system, solids excluded), and ln K = c0 + c1 (1/T - 1/T_ref)
is fitted to them by linear least squares.  Prints the coefficients to paste into the [[solid]] entries,
and the residuals (model solubility / datum - 1) of every row, fitted and held out, with the stored
coefficients.
"""

import math

import numpy as np

from wetcycle.brines import carbonate as co
from wetcycle.brines import chemistry as ch
from wetcycle.brines import paths
from wetcycle.brines.equilibrium import equilibrate
from wetcycle.salts.pitzer import T_REF


def rows():
    import tomllib
    return tomllib.loads(co.PATH.read_text(encoding="utf-8"))["solubility"]


def ln_iap(solid, m_salt, T):
    """ln IAP of ``solid`` in its own saturated solution of m_salt mol of salt per kg water."""
    comp = {i: nu * m_salt for i, nu in solid.stoich}
    chem = paths._load_chem(comp, "fitted", None)
    b, W = paths._initial(chem, comp)
    r = equilibrate(chem, b, W, T, exclude=chem.solid_names)
    mu = np.log(r.molality) + r.ln_gamma
    return sum(nu * mu[chem.index(i)] for i, nu in solid.stoich) + solid.hydration * r.ln_aw


def solubility(solid_name, T):
    """Model solubility [mol salt per kg water] of a carbonate solid at T (closed system)."""
    chem0 = ch.load(("Na", "HCO3", "CO3"))
    s = chem0.solid(solid_name)
    lo, hi = 0.01, 8.0
    for _ in range(60):
        mid = math.sqrt(lo * hi)
        comp = {i: nu * mid for i, nu in s.stoich}
        chem = paths._load_chem(comp, "fitted", None)
        b, W = paths._initial(chem, comp)
        r = equilibrate(chem, b, W, T)
        x = dict(zip(r.solids, r.solid_moles))
        if any(v > 0 for v in x.values()):
            hi = mid
        else:
            lo = mid
    return math.sqrt(lo * hi)


def main():
    chem0 = ch.load(("Na", "HCO3", "CO3"))
    data = rows()
    for name in sorted({r["solid"] for r in data}):
        s = chem0.solid(name)
        use = [r for r in data if r["solid"] == name and r["use"] == "fit"]
        T = np.array([r["T_K"] for r in use])
        y = np.array([ln_iap(s, r["molality"], r["T_K"]) for r in use])
        X = np.column_stack([np.ones_like(T), 1.0 / T - 1.0 / T_REF])
        c, *_ = np.linalg.lstsq(X, y, rcond=None)
        log10 = [c[0] / co.LN10, c[1] / co.LN10]
        print(f"{name} ({s.mineral}): ln K = {c[0]:.5f} + {c[1]:.2f} (1/T - 1/T_ref); as log10K PB form "
              f"a = {log10[0] - log10[1] / T_REF:.6f}, c = {log10[1]:.3f}")
    print("residuals with the stored coefficients (model solubility / datum - 1):")
    for r in data:
        m = solubility(r["solid"], r["T_K"])
        print(f"  {r['solid']:16s} {r['T_K']:.2f} K {r['use']:5s} datum {r['molality']:.4f}  model {m:.4f}  "
              f"{100 * (m / r['molality'] - 1):+.1f} %   {r['source'][:60]}")


if __name__ == "__main__":
    main()
