"""Progress shown to a person: what is happening before the first step, and honest estimates.

A first run spends tens of seconds compiling numba kernels and spinning the energy balance up
before the first step; :func:`stage` says so on one line.  :func:`bar` is a tqdm progress bar that
shows no remaining-time estimate until a twentieth of the work and ten seconds have passed since its
first update (an estimate from the first steps, which include compilation, read eight hours for a
minute's run; tqdm's smoothed rate forgets that first interval within a few updates).
"""

from __future__ import annotations

import sys
import time

ESTIMATE_AFTER_FRACTION = 0.05
ESTIMATE_AFTER_S = 10.0
_NO_ESTIMATE = "{desc}: {percentage:3.0f}%|{bar}| {n_fmt}/{total_fmt} [{elapsed}, estimating{postfix}]"


def stage(text):
    """One line on stderr naming what the program is doing now."""
    print(f"wetcycle: {text}", file=sys.stderr, flush=True)


def bar(total, unit, desc):
    """A tqdm bar whose remaining-time estimate appears only once it means something."""
    from tqdm import tqdm

    class _Bar(tqdm):
        def __init__(self, *a, **k):
            super().__init__(*a, **k)
            self._t0 = time.monotonic()
            self._estimating = True
            self._first = None
            self.bar_format = _NO_ESTIMATE

        def update(self, n=1):
            out = super().update(n)
            if self._first is None:  # the first update carries the compile and set-up time:
                self._first = (self.n, time.monotonic())  # count the estimate's window from here
                return out
            n0, t0 = self._first
            if self._estimating and self.total and self.n - n0 >= ESTIMATE_AFTER_FRACTION * self.total \
                    and time.monotonic() - t0 >= ESTIMATE_AFTER_S:
                self._estimating = False
                self.bar_format = None
                self.refresh()
            return out

    return _Bar(total=total, unit=unit, desc=desc, leave=False, file=sys.stderr)
