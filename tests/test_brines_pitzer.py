"""Mixed-electrolyte Pitzer kernels: J(x), single-salt identity with the binaries, mixture checks."""

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from wetcycle.brines import chemistry as ch
from wetcycle.brines import efunc
from wetcycle.salts import pitzer as pz

SEAWATER = dict(Na=0.4860, K=0.01058, Mg=0.05474, Ca=0.01065, Cl=0.5657, SO4=0.02926)


@pytest.mark.parametrize("x", [1e-4, 0.01, 0.1, 0.37, 1.0, 3.3, 10.0, 55.0, 400.0])
def test_j_table_matches_30_digit_quadrature(x):
    # Reference: Pitzer (1975) J. Solution Chem. 4, 249, eq. (A1)-(A2) integrated with mpmath at 30 digits
    # (a general-purpose arbitrary-precision library). Tolerance: the table's stated 3e-9 relative (quad's
    # accuracy at small x, where J ~ 1e-8 is a small difference).
    mp = pytest.importorskip("mpmath")
    mp.mp.dps = 30
    X = mp.mpf(x)
    ref = X / 4 - 1 + mp.quad(lambda y: (1 - mp.exp(-(X / y) * mp.exp(-y))) * y ** 2, [0, 1, 10, mp.inf]) / X
    J, DJ, meta = efunc.table()
    j, dj = efunc.j_kernel(x, J, DJ, meta)
    assert j == pytest.approx(float(ref), rel=3e-9, abs=1e-20)
    jp, _ = efunc.j_kernel(x * (1 + 1e-5), J, DJ, meta)
    jm, _ = efunc.j_kernel(x * (1 - 1e-5), J, DJ, meta)
    # J' against a central difference of the interpolant itself (consistency of the tabulated derivative)
    assert dj == pytest.approx((jp - jm) / (2e-5 * x), rel=1e-5)


@pytest.mark.parametrize("x", [0.1, 1.0, 10.0, 100.0, 400.0])
def test_j_agrees_with_pitzers_1975_approximation(x):
    # Pitzer (1975) eq. (47): J ~ x / (4 + 4.581 x^-0.7237 exp(-0.0120 x^0.528)), stated good to ~1 % for
    # x >= 0.1 (coefficients from memory). Tolerance 1.5 %: the approximation's own accuracy.
    J, DJ, meta = efunc.table()
    approx = x / (4 + 4.581 * x ** -0.7237 * math.exp(-0.0120 * x ** 0.528))
    assert efunc.j_kernel(x, J, DJ, meta)[0] == pytest.approx(approx, rel=0.015)


def test_j_large_x_limit():
    # J(x) -> x/4 - 1 + ... for large x (from the defining integral; common practice)
    J, DJ, meta = efunc.table()
    x = 5000.0
    assert efunc.j_kernel(x, J, DJ, meta)[0] == pytest.approx(x / 4 - 1, rel=2e-3)


PAIRS = sorted(ch.binary_pairs().items())


@pytest.mark.parametrize("key,system", PAIRS, ids=[s.name for _, s in PAIRS])
def test_single_salt_equals_the_binary_system(key, system):
    # One Pitzer implementation: for a single salt the mixture kernels must give the binary system's
    # ln a_w and ln gamma± (wetcycle.salts.pitzer) to rounding. Tolerance 1e-12 absolute (design target).
    c, a = key
    chem = ch.load((c, a))
    worst = 0.0
    for T in np.linspace(max(system.T_min, 190.0), system.T_max, 6):
        for m in (1e-5, 0.01, 0.3, 1.0, system.m_max):
            mi = np.zeros(2)
            mi[chem.index(c)] = system.nu_cation * m
            mi[chem.index(a)] = system.nu_anion * m
            lng, lnaw, phi, ionic = chem.activities(mi, T)
            lng_pm = (system.nu_cation * lng[chem.index(c)] + system.nu_anion * lng[chem.index(a)]) / system.nu
            worst = max(worst, abs(lnaw - pz.ln_aw_kernel(m, T, system.packed)),
                        abs(lng_pm - pz.ln_gamma_kernel(m, T, system.packed)))
    assert worst < 1e-12


