"""Lookup tables built once per salt system for use inside numba kernels.

The inverse of the water activity (molality of the brine whose a_w is given)
needs a root solve per call; inside the time-stepping kernel that is too slow,
so it is tabulated once per system on a regular grid of temperature and of
s = sqrt(-ln a_w) (near-linear in sqrt(m) for dilute brines, so a uniform grid
resolves both ends) and read back by cubic (Catmull-Rom) interpolation along s and linear
interpolation in T.  Interpolation
error is checked against the exact root in ``tests/test_salt_tables.py``.

Outside the tabulated range (T outside the system's validity, or a_w below
a_w(m_max, T)) the lookup returns NaN: the documented flag.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from numba import njit

from . import pitzer as pz


@dataclass(frozen=True)
class InverseTable:
    """m(T, s) on a regular grid, s = sqrt(-ln a_w).  Pass ``.args`` to :func:`molality_from_table`."""

    T0: float
    dT: float
    s_max: float
    ds: float
    m: np.ndarray  # [nT, nS], NaN beyond a_w(m_max, T)

    @property
    def args(self):
        return (self.T0, self.dT, self.ds, self.m)


@njit(cache=True)
def _fill(T0, dT, nT, ds, nS, p, m_hi, out):
    for i in range(nT):
        T = T0 + i * dT
        for j in range(nS):
            s = j * ds
            out[i, j] = pz.molality_at_ln_aw_kernel(-s * s, T, p, m_hi) if j > 0 else 0.0
    return out


def build_inverse_table(system, dT=0.5, n_s=1024):
    """Tabulate m(T, a_w) for ``system`` over its validity range.

    Parameters
    ----------
    system : SaltSystem
    dT : float [K]
        Temperature spacing.
    n_s : int
        Points along s = sqrt(-ln a_w) from 0 to sqrt(-ln a_w(m_max)) at its most negative.
    """
    nT = int(math.ceil((system.T_max - system.T_min) / dT)) + 1
    Ts = system.T_min + dT * np.arange(nT)
    Ts[-1] = min(Ts[-1], pz.APHI_T_MAX)
    lnaw_min = min(pz.ln_aw_kernel(system.m_max, float(T), system.packed) for T in Ts)
    s_max = math.sqrt(-lnaw_min) * 1.0000001
    ds = s_max / (n_s - 1)
    m = _fill(float(system.T_min), float(dT), nT, ds, n_s, system.packed, system.m_max, np.empty((nT, n_s)))
    return InverseTable(T0=float(system.T_min), dT=float(dT), s_max=s_max, ds=ds, m=m)


@njit(cache=True, inline="always")
def _row(m, i, j, fy, nS):
    """Catmull-Rom cubic along s in row i between j and j+1 (linear at the ends or next to NaN)."""
    p1 = m[i, j]
    p2 = m[i, j + 1]
    if j >= 1 and j + 2 < nS:
        p0 = m[i, j - 1]
        p3 = m[i, j + 2]
        if p3 == p3:
            return p1 + 0.5 * fy * (p2 - p0 + fy * (2.0 * p0 - 5.0 * p1 + 4.0 * p2 - p3
                                                     + fy * (3.0 * (p1 - p2) + p3 - p0)))
    return p1 + fy * (p2 - p1)


@njit(cache=True)
def molality_from_table(aw, T, T0, dT, ds, m):
    """Molality [mol/kg] of the brine with water activity ``aw`` at ``T`` [K], by table lookup.

    Cubic (Catmull-Rom) along s = sqrt(-ln a_w), linear in T.  NaN outside the
    table (the flag): T beyond the system's validity, aw <= 0, or aw below
    a_w(m_max, T).
    """
    if not (aw > 0.0):
        return math.nan
    if aw >= 1.0:
        return 0.0
    x = (T - T0) / dT
    nT, nS = m.shape
    if not (x >= 0.0 and x <= nT - 1):
        return math.nan
    i = min(int(x), nT - 2)
    fx = x - i
    y = math.sqrt(-math.log(aw)) / ds
    if y > nS - 1:
        return math.nan
    j = min(int(y), nS - 2)
    fy = y - j
    a = _row(m, i, j, fy, nS)
    b = _row(m, i + 1, j, fy, nS)
    return a + fx * (b - a)


@njit(cache=True, fastmath=True)
def molality_from_table_array(aw, T, T0, dT, ds, m, out):
    """Vector form of :func:`molality_from_table` over 1-D arrays."""
    for k in range(aw.shape[0]):
        out[k] = molality_from_table(aw[k], T[k], T0, dT, ds, m)
    return out
