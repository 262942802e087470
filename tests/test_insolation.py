"""Insolation on flat and sloped surfaces (wetcycle.forcing.insolation)."""

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from wetcycle.errors import ValidityError
from wetcycle.forcing import insolation as ins

S0 = ins.SOLAR_CONSTANT_1AU
angle = st.floats(-np.pi / 2, np.pi / 2)


def test_solar_constant_value():
    # Kopp & Lean (2011, GRL 38, L01706): 1360.8 +- 0.5 W m-2 at solar minimum
    # (value from memory); tolerance = their stated uncertainty.
    assert abs(S0 - 1360.8) <= 0.5


def test_noon_flux_at_subsolar_point_is_inverse_square():
    # Inverse-square law (common practice): with the Sun overhead and no dust the
    # direct flux is S0 / r**2.  Tolerance: rounding.
    for r in (1.38, 1.52, 1.67):
        for dec in np.deg2rad([-25.0, 0.0, 12.0]):
            direct, diffuse = ins.shortwave_on_slope(dec, dec, 0.0, r, 0.0)
            assert direct == pytest.approx(S0 / r**2, rel=1e-12)
            assert diffuse == pytest.approx(0.0, abs=1e-12)


def test_daily_mean_at_pole_in_summer_matches_hand_formula():
    # At the pole mu0 = sin(declination) all day, so the diurnal mean is
    # S0/r^2 sin(delta) (hand formula, common practice).  Checked both for the
    # closed form and for the hourly average of the instantaneous flux.
    r, dec = 1.5, np.deg2rad(25.19)
    hand = S0 / r**2 * np.sin(dec)
    assert ins.daily_mean_toa_insolation(np.pi / 2, dec, r) == pytest.approx(hand, rel=1e-12)
    h = np.linspace(-np.pi, np.pi, 481)[:-1]
    direct, _ = ins.shortwave_on_slope(np.pi / 2, dec, h, r, 0.0)
    assert direct.mean() == pytest.approx(hand, rel=1e-12)
    # polar night: nothing
    assert ins.daily_mean_toa_insolation(-np.pi / 2, dec, r) == pytest.approx(0.0, abs=1e-9)


def test_daily_mean_equator_equinox():
    # Equator at equinox: mean of max(cos h, 0) over a day is 1/pi (hand formula).
    assert ins.daily_mean_toa_insolation(0.0, 0.0, 1.0) == pytest.approx(S0 / np.pi, rel=1e-12)
    # and the closed form agrees with a numerical average at an arbitrary latitude
    phi, dec = np.deg2rad(-37.0), np.deg2rad(14.0)
    h = np.linspace(-np.pi, np.pi, 20001)[:-1]
    mu = np.maximum(ins.cos_solar_zenith(phi, dec, h), 0.0)
    # tolerance: rectangle rule error of the kinked integrand at sunrise/sunset
    assert ins.daily_mean_toa_insolation(phi, dec, 1.0) == pytest.approx(S0 * mu.mean(), rel=1e-6)


def test_slope_facing_the_sun_gets_more():
    # Southern mid-latitude noon in southern winter: the Sun is to the north, so a
    # north-facing slope faces it and a south-facing one turns away.
    phi, dec = np.deg2rad(-45.0), np.deg2rad(20.0)
    flat, _ = ins.shortwave_on_slope(phi, dec, 0.0, 1.5, 0.0)
    north, _ = ins.shortwave_on_slope(phi, dec, 0.0, 1.5, 0.0, np.deg2rad(20.0), 0.0)
    south, _ = ins.shortwave_on_slope(phi, dec, 0.0, 1.5, 0.0, np.deg2rad(20.0), np.pi)
    assert north > flat > south
    # exact value: incidence angle = zenith angle - slope (common practice)
    zen = np.arccos(ins.cos_solar_zenith(phi, dec, 0.0))
    assert north == pytest.approx(S0 / 1.5**2 * np.cos(zen - np.deg2rad(20.0)), rel=1e-12)


@settings(max_examples=200, deadline=None)
@given(phi=st.floats(-1.3, 1.3), dec=st.floats(-0.44, 0.44), h=st.floats(-np.pi, np.pi),
       beta=st.floats(0.0, 0.25))
