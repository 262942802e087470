"""Pitzer ion-interaction equations for a single (binary) electrolyte in water.

Method
------
Pitzer, K. S. (1991), "Ion interaction approach: theory and data correlation",
ch. 3 in *Activity Coefficients in Electrolyte Solutions*, 2nd ed., CRC Press;
Pitzer, K. S. and Mayorga, G. (1973), J. Phys. Chem. 77, 2300-2308,
doi:10.1021/j100638a009; Pitzer, K. S. and Mayorga, G. (1974), J. Solution
Chem. 3, 539-546, doi:10.1007/BF00648138 (2:2 electrolytes, beta2).

For a salt M_{nu_M} X_{nu_X} at molality m [mol kg-1], with nu = nu_M + nu_X,
ionic strength I = m (nu_M z_M^2 + nu_X z_X^2) / 2 and b = 1.2 kg^1/2 mol^-1/2:

    phi - 1   = |z_M z_X| f_phi + m (2 nu_M nu_X / nu) B_phi
                + m^2 (2 (nu_M nu_X)^1.5 / nu) C_phi
    ln gamma± = |z_M z_X| f_gamma + m (2 nu_M nu_X / nu) B_gamma
                + m^2 (3 (nu_M nu_X)^1.5 / nu) C_phi
    f_phi     = -A_phi sqrt(I) / (1 + b sqrt(I))
    f_gamma   = -A_phi [sqrt(I)/(1 + b sqrt(I)) + (2/b) ln(1 + b sqrt(I))]
    B_phi     = beta0 + beta1 exp(-alpha1 sqrt I) + beta2 exp(-alpha2 sqrt I)
    B_gamma   = 2 beta0 + sum_k (2 beta_k/(alpha_k^2 I)) [1 - (1 + alpha_k sqrt I
                - alpha_k^2 I / 2) exp(-alpha_k sqrt I)]
    ln a_w    = -phi nu m M_w

alpha1 = 2, no beta2 for 1:1, 2:1, 1:2 and 3:1 salts; alpha1 = 1.4, alpha2 = 12
for 2:2 (Pitzer & Mayorga 1974) and, by common practice, higher-valence pairs.

Temperature dependence of every parameter (beta0, beta1, beta2, C_phi) has
the compact form, with T_r = 298.15 K,

    p(T) = c0 + c1 (1/T - 1/T_r) + c2 ln(T/T_r) + c3 (T - T_r).

Debye-Hückel slope A_phi(T)
---------------------------
A_phi = (1/3) (2 pi N_A rho_w)^1/2 (e^2 / (4 pi eps0 eps_r k T))^3/2 (Pitzer
1991, eq. 3.3) evaluated with the IAPWS density of (supercooled) water (IAPWS
G12-15, Holten et al. 2014; IAPWS-95 above 300 K) and the IAPWS R8-97 static
dielectric constant (Fernández et al. 1997, J. Phys. Chem. Ref. Data 26, 1125),
at 0.1 MPa, and represented by a quartic in (T - T_r) fitted by the project
over 260-373.15 K (max. relative deviation 4e-4; ``tests/test_pitzer.py``
recomputes it with the ``iapws`` package).  It gives 0.3913 at 298.15 K
(Pitzer 1991: 0.391).  Below 260 K the quartic is a smooth extrapolation down
to ``APHI_T_MIN``: it deliberately does not follow the anomalous behaviour of
pure supercooled water near its 228 K singularity, which concentrated brines
(whose own structure is dominated by the ions) do not share; each salt system's
low-temperature Pitzer coefficients are fitted with this same A_phi, so the
product is self-consistent against the low-temperature data it was fitted to.
Outside ``APHI_T_MIN``-``APHI_T_MAX`` the kernels return NaN.

All kernels are numba ``@njit(cache=True)`` scalar functions of (m, T, packed
parameter vector); compilation happens on first call, not on import.
"""

from __future__ import annotations

import math

import numpy as np
from numba import njit

