"""Benchmark: water-activity evaluations and its inverse, per second per core.

    python scripts/bench_salts.py [SYSTEM ...] [--n 2000000]

Prints, for each system, evaluations per second of a_w(m, T) (Pitzer, numba,
one thread) and of the inverse m(a_w, T) by table lookup, and their ratio.
Targets (issue 2): a_w >= 3e7 per second per core; inverse within 3x of that.
"""

import argparse
import time

import numpy as np

from wetcycle import salts
from wetcycle.salts import pitzer as pz
from wetcycle.salts import tables


def _best(fn, repeat=5):
    best = float("inf")
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn()
        best = min(best, time.perf_counter() - t0)
    return best


def main():
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("systems", nargs="*", default=None)
    ap.add_argument("--n", type=int, default=2_000_000, help="evaluations per timing")
    a = ap.parse_args()
    import numba
    numba.set_num_threads(1)
    names = a.systems or salts.names()
    rng = np.random.default_rng(0)
    print(f"{'system':<12s} {'a_w [1/s]':>12s} {'inverse [1/s]':>14s} {'ratio':>6s}  {'max |Δa_w| of inverse':>22s}")
    for name in names:
        s = salts.load(name)
        tab = tables.build_inverse_table(s)
        m = rng.uniform(0.0, s.m_max, a.n)
        T = rng.uniform(s.T_min, s.T_max, a.n)
        aw = np.empty(a.n)
        pz.aw_array(m[:10], T[:10], s.packed, aw[:10])  # compile
        t_aw = _best(lambda: pz.aw_array(m, T, s.packed, aw))
        out = np.empty(a.n)
        tables.molality_from_table_array(aw[:10], T[:10], *tab.args, out[:10])
        t_inv = _best(lambda: tables.molality_from_table_array(aw, T, *tab.args, out))
        aw2 = np.empty(a.n)
        ok = ~np.isnan(out)
        pz.aw_array(out[ok], T[ok], s.packed, aw2[: ok.sum()])
        err = np.max(np.abs(aw2[: ok.sum()] - aw[ok]))
        r_aw, r_inv = a.n / t_aw, a.n / t_inv
        print(f"{s.name:<12s} {r_aw:12.3e} {r_inv:14.3e} {r_aw / r_inv:6.2f}  {err:22.2e}")
    print("targets: a_w >= 3.0e+07 /s per core; inverse slower than a_w by at most 3x (ratio <= 3)")


if __name__ == "__main__":
    main()