def test_seawater_osmotic_coefficient_at_25C():
    # Seawater of salinity 35 at 25 °C: phi = 0.902 (Millero & Leung 1976, Am. J. Sci. 276, 1035; from memory).
    # Tolerance 0.005: Br, HCO3, B left out of the composition and the recalled value's last digit.
    chem = ch.load(tuple(SEAWATER))
    m = np.array([SEAWATER[i] for i in chem.ions])
    assert chem.osmotic_coefficient(m, 298.15) == pytest.approx(0.902, abs=0.005)


def _random_brine(draw_vals):
    chem = ch.load()
    m = np.zeros(chem.n)
    cat = np.array(draw_vals[:4])
    an = np.array(draw_vals[4:])
    m[:4] = cat
    qa = float(np.dot(an, -chem.z[4:]))
    qc = float(np.dot(cat, chem.z[:4]))
    m[4:] = an * qc / qa
    return chem, m


@settings(max_examples=40, deadline=None)
@given(st.lists(st.floats(0.01, 1.0), min_size=7, max_size=7), st.floats(240.0, 320.0))
def test_activity_coefficients_are_gibbs_consistent(vals, T):
    # ln gamma_i derive from one excess Gibbs energy, so d ln gamma_i / d m_j = d ln gamma_j / d m_i
    # (cross-differentiation; Pitzer 1991 ch. 3). Tolerance: central differences at step 1e-6.
    chem, m = _random_brine(vals)
    n = chem.n
    G = np.empty((n, n))
    for j in range(n):
        d = 1e-6 * max(m[j], 1e-3)
        mp_, mm_ = m.copy(), m.copy()
        mp_[j] += d
        mm_[j] -= d
        G[:, j] = (chem.activities(mp_, T)[0] - chem.activities(mm_, T)[0]) / (2 * d)
    assert np.allclose(G, G.T, rtol=1e-5, atol=1e-6)


@settings(max_examples=40, deadline=None)
@given(st.lists(st.floats(0.01, 1.0), min_size=7, max_size=7), st.floats(240.0, 320.0))
def test_gibbs_duhem_links_water_and_ions(vals, T):
    # Gibbs-Duhem: d ln a_w = -M_w sum_i m_i d ln(m_i gamma_i) for any change of composition
    # (common practice; Pitzer 1991 ch. 3). Tolerance: second-order central differences.
    chem, m = _random_brine(vals)
    dm = 1e-6 * m
    lg_p, aw_p, _, _ = chem.activities(m + dm, T)
    lg_m, aw_m, _, _ = chem.activities(m - dm, T)
    lhs = aw_p - aw_m
    rhs = -pz.MW * np.sum(m * ((np.log(m + dm) + lg_p) - (np.log(m - dm) + lg_m)))
    assert lhs == pytest.approx(rhs, rel=1e-5, abs=1e-13)


@settings(max_examples=30, deadline=None)
@given(st.lists(st.floats(0.001, 1.0), min_size=7, max_size=7), st.floats(240.0, 320.0))
def test_water_activity_in_unit_interval_and_falls_on_concentration(vals, T):
    # invariant (common practice): 0 < a_w <= 1, and concentrating a brine lowers a_w at these molalities
    chem, m = _random_brine(vals)
    a1 = chem.water_activity(m, T)
    a2 = chem.water_activity(1.5 * m, T)
    assert 0.0 < a2 < a1 <= 1.0


def test_unsymmetric_mixing_changes_a_na_mg_brine_only_through_e_theta():
    # E-theta vanishes for equal charges: with theta = psi = 0, NaCl-KCl water activity depends only on
    # the binaries' terms, so swapping a little Na for K changes a_w smoothly; for Na-Mg E-theta is nonzero.
    # Checked against the defining integral's sign (Pitzer 1975): E-theta(1,2) < 0 at moderate I.
    J, DJ, meta = efunc.table()
    et, etp = efunc.etheta_kernel(1.0, 2.0, 0.39, 1.0, J, DJ, meta)
    assert et < 0
    assert efunc.etheta_kernel(1.0, 1.0, 0.39, 1.0, J, DJ, meta) == (0.0, 0.0)