#: Molar mass of water [kg mol-1] (IAPWS-95).
MW = 0.018015268
#: Pitzer's universal b parameter [kg^1/2 mol^-1/2] (Pitzer 1991).
B_PITZER = 1.2
#: Reference temperature of the temperature functions [K].
T_REF = 298.15

#: Coefficients of A_phi(T) = sum_k a_k (T - 298.15)^k, k = 0..4, fitted by the
#: project to IAPWS-derived Debye-Hückel values over 260-373.15 K.
APHI_COEFFS = (
    0.3912982196119283,
    6.661058771387243e-04,
    2.99369570998893e-06,
    8.039316877243764e-09,
    -5.7494917005207575e-11,
)
#: Range over which A_phi follows the IAPWS-derived values [K].
APHI_FIT_RANGE = (260.0, 373.15)
#: Range over which the kernels return a value (below 260 K: extrapolation) [K].
APHI_T_MIN = 150.0
APHI_T_MAX = 373.15

# Layout of the packed parameter vector used by every kernel: stoichiometric
# constants precomputed once, then 4 parameters x 4 temperature coefficients.
P_ZZ = 0        # |z_M z_X|
P_IFAC = 1      # I / m = (nu_M z_M^2 + nu_X z_X^2) / 2
P_BFAC = 2      # 2 nu_M nu_X / nu
P_CFAC = 3      # 2 (nu_M nu_X)^1.5 / nu
P_ALPHA1 = 4
P_ALPHA2 = 5
P_NUMW = 6      # nu M_w
P_HAS_B2 = 7    # 1.0 if beta2 is used
P_NU_M = 8
P_NU_X = 9
P_NU = 10
P_LNQ = 11      # ln(nu_M^nu_M nu_X^nu_X)
P_GFAC = 12     # 3 (nu_M nu_X)^1.5 / nu
P_COEF = 16     # beta0 c0..c3, beta1 c0..c3, beta2 c0..c3, cphi c0..c3
N_PACK = P_COEF + 16
PARAM_NAMES = ("beta0", "beta1", "beta2", "cphi")
_LN_TREF = math.log(T_REF)
_INV_TREF = 1.0 / T_REF


def pack(nu_m, nu_x, z_m, z_x, alpha1, alpha2, coef):
    """Pack stoichiometry and temperature coefficients into one float64 vector.

    Parameters
    ----------
    nu_m, nu_x : int
        Stoichiometric numbers of cation and anion.
    z_m, z_x : int
        Charges (z_x negative).
    alpha1, alpha2 : float [kg^1/2 mol^-1/2]
    coef : array (4, 4)
        Rows beta0, beta1, beta2, cphi; columns c0..c3 of the temperature form.
    """
    coef = np.asarray(coef, dtype=np.float64)
    if coef.shape != (4, 4):
        raise ValueError(f"coef must have shape (4, 4), got {coef.shape}")
    nu = nu_m + nu_x
    nn = nu_m * nu_x
    out = np.zeros(N_PACK, dtype=np.float64)
    out[P_ZZ] = abs(z_m * z_x)
    out[P_IFAC] = 0.5 * (nu_m * z_m**2 + nu_x * z_x**2)
    out[P_BFAC] = 2.0 * nn / nu
    out[P_CFAC] = 2.0 * nn**1.5 / nu
    out[P_ALPHA1] = alpha1
    out[P_ALPHA2] = alpha2
    out[P_NUMW] = nu * MW
    out[P_HAS_B2] = 1.0 if np.any(coef[2] != 0.0) else 0.0
    out[P_NU_M], out[P_NU_X], out[P_NU] = nu_m, nu_x, nu
    out[P_LNQ] = nu_m * math.log(nu_m) + nu_x * math.log(nu_x)
    out[P_GFAC] = 3.0 * nn**1.5 / nu
    out[P_COEF:] = coef.ravel()
    return out


@njit(cache=True, inline="always")
def _aphi_poly(x):
    return APHI_COEFFS[0] + x * (
        APHI_COEFFS[1] + x * (APHI_COEFFS[2] + x * (APHI_COEFFS[3] + x * APHI_COEFFS[4]))
    )


