"""The surface layer (wetcycle.forcing.surface_layer) against limit laws and the Viking landers'
published noon heat flux."""

import math

import numpy as np
import pytest
from scipy.integrate import quad

from wetcycle.forcing import surface_layer as sl
from wetcycle.forcing.atmosphere import CP_AIR_MARS

G_MARS = 3.71
R_AIR = 8.314462618 / 0.04334          # Mars air, J kg-1 K-1
Z_SENSOR = 1.6                          # Viking meteorology sensor height [m]


def _rho_cp(p, t):
    return p / (R_AIR * t) * CP_AIR_MARS


def test_neutral_limit_is_the_log_law():
    # Common practice (Stull 1988, sec. 9.7): with a vanishing flux the profile is logarithmic,
    # T_s - T(z) = Q ln(z / z0h) / (kappa u*); the tiny flux leaves a stability term of order
    # z / |L| ~ 1e-7, hence rel 1e-5
    q, us = 1e-6, 0.3
    got = 250.0 - sl.sensor_temperature(250.0, 200.0, q, us, G_MARS, Z_SENSOR, 0.01, math.log(160.0))
    assert got == pytest.approx(q * math.log(160.0) / (0.4 * us), rel=1e-5)


@pytest.mark.parametrize("q", [0.05, 0.5, 2.0])
def test_unstable_profile_is_the_integral_of_businger_dyer_phi(q):
    # Paulson (1970)'s closed form must equal the integral of phi_h / (kappa z) with Dyer
    # (1974)'s phi_h = (1 - 16 z/L)^(-1/2) (both from memory), computed here by quadrature
    # (scipy); quadrature error << 1e-8 relative
    us, t0, tl = 0.4, 250.0, 150.0
    inv_l = -0.4 * G_MARS * q / (us ** 3 * 0.5 * (t0 + tl))
    integral, _ = quad(lambda z: (1.0 - 16.0 * z * inv_l) ** -0.5 / z, 0.01, Z_SENSOR, epsabs=0, epsrel=1e-12)
    want = q / (0.4 * us) * integral
    got = t0 - sl.sensor_temperature(t0, tl, q, us, G_MARS, Z_SENSOR, 0.01, math.log(160.0))
    assert got == pytest.approx(want, rel=1e-8)
    # and instability shortens the distance: less difference than the neutral log law
    assert got < q * math.log(160.0) / (0.4 * us)


def test_stable_profile_is_log_linear_and_capped():
    # Dyer (1974) / Webb (1970) stable form, phi_h = 1 + 5 z/L (from memory): the integral is
    # ln(z/z0h) + 5 (z - z0h)/L, used to z/L = 1 and held there beyond (rel 1e-12: rounding)
    us, ts, tl = 0.3, 190.0, 260.0
    for q in (-0.001, -0.01):
        inv_l = -0.4 * G_MARS * q / (us ** 3 * 0.5 * (ts + tl))
        zeta = min(Z_SENSOR * inv_l, 1.0)
        zeta0 = min(0.01 * inv_l, 1.0)
        want = ts - q * (math.log(160.0) + 5.0 * (zeta - zeta0)) / (0.4 * us)
        got = sl.sensor_temperature(ts, tl, q, us, G_MARS, Z_SENSOR, 0.01, math.log(160.0))
        assert got == pytest.approx(want, rel=1e-12)
    # a strong stable flux: the profile would overshoot the air above; it is held there
    assert sl.sensor_temperature(ts, 200.0, -0.5, 0.05, G_MARS, Z_SENSOR, 0.01, math.log(160.0)) == 200.0


def _flux_for_difference(dt, us, z0h, p=765.0, t_air=240.0):
    """Sensible heat [W m-2] whose Monin-Obukhov profile puts the air at 1.6 m ``dt`` below
    the ground (bisection on sensor_temperature)."""
    ts = t_air + dt
    rcp = _rho_cp(p, 0.5 * (ts + t_air))
    lo, hi = 0.0, 200.0
    for _ in range(80):
        h = 0.5 * (lo + hi)
        d = ts - sl.sensor_temperature(ts, 100.0, h / rcp, us, G_MARS, Z_SENSOR, z0h, math.log(Z_SENSOR / z0h))
        lo, hi = (h, hi) if d < dt else (lo, h)
    return h


def test_viking_noon_flux_from_the_published_difference_and_friction_velocity():
    # Sutton, Leovy & Tillman (1978), J. Atmos. Sci. 35, 2346 (read as an abstract): at Viking
    # Lander 1 in its first 45 sols the noon sensible heat flux was 15-20 W m-2, derived by
    # similarity from a ground-air difference of ~20-30 K at 1.6 m; friction velocity 0.4-0.6
    # m s-1 in late morning; "the roughness length is the main uncertainty".  Mean pressure 765
    # Pa (Hess et al. 1976, read), air ~240 K at noon (same, read).  At the middle of their
    # ranges (25 K, 0.5 m s-1) our Businger-Dyer profile must give their flux for a roughness
    # length between ~1 cm (Viking Lander 2, Tillman et al. 1994, read) and 3 cm (Pathfinder's
    # windsocks, Sullivan et al. 2000, read): the two roughness lengths bracket 15-20 W m-2.
    h_smooth = _flux_for_difference(25.0, 0.5, 0.01)
    h_rough = _flux_for_difference(25.0, 0.5, 0.03)
    assert h_smooth < h_rough
    assert h_smooth <= 20.0 and h_rough >= 15.0
    # ...and no roughness in that range gives a flux far outside theirs (within 30 %, about the
    # spread the 0.4-0.6 m s-1 friction velocity alone allows)
    assert 0.7 * 15.0 <= h_smooth and h_rough <= 1.3 * 20.0


def test_bulk_transfer_reproduces_the_viking_noon_flux_at_their_wind():
    # The column kernel's bulk form (Louis stability + gustiness, transfer_velocity), given the
    # published noon ground-air difference (20-30 K) and the wind Sutton et al.'s friction
    # velocity implies at 1.6 m (u* 0.4-0.6 m s-1, neutral log law over z0 = 1 cm: 5-7.6 m s-1),
    # must give their 15-20 W m-2 (Sutton, Leovy & Tillman 1978, read).  Tolerance: the
    # flux for the mid values within 15-20 W m-2 widened by 25 % (their u* and difference
    # ranges each move it by more), and the corners bracket the published range.
    cn = sl.neutral_coefficient(Z_SENSOR, 0.01, 0.01)
    lu = sl.unstable_constant(Z_SENSOR, 0.01, 0.01)

    def flux(dt, us, t_air=240.0, p=765.0, depth=4000.0):
        ts = t_air + dt
        u = us / 0.4 * math.log(Z_SENSOR / 0.01)
        rcp = _rho_cp(p, t_air)
        h = 10.0
        for _ in range(50):          # the convective velocity from the flux itself (fixed point)
            ws = sl.convective_velocity(h, rcp / CP_AIR_MARS, CP_AIR_MARS, t_air, G_MARS, depth)
            h = rcp * sl.transfer_velocity(G_MARS * Z_SENSOR, ts, t_air, u, ws, cn, lu) * dt
        return h

    mid = flux(25.0, 0.5)
    assert 0.75 * 15.0 <= mid <= 1.25 * 20.0
    assert flux(20.0, 0.4) <= 20.0 and flux(30.0, 0.6) >= 15.0

