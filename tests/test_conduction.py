"""Regolith conduction scheme (wetcycle.forcing.regolith)."""

import numpy as np
import pytest

from wetcycle.errors import ConfigError, ValidityError
from wetcycle.forcing import regolith as rg

SOL = 88775.244      # Mars mean solar day [s] (Allison & McEwen 2000)
YEAR = SOL * 668.59  # Mars tropical year [s]
RHO, CP = 1500.0, 800.0


def _periodic_run(ti, steps, theta=0.5, periods=4, f=0.1, stretch=1.2, depths=(0.5, 1.0, 2.0)):
    """Prescribed T_s = Tm + A cos(w t); return amplitude ratio and phase lag at depths [delta]."""
    ti = np.atleast_1d(np.asarray(ti, dtype=float))
    cols = rg.build_columns(ti, RHO, CP, SOL, SOL, first_layer_fraction=f, stretch=stretch,
                            annual_depths=8.0)        # reach 8 skin depths: no bottom reflection
    delta = rg.skin_depth(ti, RHO, CP, SOL)
    dt = SOL / steps
    fac = rg.factorize(cols, dt, theta)
    w = 2 * np.pi / SOL
    tm, amp = 200.0, 50.0
    z = cols.depth
    t_init = tm + amp * np.exp(-z / delta) * np.cos(-z / delta)
    t = dt * np.arange(1, periods * steps + 1)
    ts = (tm + amp * np.cos(w * t))[:, None] * np.ones(ti.size)
    out = []
    for k in depths:
        idx, wt = rg.probe_weights(cols, k * delta)
        _, probe = rg.conduct_prescribed(t_init, ts, fac, idx, wt)
        last = slice(-steps, None)
        c = 2 / steps * np.sum((probe[last] - tm) * np.cos(w * t[last])[:, None], axis=0)
        s = 2 / steps * np.sum((probe[last] - tm) * np.sin(w * t[last])[:, None], axis=0)
        out.append((np.hypot(c, s) / amp, np.arctan2(s, c), probe[last]))
    return out, t[-steps:], delta


def test_half_space_periodic_solution():
    # Carslaw & Jaeger (1959), Conduction of Heat in Solids, sec. 2.6: for a periodic
    # surface temperature the amplitude decays as exp(-z/delta) and the phase lags
    # by z/delta, delta = sqrt(kappa P / pi).  Tolerances (amplitude within 0.5 % of
    # the surface amplitude, phase within 0.01 rad per skin depth): second-order
    # spatial error of the default grid (first layer 0.1 delta, stretch 1.2; elements
    # grow with depth), measured 0.1-0.3 % and 0.002-0.016 rad; the Crank-Nicolson
    # time error is ~1e-4.  The same dimensionless answer for three inertias.
    res, _, _ = _periodic_run([60.0, 250.0, 1200.0], steps=96)
    for k, (ratio, lag, _) in zip((0.5, 1.0, 2.0), res):
        np.testing.assert_allclose(ratio, np.exp(-k), rtol=0, atol=0.005)
        np.testing.assert_allclose(lag, k, rtol=0, atol=0.01 * max(k, 1.0))


def test_half_space_pointwise():
    # Same solution, compared at every step of the last period at z = delta:
    # max error below 1 % of the surface amplitude (reason as above).
    res, t, delta = _periodic_run([250.0], steps=96, depths=(1.0,))
    w = 2 * np.pi / SOL
    exact = 200.0 + 50.0 * np.exp(-1.0) * np.cos(w * t - 1.0)
    assert np.max(np.abs(res[0][2][:, 0] - exact)) < 0.01 * 50.0


def test_backward_euler_also_converges_to_the_solution():
    # theta = 1 is first order in time: larger but bounded error (3 % of amplitude).
    res, _, _ = _periodic_run([250.0], steps=96, theta=1.0, depths=(1.0,))
    np.testing.assert_allclose(res[0][0], np.exp(-1.0), rtol=0.03)


def _probe_series(steps, theta):
    res, _, _ = _periodic_run([250.0], steps=steps, theta=theta, periods=2, depths=(1.0,))
    return res[0][2][:, 0]