def test_equator_facing_slope_equals_flat_ground_at_shifted_latitude(phi, dec, h, beta):
    # A slope beta facing the equator at latitude phi is parallel to flat ground at
    # latitude phi -+ beta on the same meridian ("equivalent latitude", spherical
    # geometry, common practice).  Tolerance: rounding.
    az = np.pi if phi >= 0 else 0.0
    phi_eq = phi - beta if phi >= 0 else phi + beta
    lhs = ins.cos_incidence(phi, dec, h, beta, az)
    rhs = ins.cos_solar_zenith(phi_eq, dec, h)
    assert lhs == pytest.approx(rhs, abs=1e-12)


def test_beer_lambert_direct_beam():
    # Direct beam on a horizontal surface = F mu0 exp(-tau/mu0) (Beer-Lambert).
    phi, dec, h = np.deg2rad(30.0), np.deg2rad(5.0), 0.7
    mu0 = ins.cos_solar_zenith(phi, dec, h)
    for tau in (0.0, 0.3, 1.0, 3.0):
        direct, diffuse = ins.shortwave_on_slope(phi, dec, h, 1.5, tau)
        assert direct == pytest.approx(S0 / 1.5**2 * mu0 * np.exp(-tau / mu0), rel=1e-12)
        expected_diffuse = 0.5 * S0 / 1.5**2 * mu0 * (1 - np.exp(-tau / mu0))
        assert diffuse == pytest.approx(expected_diffuse, rel=1e-12, abs=1e-12)


@settings(max_examples=200, deadline=None)
@given(phi=angle, dec=st.floats(-0.44, 0.44), h=st.floats(-np.pi, np.pi),
       tau=st.floats(0.0, 10.0), fd=st.floats(0.0, 1.0))
def test_flat_surface_never_gets_more_than_top_of_atmosphere(phi, dec, h, tau, fd):
    # Invariant: extinction only removes light, so direct + diffuse <= F max(mu0, 0).
    direct, diffuse = ins.shortwave_on_slope(phi, dec, h, 1.5, tau, diffuse_fraction=fd)
    top = S0 / 1.5**2 * max(ins.cos_solar_zenith(phi, dec, h), 0.0)
    assert direct >= 0 and diffuse >= 0
    assert direct + diffuse <= top * (1 + 1e-12) + 1e-12


def test_kernel_matches_numpy_path():
    # The scalar numba kernel and the NumPy reference give the same numbers.
    rng = np.random.default_rng(3)
    for _ in range(50):
        phi, dec, h = rng.uniform(-1.4, 1.4), rng.uniform(-0.44, 0.44), rng.uniform(-np.pi, np.pi)
        beta, az, tau, alb = rng.uniform(0, 0.6), rng.uniform(0, 2 * np.pi), rng.uniform(0, 2), 0.3
        d, f = ins.shortwave_on_slope(phi, dec, h, 1.4, tau, beta, az, alb)
        mu0 = ins.cos_solar_zenith(phi, dec, h)
        cosi = ins.cos_incidence(phi, dec, h, beta, az)
        k = ins.shortwave_kernel(S0 / 1.4**2, mu0, cosi, tau, np.cos(beta), alb, 0.5)
        assert k == pytest.approx(d + f, rel=1e-12, abs=1e-9)


def test_downwelling_infrared_fraction_of_noon_insolation():
    # Kieffer et al. (1977) form: f_IR times noon insolation (from memory).
    phi, dec, r = np.deg2rad(20.0), np.deg2rad(-10.0), 1.6
    noon = S0 / r**2 * np.cos(phi - dec)
    assert ins.downwelling_infrared(phi, dec, r) == pytest.approx(0.04 * noon, rel=1e-12)
    # polar night: zero
    assert ins.downwelling_infrared(np.deg2rad(-89.0), np.deg2rad(24.0), r) == 0.0


def test_out_of_range_inputs_raise():
    with pytest.raises(ValidityError, match="tau"):
        ins.shortwave_on_slope(0.0, 0.0, 0.0, 1.5, 11.0)
    with pytest.raises(ValidityError, match="distance_au"):
        ins.top_of_atmosphere_flux(-1.0)
