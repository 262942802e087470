"""Higher-order electrostatic mixing terms E-theta and E-theta' of the Pitzer equations.

Method
------
Pitzer, K. S. (1975), "Thermodynamics of electrolytes. V. Effects of higher-order
electrostatic terms", J. Solution Chem. 4, 249-265, doi:10.1007/BF00646562, eqs.
(A1)-(A3); the same in Pitzer (1991) *Activity Coefficients in Electrolyte Solutions*,
2nd ed., ch. 3, appendix B; used in this form by Harvie, Møller & Weare (1984),
Geochim. Cosmochim. Acta 48, 723, eqs. (A13)-(A16).

For two ions i, j of like sign and unequal charge, at ionic strength I [mol kg-1],

    x_ij        = 6 z_i z_j A_phi sqrt(I)
    E-theta_ij  = z_i z_j / (4 I) [J(x_ij) - J(x_ii)/2 - J(x_jj)/2]
    E-theta'_ij = -E-theta_ij / I + z_i z_j / (8 I^2) [x_ij J'(x_ij) - x_ii J'(x_ii)/2 - x_jj J'(x_jj)/2]

with Pitzer's defining integral

    J(x) = x/4 - 1 + (1/x) int_0^inf [1 - exp(-(x/y) e^-y)] y^2 dy .

This module evaluates that integral by adaptive quadrature (``scipy.integrate.quad``),
written without the cancellation of its two leading terms:
``J = x/4 + (1/x) int f(q) y^2 dy`` with q = (x/y) e^-y and f(q) = 1 - e^-q - q, and
likewise J'(x).  The values are tabulated once (``scripts/make_jtable.py`` writes
``data/jtable.npz``: J and x J'(x) on a uniform grid in ln x, 1e-8 <= x <= 1e4) and
interpolated inside the numba kernels by cubic Hermite interpolation in ln x (relative
error below 3e-9 over the table, below 1e-10 for x > 0.1; ``tests/test_brines_pitzer.py`` recomputes points
by quadrature).  No approximation formula's coefficients are used.

Below the table (x < 1e-8, I below ~1e-17 mol/kg) J is continued as J(x_min) (x/x_min)^2
(its leading order up to a log factor; the terms it feeds vanish there); above it
(x > 1e4, far beyond any brine) the kernels return NaN.
"""

from __future__ import annotations

import math
from functools import lru_cache
from pathlib import Path

import numpy as np
from numba import njit

TABLE_PATH = Path(__file__).parent / "data" / "jtable.npz"
#: Grid of the table: u = ln x from U_MIN in steps of U_STEP, N_TABLE points.
U_MIN = math.log(1e-8)
U_MAX = math.log(1e4)
U_STEP = 0.01
N_TABLE = int(round((U_MAX - U_MIN) / U_STEP)) + 1


def _f(q):
    """1 - exp(-q) - q without cancellation for small q."""
    if q < 1e-3:
        return q * q * (-0.5 + q * (1.0 / 6.0 - q / 24.0))
    return -math.expm1(-q) - q


def j_quadrature(x):
    """(J(x), J'(x)) of Pitzer's defining integral by adaptive quadrature (reference path).

    Parameters
    ----------
    x : float > 0 [-]
    """
    from scipy.integrate import quad

    x = float(x)
    if not x > 0:
        raise ValueError(f"x must be positive, got {x!r}")

    def q_of(y):
        return (x / y) * math.exp(-y)

    def i0(y):
        return _f(q_of(y)) * y * y if y > 0 else 0.0

    def i1(y):
        if y <= 0:
            return 0.0
        q = q_of(y)
        return math.expm1(-q) * q * y * y

    opts = dict(limit=400, epsabs=0.0, epsrel=1e-12)
    # the integrands change over y ~ ln x (where q ~ 1) and decay like e^-2y: split there
    cut = max(1.0, math.log(max(x, 1.0)) + 2.0)
    a0 = quad(i0, 0.0, cut, **opts)[0] + quad(i0, cut, np.inf, **opts)[0]
    a1 = quad(i1, 0.0, cut, **opts)[0] + quad(i1, cut, np.inf, **opts)[0]
    j = x / 4.0 + a0 / x
    # dJ/dx = 1/4 - a0/x^2 + (1/x) int f'(q) (q/x) y^2 dy, f'(q) = e^-q - 1
    dj = 0.25 - a0 / (x * x) + a1 / (x * x)
    return j, dj