@pytest.mark.parametrize("theta, order", [(0.5, 2.0), (1.0, 1.0)])
def test_time_step_convergence(theta, order):
    # Halving the step: Crank-Nicolson (Crank & Nicolson 1947) is second order,
    # backward Euler first order (common practice).  Self-convergence on a fixed
    # grid removes the spatial error: successive differences shrink by 2**order.
    # Tolerance +-0.5 on the observed order: pre-asymptotic range at 48-192 steps.
    a, b, c = (_probe_series(n, theta) for n in (48, 96, 192))
    d1 = np.max(np.abs(a - b[1::2]))
    d2 = np.max(np.abs(b - c[1::2]))
    observed = np.log2(d1 / d2)
    assert abs(observed - order) < 0.5


def test_skin_depth_formula():
    # delta = sqrt(kappa P / pi), kappa = I^2 / (rho c)^2 (Carslaw & Jaeger 1959);
    # hand computation for I = 250, rho c = 1.2e6, P = 88775 s.
    kappa = 250.0**2 / (1.2e6) ** 2
    assert rg.skin_depth(250.0, 1500.0, 800.0, 88775.0) == pytest.approx(
        np.sqrt(kappa * 88775.0 / np.pi), rel=1e-12)


def test_grid_resolves_diurnal_and_reaches_annual_depths():
    cols = rg.build_columns([50.0, 300.0, 2000.0], RHO, CP, SOL, YEAR)
    d_day = rg.skin_depth([50.0, 300.0, 2000.0], RHO, CP, SOL)
    d_year = rg.skin_depth([50.0, 300.0, 2000.0], RHO, CP, YEAR)
    np.testing.assert_allclose(cols.depth[1], 0.1 * d_day, rtol=1e-12)
    assert np.all(cols.depth[-1] >= 3.0 * d_year)


def test_steady_two_layer_profile_with_geothermal_flux():
    # Steady conduction (Fourier's law): with a constant surface temperature and an
    # upward flux F at the bottom, T rises by F dz / k in each layer.  A 20 cm top
    # layer of I = 200 over an ice-cemented layer of I = 2000.  Backward Euler with a
    # huge step reaches the steady state exactly (to rounding) in a few steps.
    cols = rg.build_columns([200.0], RHO, CP, SOL, YEAR, layer2_depth=[0.2],
                            layer2_inertia=2000.0, layer2_density=2000.0,
                            layer2_heat_capacity=1000.0)
    F = 0.03
    fac = rg.factorize(cols, 1e12, theta=1.0, geothermal_flux=F)
    t0 = np.full((cols.n_nodes, 1), 200.0)
    final, _ = rg.conduct_prescribed(t0, np.full((20, 1), 200.0), fac)
    k1 = 200.0**2 / (RHO * CP)
    k2 = 2000.0**2 / (2000.0 * 1000.0)
    z = cols.depth[:, 0]
    expected = np.where(z <= 0.2, 200.0 + F * z / k1, 200.0 + F * 0.2 / k1 + F * (z - 0.2) / k2)
    np.testing.assert_allclose(final[:, 0], expected, rtol=0, atol=1e-7)


def test_probe_interpolation_is_linear():
    cols = rg.build_columns([250.0], RHO, CP, SOL, YEAR)
    z = cols.depth[:, 0]
    profile = (3.0 + 2.0 * z)[:, None]
    for depth in (0.0, 0.004, 0.0123, z[-1]):
        i, w = rg.probe_weights(cols, depth)
        val = (1 - w) * profile[i, 0] + w * profile[i + 1, 0]
        assert val[0] == pytest.approx(3.0 + 2.0 * depth, rel=1e-12)


def test_bad_inputs_raise():
    with pytest.raises(ValidityError, match="thermal_inertia"):
        rg.build_columns([1.0], RHO, CP, SOL, YEAR)
    with pytest.raises(ConfigError, match="n_layers"):
        rg.build_columns([250.0], RHO, CP, SOL, YEAR, n_layers=5)
    cols = rg.build_columns([250.0], RHO, CP, SOL, YEAR)
    with pytest.raises(ValidityError, match="salt_depth"):
        rg.probe_weights(cols, 100.0)
    with pytest.raises(ConfigError, match="theta"):
        rg.factorize(cols, 100.0, theta=0.2)
