"""Tabulate Pitzer's J(x) integral once, by quadrature, into wetcycle/brines/data/jtable.npz.

    python scripts/make_jtable.py

See wetcycle/brines/efunc.py for the method; tests/test_brines_pitzer.py re-checks points.
"""

import numpy as np

from wetcycle.brines import efunc


def main():
    J, DJ = efunc.build_table()
    np.savez_compressed(efunc.TABLE_PATH, J=J, DJ=DJ, u_min=efunc.U_MIN, u_step=efunc.U_STEP)
    print(f"wrote {efunc.TABLE_PATH} ({J.size} points, x = 1e-8 .. 1e4)")


if __name__ == "__main__":
    main()
