"""Pitzer equations for mixed electrolytes (Harvie, Møller & Weare 1984 form) as numba kernels.

Method
------
Harvie, C. E., Møller, N. and Weare, J. H. (1984), "The prediction of mineral
solubilities in natural waters: the Na-K-Mg-Ca-H-Cl-SO4-OH-HCO3-CO3-CO2-H2O system
to high ionic strengths at 25 °C", Geochim. Cosmochim. Acta 48, 723-751,
doi:10.1016/0016-7037(84)90098-X, eqs. (A1)-(A16); Pitzer, K. S. (1991), ch. 3 in
*Activity Coefficients in Electrolyte Solutions*, 2nd ed., CRC Press, eqs. (63)-(70).

For molalities m_i [mol kg-1] of cations c (charge z_c) and anions a, with
I = (1/2) sum m_i z_i^2, Z = sum m_i |z_i|, b = 1.2 kg^1/2 mol^-1/2:

    F = -A_phi [sqrt I/(1 + b sqrt I) + (2/b) ln(1 + b sqrt I)] + sum_c sum_a m_c m_a B'_ca
        + sum_{c<c'} m_c m_c' Phi'_cc' + sum_{a<a'} m_a m_a' Phi'_aa'
    ln gamma_M = z_M^2 F + sum_a m_a (2 B_Ma + Z C_Ma) + sum_c m_c (2 Phi_Mc + sum_a m_a psi_Mca)
                 + sum_{a<a'} m_a m_a' psi_aa'M + |z_M| sum_c sum_a m_c m_a C_ca
    (ln gamma_X likewise, cations and anions exchanged)
    phi - 1 = (2 / sum m_i) [-A_phi I^1.5/(1 + b sqrt I) + sum_c sum_a m_c m_a (B^phi_ca + Z C_ca)
              + sum_{c<c'} m_c m_c' (Phi^phi_cc' + sum_a m_a psi_cc'a)
              + sum_{a<a'} m_a m_a' (Phi^phi_aa' + sum_c m_c psi_aa'c)]
    ln a_w = -phi M_w sum m_i

with B^phi = beta0 + beta1 e^(-alpha1 sqrt I) + beta2 e^(-alpha2 sqrt I),
B = beta0 + beta1 g(alpha1 sqrt I) + beta2 g(alpha2 sqrt I), B' = [beta1 g'(alpha1 sqrt I)
+ beta2 g'(alpha2 sqrt I)] / I, g(x) = 2[1 - (1 + x) e^-x]/x^2,
g'(x) = -2[1 - (1 + x + x^2/2) e^-x]/x^2, C = C^phi / (2 sqrt|z_c z_a|),
Phi^phi = theta + E-theta + I E-theta', Phi = theta + E-theta, Phi' = E-theta'
(E-theta from :mod:`wetcycle.brines.efunc`).

The binary beta0, beta1, beta2, C^phi and alpha's are those of the project's binary
systems (:mod:`wetcycle.salts`), with the same temperature form and the same
Debye-Hückel slope A_phi(T) (:func:`wetcycle.salts.pitzer.aphi_kernel`); for a single
salt these kernels reproduce the binary kernels to rounding (tested to 1e-12).
Mixing theta(T), psi(T) use that temperature form too.

Validity: that of the binaries and mixing parameters used (checked by the callers in
:mod:`wetcycle.brines.chemistry`); A_phi is defined for 150-373.15 K and the kernels
return NaN outside it.
"""

from __future__ import annotations

import math

import numpy as np
from numba import njit

from ..salts.pitzer import B_PITZER, MW, T_REF, aphi_kernel
from .efunc import etheta_kernel

_INV_TREF = 1.0 / T_REF
_LN_TREF = math.log(T_REF)


@njit(cache=True, inline="always")
def _tf(c, inv, lg, dt):
    return c[0] + c[1] * inv + c[2] * lg + c[3] * dt


@njit(cache=True)
def params_at_T(T, beta_coef, theta_c_coef, theta_a_coef, psi_c_coef, psi_a_coef):
    """Evaluate every temperature function at T [K].

    Parameters
    ----------
    beta_coef : (nc, na, 4, 4)  rows beta0, beta1, beta2, C^phi; columns c0..c3
    theta_c_coef : (nc, nc, 4); theta_a_coef : (na, na, 4)
    psi_c_coef : (nc, nc, na, 4); psi_a_coef : (na, na, nc, 4)

    Returns
    -------
    beta (nc, na, 4) [beta0, beta1, beta2, C^phi], theta_c (nc, nc), theta_a (na, na),
    psi_c (nc, nc, na), psi_a (na, na, nc)
    """
    inv = 1.0 / T - _INV_TREF
    lg = math.log(T) - _LN_TREF
    dt = T - T_REF
    nc = beta_coef.shape[0]
    na = beta_coef.shape[1]
    beta = np.empty((nc, na, 4))
    for c in range(nc):
        for a in range(na):
            for k in range(4):
                beta[c, a, k] = _tf(beta_coef[c, a, k], inv, lg, dt)
    thc = np.empty((nc, nc))
    for i in range(nc):
        for j in range(nc):
            thc[i, j] = _tf(theta_c_coef[i, j], inv, lg, dt)
    tha = np.empty((na, na))
    for i in range(na):
        for j in range(na):
            tha[i, j] = _tf(theta_a_coef[i, j], inv, lg, dt)
    psc = np.empty((nc, nc, na))
    for i in range(nc):
        for j in range(nc):
            for a in range(na):
                psc[i, j, a] = _tf(psi_c_coef[i, j, a], inv, lg, dt)
    psa = np.empty((na, na, nc))
    for i in range(na):
        for j in range(na):
            for c in range(nc):
                psa[i, j, c] = _tf(psi_a_coef[i, j, c], inv, lg, dt)
    return beta, thc, tha, psc, psa


