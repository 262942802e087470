"""Fit salt systems' temperature coefficients to the data tables in their files.

    python scripts/fit_salts.py NaCl CaCl2        # fit and rewrite those files' fitted sections
    python scripts/fit_salts.py --all             # every file in wetcycle/salts/data
    python scripts/fit_salts.py NaCl --dry-run    # print residuals, change nothing
    python scripts/fit_salts.py path/to/My.toml   # a file of one's own
    python scripts/fit_salts.py MgSO4 --free "MgSO4·6H2O"   # refit one part, hold the rest
    python scripts/fit_salts.py KCl --free                  # residuals of the stored coefficients only

The part of each file above the marker line is never touched.  Residuals are
printed per table in the table's own units (K, relative molality, RH, phi, a_w)
for both fitted tables and held-out test tables.
"""

import argparse
import sys
from pathlib import Path

from wetcycle.errors import WetcycleError
from wetcycle.salts import DATA_DIR, datafile, fit


def _path(arg):
    p = Path(arg)
    if p.suffix == ".toml" and p.exists():
        return p
    for f in DATA_DIR.glob("*.toml"):
        if datafile.read(f)["system"]["name"].lower() == arg.lower():
            return f
    raise WetcycleError(f"system: {arg!r} has no data file in {DATA_DIR}")


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("systems", nargs="*", help="system names or data-file paths")
    ap.add_argument("--all", action="store_true", help="fit every packaged system")
    ap.add_argument("--dry-run", action="store_true", help="print residuals only")
    ap.add_argument("--from-scratch", action="store_true", help="start from the hand-written values, not the last fit")
    ap.add_argument("-v", "--verbose", type=int, default=0, help="least_squares verbosity (0-2)")
    ap.add_argument("--free", nargs="*", default=None, metavar="GROUP",
                    help="refit only these groups (Pitzer parameter names, solid names, supersaturated), holding "
                         "the rest at their stored values; with no GROUP, only recompute residuals")
    a = ap.parse_args(argv)
    try:
        paths = sorted(DATA_DIR.glob("*.toml")) if a.all else [_path(s) for s in a.systems]
        if not paths:
            ap.error("name at least one system, or --all")
        for path in paths:
            text, report, result = fit.fit_file(path, from_scratch=a.from_scratch, verbose=a.verbose, free=a.free)
            status = "no free parameters" if result is None else f"cost {result.cost:.4g}, {result.nfev} evaluations"
            print(f"== {path.name}: {status}")
            for r in report:
                print(f"  #{r['table']:<2d} {r['kind']:<14s} {r['use']:<4s} n={r['n']:<3d} rms={r['rms']:.4g} "
                      f"max={r['max_abs']:.4g} [{r['units']}] sigma={r['sigma']:g} missing={r['n_missing']}  "
                      f"{r['source'][:60]}")
            if not a.dry_run:
                fit.write_fitted(path, text)
    except WetcycleError as exc:
        print(f"fit_salts: error: {exc}", file=sys.stderr)
        return 2
    return 0


if __name__ == "__main__":
    sys.exit(main())