@njit(cache=True)
def aphi_kernel(T):
    """Debye-Hückel osmotic slope A_phi [kg^1/2 mol^-1/2]; NaN outside 150-373.15 K."""
    if not (T >= APHI_T_MIN and T <= APHI_T_MAX):
        return math.nan
    return _aphi_poly(T - T_REF)


@njit(cache=True)
def temperature_function(c0, c1, c2, c3, T):
    """p(T) = c0 + c1 (1/T - 1/Tr) + c2 ln(T/Tr) + c3 (T - Tr), Tr = 298.15 K."""
    return c0 + c1 * (1.0 / T - 1.0 / T_REF) + c2 * math.log(T / T_REF) + c3 * (T - T_REF)


@njit(cache=True, inline="always")
def _param(p, k, inv, lg, dt):
    j = P_COEF + 4 * k
    return p[j] + p[j + 1] * inv + p[j + 2] * lg + p[j + 3] * dt


@njit(cache=True)
def params_kernel(p, T):
    """(beta0, beta1, beta2, cphi) at temperature T [K]."""
    inv = 1.0 / T - _INV_TREF
    lg = math.log(T) - _LN_TREF
    dt = T - T_REF
    return _param(p, 0, inv, lg, dt), _param(p, 1, inv, lg, dt), _param(p, 2, inv, lg, dt), _param(p, 3, inv, lg, dt)


@njit(cache=True, inline="always")
def _ln_aw(m, T, p):
    if not (T >= APHI_T_MIN and T <= APHI_T_MAX):
        return math.nan
    dt = T - T_REF
    aphi = _aphi_poly(dt)
    inv = 1.0 / T - _INV_TREF
    lg = math.log(T) - _LN_TREF
    sq = math.sqrt(p[P_IFAC] * m)
    bphi = _param(p, 0, inv, lg, dt) + _param(p, 1, inv, lg, dt) * math.exp(-p[P_ALPHA1] * sq)
    if p[P_HAS_B2] != 0.0:
        bphi += _param(p, 2, inv, lg, dt) * math.exp(-p[P_ALPHA2] * sq)
    phi = 1.0 - p[P_ZZ] * aphi * sq / (1.0 + B_PITZER * sq) + m * (
        p[P_BFAC] * bphi + m * p[P_CFAC] * _param(p, 3, inv, lg, dt))
    return -phi * p[P_NUMW] * m


@njit(cache=True)
def ln_aw_kernel(m, T, p):
    """Natural log of the water activity, ln a_w = -phi nu m M_w [-]; NaN outside A_phi's range."""
    return _ln_aw(m, T, p)


@njit(cache=True)
def osmotic_kernel(m, T, p):
    """Osmotic coefficient phi [-] of the binary solution at molality m [mol/kg], T [K]."""
    if m == 0.0:
        return 1.0
    return -_ln_aw(m, T, p) / (p[P_NUMW] * m)


@njit(cache=True)
def aw_kernel(m, T, p):
    """Water activity a_w [-] of the binary solution."""
    return math.exp(_ln_aw(m, T, p))


@njit(cache=True, inline="always")
def _bgamma_term(beta, alpha, ionic, sq):
    x = alpha * sq
    if x < 1e-6:
        # limit of (2/x^2)[1 - (1 + x - x^2/2) e^-x] -> 2 - 4x/3 + ...
        return beta * (2.0 - 4.0 * x / 3.0)
    return 2.0 * beta / (alpha * alpha * ionic) * (1.0 - (1.0 + x - 0.5 * x * x) * math.exp(-x))


@njit(cache=True)
def ln_gamma_kernel(m, T, p):
    """Natural log of the mean molal activity coefficient gamma± [-]."""
    aphi = aphi_kernel(T)
    ionic = p[P_IFAC] * m
    sq = math.sqrt(ionic)
    b0, b1, b2, cp = params_kernel(p, T)
    bsq = B_PITZER * sq
    fg = -aphi * (sq / (1.0 + bsq) + (2.0 / B_PITZER) * math.log(1.0 + bsq))
    bg = 2.0 * b0 + _bgamma_term(b1, p[P_ALPHA1], ionic, sq)
    if p[P_HAS_B2] != 0.0:
        bg += _bgamma_term(b2, p[P_ALPHA2], ionic, sq)
    return p[P_ZZ] * fg + m * p[P_BFAC] * bg + m * m * p[P_GFAC] * cp