@njit(cache=True, inline="always")
def _g(x):
    if x < 1e-6:
        return 1.0 - 2.0 * x / 3.0
    return 2.0 * (1.0 - (1.0 + x) * math.exp(-x)) / (x * x)


@njit(cache=True, inline="always")
def _gp(x):
    if x < 1e-6:
        return -x / 3.0
    return -2.0 * (1.0 - (1.0 + x + 0.5 * x * x) * math.exp(-x)) / (x * x)


@njit(cache=True)
def activity_kernel(m, T, z, nc, alpha, beta, thc, tha, psc, psa, J, DJ, meta, lng):
    """ln gamma of every ion (written into ``lng``) and (ln a_w, phi, I) of a mixed brine.

    Parameters
    ----------
    m : (n,) [mol kg-1]  molalities, cations first (nc of them), then anions
    T : float [K]
    z : (n,) float  charges
    alpha : (nc, na, 2) [kg^1/2 mol^-1/2]  alpha1, alpha2 of each pair
    beta, thc, tha, psc, psa : from :func:`params_at_T`
    J, DJ, meta : the J(x) table (:func:`wetcycle.brines.efunc.table`)
    lng : (n,) output

    Returns
    -------
    (ln a_w [-], phi [-], I [mol kg-1]); NaN (and lng NaN) when T is outside A_phi's range
    or a molality is negative.
    """
    n = m.shape[0]
    na = n - nc
    aphi = aphi_kernel(T)
    ionic = 0.0
    zsum = 0.0
    msum = 0.0
    for i in range(n):
        if not (m[i] >= 0.0):
            aphi = math.nan
        ionic += 0.5 * m[i] * z[i] * z[i]
        zsum += m[i] * abs(z[i])
        msum += m[i]
    if aphi != aphi:
        for i in range(n):
            lng[i] = math.nan
        return math.nan, math.nan, ionic
    if msum == 0.0:
        for i in range(n):
            lng[i] = 0.0
        return 0.0, 1.0, 0.0
    sq = math.sqrt(ionic)
    bsq = B_PITZER * sq
    fgam = -aphi * (sq / (1.0 + bsq) + (2.0 / B_PITZER) * math.log(1.0 + bsq))
    # pair functions
    Bphi = np.empty((nc, na))
    Bg = np.empty((nc, na))
    Bp = np.empty((nc, na))
    C = np.empty((nc, na))
    for c in range(nc):
        for a in range(na):
            x1 = alpha[c, a, 0] * sq
            x2 = alpha[c, a, 1] * sq
            b0 = beta[c, a, 0]
            b1 = beta[c, a, 1]
            b2 = beta[c, a, 2]
            bphi = b0 + b1 * math.exp(-x1)
            bg = b0 + b1 * _g(x1)
            bp = b1 * _gp(x1) / ionic
            if b2 != 0.0:
                bphi += b2 * math.exp(-x2)
                bg += b2 * _g(x2)
                bp += b2 * _gp(x2) / ionic
            Bphi[c, a] = bphi
            Bg[c, a] = bg
            Bp[c, a] = bp
            C[c, a] = beta[c, a, 3] / (2.0 * math.sqrt(abs(z[c] * z[nc + a])))
    # like-charge mixing functions
    PhC = np.zeros((nc, nc))
    PpC = np.zeros((nc, nc))
    PfC = np.zeros((nc, nc))
    for i in range(nc):
        for j in range(nc):
            if i != j:
                et, etp = 0.0, 0.0
                if z[i] != z[j]:
                    et, etp = etheta_kernel(z[i], z[j], aphi, ionic, J, DJ, meta)
                PhC[i, j] = thc[i, j] + et
                PpC[i, j] = etp
                PfC[i, j] = thc[i, j] + et + ionic * etp
    PhA = np.zeros((na, na))
    PpA = np.zeros((na, na))
    PfA = np.zeros((na, na))
    for i in range(na):
        for j in range(na):
            if i != j:
                et, etp = 0.0, 0.0
                if z[nc + i] != z[nc + j]:
                    et, etp = etheta_kernel(z[nc + i], z[nc + j], aphi, ionic, J, DJ, meta)
                PhA[i, j] = tha[i, j] + et
                PpA[i, j] = etp
                PfA[i, j] = tha[i, j] + et + ionic * etp
    # F and the double sums shared by every ion
    F = fgam
    sumC = 0.0
    osm = -aphi * ionic * sq / (1.0 + bsq)
    for c in range(nc):
        mc = m[c]
        for a in range(na):
            ma = m[nc + a]
            F += mc * ma * Bp[c, a]
            sumC += mc * ma * C[c, a]
            osm += mc * ma * (Bphi[c, a] + zsum * C[c, a])
    for i in range(nc):
        for j in range(i + 1, nc):
            mm = m[i] * m[j]
            F += mm * PpC[i, j]
            s = PfC[i, j]
            for a in range(na):
                s += m[nc + a] * psc[i, j, a]
            osm += mm * s
    for i in range(na):
        for j in range(i + 1, na):
            mm = m[nc + i] * m[nc + j]
            F += mm * PpA[i, j]
            s = PfA[i, j]
            for c in range(nc):
                s += m[c] * psa[i, j, c]
            osm += mm * s
    # cations
    for M in range(nc):
        v = z[M] * z[M] * F + abs(z[M]) * sumC
        for a in range(na):
            v += m[nc + a] * (2.0 * Bg[M, a] + zsum * C[M, a])
        for c in range(nc):
            if c != M:
                s = 2.0 * PhC[M, c]
                for a in range(na):
                    s += m[nc + a] * psc[M, c, a]
                v += m[c] * s
        for a in range(na):
            for b in range(a + 1, na):
                v += m[nc + a] * m[nc + b] * psa[a, b, M]
        lng[M] = v
    # anions
    for X in range(na):
        zx = z[nc + X]
        v = zx * zx * F + abs(zx) * sumC
        for c in range(nc):
            v += m[c] * (2.0 * Bg[c, X] + zsum * C[c, X])
        for a in range(na):
            if a != X:
                s = 2.0 * PhA[X, a]
                for c in range(nc):
                    s += m[c] * psa[X, a, c]
                v += m[nc + a] * s
        for c in range(nc):
            for d in range(c + 1, nc):
                v += m[c] * m[d] * psc[c, d, X]
        lng[nc + X] = v
    phi = 1.0 + 2.0 * osm / msum
    return -phi * MW * msum, phi, ionic


