"""Fit the mixed-brine mixing parameters to the published points in wetcycle/brines/data/mixing.toml.

    python scripts/fit_mixing.py            # fit, print residuals, rewrite the fitted section
    python scripts/fit_mixing.py --dry-run  # print residuals of the current file only

Residuals are printed for every table (fitted and held-out) with the fitted values, the recalled
25 °C starting values and the theta = psi = 0 baseline side by side.
"""

import argparse
import sys

from wetcycle.brines import chemistry as ch
from wetcycle.brines import fit


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("--dry-run", action="store_true", help="print residuals only")
    ap.add_argument("-v", "--verbose", type=int, default=0)
    a = ap.parse_args(argv)
    base = ch.mixing_file(use_fitted=False)
    if a.dry_run:
        params = fit.free_parameters(ch.mixing_file(use_fitted=True))
        x, res = [p[3] for p in params], None
    else:
        params, x, res = fit.fit(verbose=a.verbose)
    fitted = fit.with_values(base, params, x)
    rows = fit.report({"fitted": fitted, "start": "start", "baseline": "none"})
    for (g, key, start, _), v in zip(params, x):
        print(f"  {g:5s} {'-'.join(key) if isinstance(key, tuple) else key:24s} start {start:+.5f} -> {v:+.5f}")
    for r in rows:
        f = ", ".join(f"{v:+.4g}" for v in r["fitted"])
        s = ", ".join(f"{v:+.4g}" for v in r["start"])
        b = ", ".join(f"{v:+.4g}" for v in r["baseline"])
        print(f"  #{r['table']:<2d} {r['kind']:<21s} {r['use']:<4s}{' (extrap.)' if r['extrapolated'] else '':10s} "
              f"[{r['units']}] sigma {r['sigma']:g}: fitted {f} | start {s} | baseline {b}   {r['source'][:50]}")
    if not a.dry_run:
        fit.write_fitted(fit.fitted_section(params, x, res, rows))
        print(f"fitted section written to {ch.MIXING_PATH}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