def build_table():
    """Arrays (J, dJ/du = x J'(x)) on the ln x grid, by quadrature (a few seconds)."""
    import warnings

    from scipy.integrate import IntegrationWarning

    u = U_MIN + U_STEP * np.arange(N_TABLE)
    J = np.empty(N_TABLE)
    DJ = np.empty(N_TABLE)
    with warnings.catch_warnings():
        # quad reports round-off at the 1e-12 request for a few small x; the values agree with
        # 30-digit quadrature to < 2e-9 relative there (J ~ 1e-12 absolute), see the tests
        warnings.simplefilter("ignore", IntegrationWarning)
        for k, uk in enumerate(u):
            x = math.exp(uk)
            j, dj = j_quadrature(x)
            J[k], DJ[k] = j, x * dj
    return J, DJ


@lru_cache(maxsize=1)
def table():
    """The stored table as (J, dJ/du, meta=[U_MIN, U_STEP, N]) float64 arrays."""
    with np.load(TABLE_PATH) as f:
        J = np.ascontiguousarray(f["J"], dtype=np.float64)
        DJ = np.ascontiguousarray(f["DJ"], dtype=np.float64)
        meta = np.array([float(f["u_min"]), float(f["u_step"]), float(J.size)], dtype=np.float64)
    return J, DJ, meta


@njit(cache=True)
def j_kernel(x, J, DJ, meta):
    """(J(x), J'(x)) by cubic Hermite interpolation of the table in u = ln x; NaN above the table."""
    if x <= 0.0:
        return 0.0, 0.0
    u0 = meta[0]
    h = meta[1]
    n = int(meta[2])
    u = math.log(x)
    t = (u - u0) / h
    if t < 0.0:
        # below the table: J ~ c x^2 (see module docstring)
        r = x / math.exp(u0)
        return J[0] * r * r, 2.0 * J[0] * r * r / x
    k = int(t)
    if k >= n - 1:
        if k == n - 1 and t - k < 1e-9:
            return J[n - 1], DJ[n - 1] / x
        return math.nan, math.nan
    s = t - k
    s2 = s * s
    s3 = s2 * s
    h00 = 2.0 * s3 - 3.0 * s2 + 1.0
    h10 = s3 - 2.0 * s2 + s
    h01 = -2.0 * s3 + 3.0 * s2
    h11 = s3 - s2
    j = h00 * J[k] + h10 * h * DJ[k] + h01 * J[k + 1] + h11 * h * DJ[k + 1]
    # derivative of the Hermite cubic with respect to u, then dJ/dx = (dJ/du) / x
    d00 = (6.0 * s2 - 6.0 * s) / h
    d10 = 3.0 * s2 - 4.0 * s + 1.0
    d01 = (-6.0 * s2 + 6.0 * s) / h
    d11 = 3.0 * s2 - 2.0 * s
    dju = d00 * J[k] + d10 * DJ[k] + d01 * J[k + 1] + d11 * DJ[k + 1]
    return j, dju / x


@njit(cache=True)
def etheta_kernel(zi, zj, aphi, ionic, J, DJ, meta):
    """(E-theta_ij, E-theta'_ij) [kg mol-1, kg^2 mol-2] for ions of charges zi, zj (same sign).

    Zero for equal charges or I = 0.  Pitzer (1975) eqs. (A1)-(A3).
    """
    if zi == zj or ionic <= 0.0:
        return 0.0, 0.0
    zz = zi * zj
    c = 6.0 * aphi * math.sqrt(ionic)
    xij = zz * c
    xii = zi * zi * c
    xjj = zj * zj * c
    jij, dij = j_kernel(xij, J, DJ, meta)
    jii, dii = j_kernel(xii, J, DJ, meta)
    jjj, djj = j_kernel(xjj, J, DJ, meta)
    et = zz / (4.0 * ionic) * (jij - 0.5 * jii - 0.5 * jjj)
    etp = -et / ionic + zz / (8.0 * ionic * ionic) * (xij * dij - 0.5 * xii * dii - 0.5 * xjj * djj)
    return et, etp