@njit(cache=True)
def activity_rows(mrows, T, z, nc, alpha, beta, thc, tha, psc, psa, J, DJ, meta, lng_out, out):
    """Row-wise :func:`activity_kernel` at one temperature: mrows (k, n) -> lng_out (k, n), out (k, 3)."""
    for r in range(mrows.shape[0]):
        lnaw, phi, ionic = activity_kernel(mrows[r], T, z, nc, alpha, beta, thc, tha, psc, psa, J, DJ, meta,
                                           lng_out[r])
        out[r, 0] = lnaw
        out[r, 1] = phi
        out[r, 2] = ionic
    return out


@njit(cache=True)
def activity_full(m, T, z, nc, alpha, beta, thc, tha, psc, psa, J, DJ, meta, nn, lam, lng):
    """:func:`activity_kernel` extended to ``nn`` neutral species placed last in ``m`` (CO2(aq)).

    Method: Harvie, Møller & Weare (1984) eqs. (A8)-(A10) with the neutral-ion terms only
    (lambda; the neutral-neutral and zeta terms are zero in this model):
    ln gamma_N = 2 sum_i m_i lambda_Ni; ln gamma_i gains 2 sum_N m_N lambda_Ni;
    ln a_w = -M_w [sum_all m + 2 osm_ions + 2 sum_N sum_i m_N m_i lambda_Ni].

    Parameters as :func:`activity_kernel`, plus ``nn`` (int) and ``lam`` (nn, n - nn) [kg mol-1].
    Returns (ln a_w, phi, I) with phi over all solutes; NaN as :func:`activity_kernel`.
    """
    n = m.shape[0]
    if nn == 0:
        return activity_kernel(m, T, z, nc, alpha, beta, thc, tha, psc, psa, J, DJ, meta, lng)
    ni = n - nn
    lnaw, phi, ionic = activity_kernel(m[:ni], T, z[:ni], nc, alpha, beta, thc, tha, psc, psa, J, DJ, meta,
                                       lng[:ni])
    bad = lnaw != lnaw
    for k in range(nn):
        if not (m[ni + k] >= 0.0):
            bad = True
    if bad:
        for i in range(n):
            lng[i] = math.nan
        return math.nan, math.nan, ionic
    s_ion = 0.0
    for i in range(ni):
        s_ion += m[i]
    s_n = 0.0
    cross = 0.0
    for k in range(nn):
        mk = m[ni + k]
        s_n += mk
        g = 0.0
        for i in range(ni):
            g += 2.0 * lam[k, i] * m[i]
            cross += mk * lam[k, i] * m[i]
            lng[i] += 2.0 * mk * lam[k, i]
        lng[ni + k] = g
    lnaw = lnaw - MW * (s_n + 2.0 * cross)
    tot = s_ion + s_n
    phi = -lnaw / (MW * tot) if tot > 0.0 else 1.0
    return lnaw, phi, ionic
