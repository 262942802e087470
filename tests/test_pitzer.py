"""Pitzer kernel: Debye-Hückel slope against IAPWS, and internal consistency.

The osmotic coefficients of real systems against Robinson & Stokes (1959) are
in tests/test_salt_systems.py.
"""

import math
import warnings

import numpy as np
import pytest
import scipy.constants as sc
from hypothesis import given, strategies as st
from iapws._iapws import _Dielectric, _Liquid, _Supercooled

from wetcycle.salts import pitzer as pz


def _aphi_iapws(T):
    """A_phi from its definition (Pitzer 1991 eq. 3.3) with IAPWS G12-15 / IAPWS-95
    density and the IAPWS R8-97 dielectric constant at 0.1 MPa."""
    P = 0.101325
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        rho = _Supercooled(T, P)["rho"] if T < 300 else _Liquid(T, P)["rho"]
        eps = _Dielectric(rho, T)
    return (1 / 3) * math.sqrt(2 * math.pi * sc.N_A * rho) * (
        sc.e**2 / (4 * math.pi * sc.epsilon_0 * eps * sc.k * T)) ** 1.5


@pytest.mark.parametrize("T", np.arange(260.0, 373.2, 9.0))
def test_aphi_matches_iapws_derived_values(T):
    # The quartic was fitted to these values; max deviation of the fit 4e-4 (relative).
    assert pz.aphi_kernel(T) == pytest.approx(_aphi_iapws(T), rel=5e-4)


def test_aphi_published_25C():
    # Pitzer (1991), Table 1 of ch. 3: A_phi = 0.391 at 25 °C (0.3915 in Archer & Wang
    # 1990, J. Phys. Chem. Ref. Data 19, 371); tolerance 0.1 %.
    assert pz.aphi_kernel(298.15) == pytest.approx(0.3915, rel=1e-3)


def test_aphi_flags_outside_range():
    assert math.isnan(pz.aphi_kernel(140.0))
    assert math.isnan(pz.aphi_kernel(400.0))


def _p(charges, b0, b1, b2, cphi, alpha1=2.0, alpha2=0.0):
    c = np.zeros((4, 4))
    c[0, 0], c[1, 0], c[2, 0], c[3, 0] = b0, b1, b2, cphi
    return pz.pack(*charges, alpha1, alpha2, c)


# (nu_M, nu_X, z_M, z_X): 1:1, 2:1, 1:2, 2:2, 3:1, 3:2
CASES = [
    ((1, 1, 1, -1), (0.0765, 0.2664, 0.0, 0.00127), (2.0, 0.0)),
    ((1, 2, 2, -1), (0.3159, 1.614, 0.0, -0.00034), (2.0, 0.0)),
    ((2, 1, 1, -2), (0.01958, 1.113, 0.0, 0.00497), (2.0, 0.0)),
    ((1, 1, 2, -2), (0.2210, 3.343, -37.23, 0.025), (1.4, 12.0)),
    ((1, 3, 3, -1), (0.5882, 5.600, 0.0, -0.0247), (2.0, 0.0)),
    ((2, 3, 3, -2), (0.7, 10.0, -100.0, 0.01), (1.4, 12.0)),
]


@pytest.mark.parametrize("charges,params,alphas", CASES)
def test_gibbs_duhem_consistency(charges, params, alphas):
    # Thermodynamic identity (Gibbs-Duhem; common practice): for a single salt,
    # d[m(phi - 1)]/dm = m d(ln gamma±)/dm.  Checked by central differences.
    p = _p(charges, *params, *alphas)
    T = 298.15
    for m in (0.05, 0.3, 1.0, 2.5):
        h = 1e-5 * m
        lhs = ((m + h) * (pz.osmotic_kernel(m + h, T, p) - 1) - (m - h) * (pz.osmotic_kernel(m - h, T, p) - 1)) / (2 * h)
        rhs = m * (pz.ln_gamma_kernel(m + h, T, p) - pz.ln_gamma_kernel(m - h, T, p)) / (2 * h)
        assert lhs == pytest.approx(rhs, rel=1e-6, abs=1e-9)


@pytest.mark.parametrize("charges,params,alphas", CASES)
def test_debye_huckel_limiting_law(charges, params, alphas):
    # Debye-Hückel limiting law (common practice): phi - 1 -> -|z+ z-| A_phi sqrt(I)/3 ... here
    # ln gamma± -> -|z+ z-| A_phi (sqrt I / (1 + b sqrt I) + 2/b ln(1 + b sqrt I)) ~ -3 |z z| A_phi sqrt(I)
    # as m -> 0 (Pitzer 1991 with b = 1.2, first order in sqrt I).
    p = _p(charges, *params, *alphas)
    num, nux, zm, zx = charges
    m = 1e-11
    ionic = 0.5 * m * (num * zm**2 + nux * zx**2)
    expect = -3 * abs(zm * zx) * pz.aphi_kernel(298.15) * math.sqrt(ionic)
    assert pz.ln_gamma_kernel(m, 298.15, p) == pytest.approx(expect, rel=1e-3)


def test_temperature_function_form():
    # p(Tr) = c0 by construction of the form (DESIGN: p(T) = c0 + c1 (1/T - 1/Tr) + ...).
    assert pz.temperature_function(1.0, 5.0, 7.0, 9.0, 298.15) == pytest.approx(1.0)
    v = pz.temperature_function(0.0, 1.0, 1.0, 1.0, 250.0)
    assert v == pytest.approx((1 / 250 - 1 / 298.15) + math.log(250 / 298.15) + (250 - 298.15))


@given(st.floats(0.01, 5.0), st.floats(230.0, 320.0))
def test_invariant_inverse_water_activity_roundtrip(m, T):
    # Invariant: molality_at_ln_aw inverts ln a_w (NaCl 25 °C parameters, T-independent).
    p = _p((1, 1, 1, -1), 0.0765, 0.2664, 0.0, 0.00127)
    lnaw = pz.ln_aw_kernel(m, T, p)
    assert pz.molality_at_ln_aw_kernel(lnaw, T, p, 8.0) == pytest.approx(m, rel=1e-8)
