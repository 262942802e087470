"""Reading a long forcing CSV: time and peak memory of read_csv_forcing (pandas.read_csv inside).

    python scripts/bench_csv.py [ROWS]

Writes an invented series (seconds, temperature, vapour pressure) of ROWS rows (default 400,000)
to a temporary file and reads it onto a clock of the same span; prints wall time and the peak of
traced allocations (tracemalloc: NumPy and pandas buffers included).
"""

import sys
import tempfile
import time
import tracemalloc
from pathlib import Path

import numpy as np

from wetcycle.clock import make_clock
from wetcycle.forcing.files import read_csv_forcing


def main(rows=400_000):
    rng = np.random.default_rng(1)
    t = np.arange(rows) * 60.0
    T = 220.0 + 30.0 * np.sin(2 * np.pi * t / 86400.0) + rng.normal(0, 0.5, rows)
    e = 0.3 + 0.1 * rng.random(rows)
    with tempfile.TemporaryDirectory() as d:
        p = Path(d) / "long.csv"
        with open(p, "w") as fh:
            fh.write("# invented benchmark series\ntime_s,temperature_K,vapor_pressure_Pa\n")
            np.savetxt(fh, np.column_stack([t, T, e]), fmt=["%.0f", "%.3f", "%.5f"], delimiter=",")
        clock = make_clock("earth", steps_per_sol=24, n_sols=max(int(t[-1] // 86400) - 1, 1),
                           start_utc="2024-01-01T00:00:00Z")
        read_csv_forcing(p, clock)  # warm (imports)
        tracemalloc.start()
        t0 = time.perf_counter()
        read_csv_forcing(p, clock)
        wall = time.perf_counter() - t0
        peak = tracemalloc.get_traced_memory()[1]
        tracemalloc.stop()
        print(f"{rows:,} rows ({p.stat().st_size / 1e6:.1f} MB): {wall:.3f} s, peak traced memory {peak / 1e6:.0f} MB")


if __name__ == "__main__":
    main(int(sys.argv[1]) if len(sys.argv) > 1 else 400_000)