@njit(cache=True)
def ln_iap_kernel(m, T, p, n_hydrate):
    """ln of the ion activity product of MX.nH2O: ln(nuM^nuM nuX^nuX) + nu ln(m gamma±) + n ln a_w."""
    return p[P_LNQ] + p[P_NU] * (math.log(m) + ln_gamma_kernel(m, T, p)) + n_hydrate * _ln_aw(m, T, p)


@njit(cache=True, fastmath=True)
def aw_array(m, T, p, out):
    """Water activity for 1-D arrays of molality [mol/kg] and temperature [K] (same length)."""
    for i in range(m.shape[0]):
        out[i] = math.exp(_ln_aw(m[i], T[i], p))
    return out


@njit(cache=True, inline="always")
def _g(f_kind, m, T, p, n_hydrate, target):
    if f_kind == 0:
        return _ln_aw(m, T, p) - target
    return ln_iap_kernel(m, T, p, n_hydrate) - target


@njit(cache=True)
def _crossing(f_kind, target, T, p, n_hydrate, m_hi, which):
    """The ``which``-th (0 = first) m in (0, m_hi] where g(m) crosses ``target``.

    f_kind 0: g = ln a_w (decreasing from 0 near m = 0);
    f_kind 1: g = ln IAP(MX.nH2O) (increasing from -inf near m = 0).
    Scans a geometric grid, then bisects; NaN if there is no such crossing.
    A congruently melting hydrate has two saturation molalities below its
    melting point: ``which=0`` gives the dilute-side branch, ``which=1`` the
    concentrated-side branch.
    """
    n_scan = 160
    m_lo = 1e-6
    ratio = (m_hi / m_lo) ** (1.0 / (n_scan - 1))
    m_prev = m_lo
    g_prev = _g(f_kind, m_prev, T, p, n_hydrate, target)
    if f_kind == 0 and g_prev < 0.0:
        return math.nan
    if f_kind == 1 and g_prev > 0.0:
        return math.nan
    found = 0
    for i in range(1, n_scan):
        m_cur = m_lo * ratio**i
        if i == n_scan - 1:
            m_cur = m_hi
        g_cur = _g(f_kind, m_cur, T, p, n_hydrate, target)
        if g_cur != g_cur:
            return math.nan
        if (g_prev > 0.0) != (g_cur > 0.0):
            if found == which:
                a, b = m_prev, m_cur
                ga = g_prev
                for _ in range(60):
                    mid = 0.5 * (a + b)
                    gm = _g(f_kind, mid, T, p, n_hydrate, target)
                    if (gm > 0.0) == (ga > 0.0):
                        a, ga = mid, gm
                    else:
                        b = mid
                    if b - a < 1e-12 * b:
                        break
                return 0.5 * (a + b)
            found += 1
        m_prev, g_prev = m_cur, g_cur
    return math.nan


@njit(cache=True)
def molality_at_ln_aw_kernel(ln_aw, T, p, m_hi):
    """Molality [mol/kg] at which the solution has ln a_w = ``ln_aw``; NaN if none <= m_hi."""
    if ln_aw >= 0.0:
        return 0.0
    return _crossing(0, ln_aw, T, p, 0.0, m_hi, 0)


@njit(cache=True)
def saturation_molality_kernel(ln_k, T, p, n_hydrate, m_hi):
    """Molality [mol/kg] of the solution saturated with MX.nH2O (ln IAP = ln K), dilute branch; NaN if none."""
    return _crossing(1, ln_k, T, p, n_hydrate, m_hi, 0)


@njit(cache=True)
def saturation_molality_branch_kernel(ln_k, T, p, n_hydrate, m_hi, which):
    """Saturation molality on branch ``which`` (0 dilute, 1 concentrated side of a congruent melt)."""
    return _crossing(1, ln_k, T, p, n_hydrate, m_hi, which)
