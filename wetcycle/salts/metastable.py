"""Water activity of supersaturated (crystal-free, metastable) binary brines.

A brine that has lost its crystals can be concentrated far past saturation before it
crystallises (efflorescence): levitated and single particles reach two to three times the
saturation molality (electrodynamic-balance studies: Tang & Munkelwitz 1994, J. Geophys. Res.
99, 18801; Tang, Tridico & Fung 1997, J. Geophys. Res. 102, 23269; Raman micro-particles at
low temperature: Gough et al. 2011, Earth Planet. Sci. Lett. 312, 371).  The Pitzer fit of a
system (:mod:`wetcycle.salts.pitzer`) is valid up to its ``m_max``, near saturation; past it the
water activity is continued by a *supersaturated branch*:

    ln a_w(m, T) = L(T) + S x + c2 x^2 + c3 x^3,   x = m - m_max,   m_max < m <= m_ext,

where L(T) is the Pitzer ln a_w at (m_max, T), so the water activity is continuous at the join,
and S the Pitzer slope d ln a_w / dm at (m_max, T_ref), T_ref being the temperature of the
system's supersaturated data (or of its efflorescence measurements): the slope is continuous
there too.  The slope is taken at one temperature because the Pitzer temperature functions are
fitted to saturated and dilute brines and their slope at m_max can flatten unphysically far
from the fitted temperatures (Mg(ClO4)2 at 195 K: -0.04 kg/mol against -0.3 at 250 K).  c2 and c3 are fitted by the
project to published supersaturated water activities where a system has them (its data file's
``supersaturated`` tables), and are zero otherwise: then the branch is the straight continuation
of ln a_w in m from the join (for NaCl at 298 K this continuation lies within 0.008 in a_w of
the electrodynamic-balance polynomial of Tang et al. 1997 up to 14 mol/kg, which is why it is
the default where no supersaturated data exist).  Temperature enters only through L (the Pitzer temperature functions at the join); the
slope and curvature are taken as independent of temperature -- an assumption, stated in each
data file with the remaining uncertainty.

The branch vector packed for the kernels is ``(m_join, m_ext, c2, c3, T_ref, S)``; ``m_join`` is
the system's ``m_max`` and S is computed once by :func:`pack_branch`.  Between ``m_valid`` (the highest molality backed by published
supersaturated data; ``m_max`` where there are none) and ``m_ext`` the branch is an
extrapolation, and the phase kernel flags brine there.

Validity: ``T`` within A_phi's range (150-373.15 K, else NaN, as the Pitzer kernels), ``m`` up
to ``m_ext`` (else NaN).  Every function is a numba kernel of scalars.
"""

from __future__ import annotations

import math

import numpy as np
from numba import njit

from . import pitzer as pz

#: Layout of the packed branch vector.
B_JOIN, B_EXT, B_C2, B_C3, B_TREF, B_SLOPE = 0, 1, 2, 3, 4, 5
N_BRANCH = 6
#: Half-width of the central difference for the slope at the join [mol kg-1].
_H = 1e-4


def pack_branch(p, m_join, m_ext, c2=0.0, c3=0.0, T_ref=298.15):
    """The branch vector ``(m_join, m_ext, c2, c3, T_ref, S)`` (float64) for the kernels.

    ``p`` is the system's packed Pitzer vector; S = d ln a_w / dm at (m_join, T_ref).
    """
    if not (m_ext >= m_join > 0):
        raise ValueError(f"branch needs 0 < m_join <= m_ext, got {m_join!r}, {m_ext!r}")
    S = (pz.ln_aw_kernel(m_join + _H, T_ref, p) - pz.ln_aw_kernel(m_join - _H, T_ref, p)) / (2.0 * _H)
    return np.array([m_join, m_ext, c2, c3, T_ref, S], dtype=np.float64)


@njit(cache=True)
def ln_aw_full_kernel(m, T, p, br):
    """ln a_w [-] of a binary brine at molality m [mol kg-1], up to the branch's end m_ext.

    Pitzer (:func:`wetcycle.salts.pitzer.ln_aw_kernel`) up to the join, the supersaturated
    branch beyond it (module docstring); NaN above ``m_ext`` or outside A_phi's range.
    """
    mj = br[B_JOIN]
    if m <= mj:
        return pz.ln_aw_kernel(m, T, p)
    if m > br[B_EXT] * (1.0 + 1e-12):
        return math.nan
    x = m - mj
    return pz.ln_aw_kernel(mj, T, p) + x * (br[B_SLOPE] + x * (br[B_C2] + x * br[B_C3]))


@njit(cache=True)
def branch_slope_kernel(m, T, p, br):
    """d ln a_w / dm [kg mol-1] on the supersaturated branch (m > m_join); NaN outside it."""
    mj = br[B_JOIN]
    if not (m > mj and m <= br[B_EXT] * (1.0 + 1e-12)):
        return math.nan
    x = m - mj
    return br[B_SLOPE] + x * (2.0 * br[B_C2] + 3.0 * x * br[B_C3])


@njit(cache=True)
def molality_at_ln_aw_full_kernel(ln_aw, T, p, br):
    """Molality [mol kg-1] of the (possibly supersaturated) brine with ln a_w = ``ln_aw``.

    Inverse of :func:`ln_aw_full_kernel` on 0 <= m <= m_ext (monotonic there: checked by
    ``tests/test_salt_invariants.py``); NaN below a_w(m_ext, T).
    """
    if ln_aw >= 0.0:
        return 0.0
    mj = br[B_JOIN]
    lj = pz.ln_aw_kernel(mj, T, p)
    if lj != lj:
        return math.nan
    if ln_aw >= lj:
        return pz.molality_at_ln_aw_kernel(ln_aw, T, p, mj)
    a = mj
    b = br[B_EXT]
    if b <= a:
        return math.nan
    gb = ln_aw_full_kernel(b, T, p, br) - ln_aw
    if gb > 1e-12:
        return math.nan
    if gb >= 0.0:
        return b
    for _ in range(80):
        mid = 0.5 * (a + b)
        if ln_aw_full_kernel(mid, T, p, br) - ln_aw > 0.0:
            a = mid
        else:
            b = mid
        if b - a < 1e-12 * b:
            break
    return 0.5 * (a + b)
