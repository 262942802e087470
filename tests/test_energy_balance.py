"""Surface energy balance, CO2 frost and the numba kernel (wetcycle.forcing.energy)."""

import numpy as np
import pytest

from wetcycle.clock import make_clock
from wetcycle.errors import ValidityError
from wetcycle.forcing import driver as dr
from wetcycle.forcing import energy as en
from wetcycle.forcing import regolith as rg
from wetcycle.orbit import MARS

SOL = MARS.sol_s
YEAR = SOL * MARS.year_sols


def _model(clock, lat, lon=0.0, ti=250.0, theta=0.5, **kw):
    lat = np.atleast_1d(np.asarray(lat, dtype=float))
    cols = rg.build_columns(np.broadcast_to(ti, lat.shape), 1500.0, 800.0, SOL, YEAR)
    return en.prepare_energy(cols, clock.dt_s, latitude_deg=lat, longitude_deg=lon, albedo=0.25,
                             emissivity=0.95, theta=theta, **kw)


def _inputs(clock):
    h0 = clock.hour_angle_rad(0.0) + np.pi / clock.steps_per_sol
    return clock.declination_rad, clock.distance_au, h0


def test_co2_frost_point_against_handbook():
    # Sublimation point of CO2 at 1 atm: 194.7 K (CRC Handbook of Chemistry and
    # Physics; from memory).  Tolerance 1 K: the fit targets Mars pressures
    # (James et al. 1992), 2.5 decades lower.
    assert en.co2_frost_point(101325.0) == pytest.approx(194.7, abs=1.0)
    # Mars surface: ~148 K at 6.1 mbar (common practice, from memory); 1 K.
    assert en.co2_frost_point(610.0) == pytest.approx(148.0, abs=1.0)
    # Clausius-Clapeyron consistency: d ln p / d(1/T) = -L M / R with the latent
    # heat used here (5.9e5 J/kg, M = 0.04401 kg/mol, R = 8.314462618): within 3 %
    # (the fit's slope 3167.8 K vs L M / R = 3123 K).
    assert 3167.8 == pytest.approx(en.LATENT_HEAT_CO2 * 0.04401 / 8.314462618, rel=0.03)
    with pytest.raises(ValidityError, match="surface_pressure"):
        en.co2_frost_point(1.0)


def test_numba_kernel_matches_straightforward_reference():
    # Same physics, two algorithms (bottom-up elimination + scalar Newton vs stacked
    # banded solve with linearised emission): agree to 1e-8 K (rounding and Newton
    # tolerance), with slopes, a second layer, a salt depth and CO2 frost.
    clock = make_clock("mars", steps_per_sol=48, n_sols=4, start_ls=80.0)
    n = 5
    cols = rg.build_columns([150.0, 250.0, 400.0, 800.0, 250.0], 1500.0, 800.0, SOL, YEAR,
                            layer2_depth=[np.inf, 0.05, np.inf, 0.1, np.inf],
                            layer2_inertia=2000.0, layer2_density=2000.0,
                            layer2_heat_capacity=1000.0)
    m = en.prepare_energy(cols, clock.dt_s, latitude_deg=[0.0, -80.0, 30.0, -60.0, 65.0],
                          longitude_deg=[0.0, 50.0, 100.0, 200.0, 300.0],
                          albedo=[0.1, 0.2, 0.25, 0.3, 0.15], emissivity=0.95,
                          slope_deg=[0, 0, 20, 10, 30], slope_azimuth_deg=[0, 0, 180, 90, 0],
                          probe_depth=[0.0, 0.01, 0.02, 0.0, 0.005])
    st = m.initial_state([210.0, 150.0, 200.0, 170.0, 190.0])
    args = (*_inputs(clock), 0.4, np.linspace(500, 800, n))
    _, fast = en.energy_block(m, st, *args)
    _, ref = en.energy_block_reference(m, st, *args, newton_iterations=6)
    for k in fast:
        np.testing.assert_allclose(fast[k], ref[k], rtol=0, atol=1e-8)
    assert fast["co2_frost"][-1, 1] > 0.0       # the polar cell did form frost


def test_energy_closes_every_step():
    # absorbed - emitted - conducted + latent - stored = 0 per step: the Newton
    # iteration converged and the bookkeeping is exact.  Tolerance 1e-6 W m-2
    # (Newton tolerance 1e-7 K times dR/dT ~ 10 W m-2 K-1).
    clock = make_clock("mars", steps_per_sol=48, n_sols=3, start_ls=100.0)
    m = _model(clock, [0.0, -75.0, 45.0])
    _, out = en.energy_block(m, m.initial_state([220.0, 150.0, 190.0]), *_inputs(clock), 0.3,
                             600.0, diagnostics=True)
    res = out["absorbed"] - out["emitted"] - out["conducted"] + out["latent"] - out["stored"]
    assert np.max(np.abs(res)) < 1e-6
    assert np.max(out["latent"][:, 1]) > 0.0     # condensation at the polar cell


def test_annual_energy_closure_after_spin_up():
    # First law over a periodic year (common practice): with an insulated bottom, the annual
    # mean of the net flux into the ground (absorbed sunlight and sky infrared - emission -
    # sensible heat + latent heat of CO2 frost, as the coupled column computes it) vanishes.
    # Tolerance 0.5 W m-2 (issue requirement; a spin-up tolerance of 0.05 K is << 0.1 W m-2).
    clock = make_clock("mars", steps_per_sol=24, n_sols=int(round(MARS.year_sols)), start_ls=0.0)
    cells = dr.make_cells([0.0, 70.0], [0.0, 0.0])
    model = dr.prepare_forcing(cells, clock, dr.ForcingOptions(dust=0.3))
    su = dr.spin_up(model, clock, tol_k=0.05, max_years=20)
    assert su.converged
    parts = [out for _, _, out in dr.iter_forcing(model, su.state, clock)]
    g = np.concatenate([o["ground_heat_flux"] for o in parts])
    co2 = np.concatenate([o["co2_frost"] for o in parts])
    assert np.all(np.abs(g.mean(axis=0)) < 0.5), g.mean(axis=0)
    # the high-latitude cell had a CO2 frost season, and the equator none
    assert co2[:, 1].max() > 10.0 and co2[:, 0].max() == 0.0


def test_co2_frost_forms_at_polar_cell_in_winter_not_at_equator():
    # Southern winter (Ls 60-100): the pole is in polar night, the surface cools to
    # the CO2 frost point and holds there while frost accumulates; the equator never
    # reaches ~148 K.  Frost point at 600 Pa from co2_frost_point (James et al. 1992).
    clock = make_clock("mars", steps_per_sol=24, n_sols=40, start_ls=60.0)
    m = _model(clock, [-85.0, 0.0])
    _, out = en.energy_block(m, m.initial_state([170.0, 210.0]), *_inputs(clock), 0.3, 600.0)
    tf = float(en.co2_frost_point(600.0))
    frost = out["co2_frost"]
    assert frost[-1, 0] > 1.0 and np.all(np.diff(frost[-200:, 0]) >= 0)
    np.testing.assert_allclose(out["surface_temperature"][-200:, 0], tf, rtol=0, atol=1e-9)
    assert frost[:, 1].max() == 0.0 and out["surface_temperature"][:, 1].min() > tf + 20.0


def test_frost_sublimes_in_spring_and_surface_warms():
    # Start with 5 kg m-2 of frost at 60 S in late southern spring (Ls 230): the
    # budget removes it and the surface then warms above the frost point.
    clock = make_clock("mars", steps_per_sol=24, n_sols=20, start_ls=230.0)
    m = _model(clock, [-60.0])
    st = m.initial_state([150.0])
    st = en.EnergyState(st.temperature, np.array([5.0]))
    _, out = en.energy_block(m, st, *_inputs(clock), 0.3, 600.0)
    assert out["co2_frost"][-1, 0] == 0.0
    assert out["surface_temperature"][-24:, 0].max() > 220.0


def _last_sol(spd, theta):
    clock = make_clock("mars", steps_per_sol=spd, n_sols=3, start_ls=200.0)
    m = _model(clock, [0.0, -30.0], lon=[0.0, 40.0], ti=[250.0, 120.0], theta=theta)
    _, out = en.energy_block(m, m.initial_state([210.0, 200.0]), *_inputs(clock), 0.3, 600.0)
    return out["surface_temperature"][-spd:]


def test_surface_temperature_converges_as_step_halves():
    # Against a run with 16 x finer steps, the mean error of the last sol shrinks by
    # > 2.5x per halving of the step with Crank-Nicolson (second order where the
    # forcing is smooth; observed 3.4x and 5.9x) and ~2x with backward Euler (first
    # order; accepted 1.6-2.6x).  The max-norm is limited by the insolation kinks at
    # sunrise and sunset, so it is only required to decrease.
    for theta, lo, hi in ((0.5, 2.5, 100.0), (1.0, 1.6, 2.6)):
        fine = _last_sol(768, theta)
        errs = []
        for spd in (48, 96, 192):
            n = 768 // spd
            e = _last_sol(spd, theta) - fine[n - 1::n]
            errs.append((np.abs(e).mean(), np.abs(e).max()))
        for (m1, x1), (m2, x2) in zip(errs[:-1], errs[1:]):
            assert lo < m1 / m2 < hi
            assert x2 < x1


def test_equatorial_diurnal_range_plausible():
    # Order-of-magnitude check (no outside source beyond common knowledge of Mars
    # equatorial surface temperatures, ~170-290 K): a bare equatorial cell with
    # I = 250, A = 0.25 near perihelion.
    clock = make_clock("mars", steps_per_sol=48, n_sols=8, start_ls=250.0)
    m = _model(clock, [0.0])
    _, out = en.energy_block(m, m.initial_state([205.0]), *_inputs(clock), 0.3, 600.0)
    last = out["surface_temperature"][-48:, 0]
    assert 160.0 < last.min() < 200.0 and 270.0 < last.max() < 310.0


def test_vectorisable_exponential_matches_libm():
    # exp_neg (scaling and squaring) against math.exp on [-50, 0]: relative error
    # < 1e-9 (its documented accuracy; insolation needs ~1e-6).
    import math
    for x in np.concatenate([np.linspace(-50.0, 0.0, 2001), [-1e-9, -0.0]]):
        assert en.exp_neg(x) == pytest.approx(math.exp(x), rel=1e-9)
    assert en.exp_neg(-1e6) < 1e-21


@pytest.mark.parametrize("seed", [0, 1, 2])
def test_frost_never_negative_and_energy_closes_random_cells(seed):
    # Invariants over random invented cells: CO2 frost >= 0 and the per-step surface
    # energy budget closes (1e-6 W m-2, Newton tolerance), whatever the properties.
    rng = np.random.default_rng(seed)
    n = 70                                     # more than one cell block, with padding
    clock = make_clock("mars", steps_per_sol=24, n_sols=6, start_ls=rng.uniform(0, 360))
    cols = rg.build_columns(rng.uniform(40, 1500, n), rng.uniform(1000, 2000, n),
                            rng.uniform(600, 1000, n), SOL, YEAR)
    m = en.prepare_energy(cols, clock.dt_s, latitude_deg=rng.uniform(-90, 90, n),
                          longitude_deg=rng.uniform(0, 360, n), albedo=rng.uniform(0.05, 0.4, n),
                          emissivity=rng.uniform(0.85, 1.0, n), slope_deg=rng.uniform(0, 40, n),
                          slope_azimuth_deg=rng.uniform(0, 360, n))
    st = m.initial_state(rng.uniform(150, 250, n))
    _, out = en.energy_block(m, st, *_inputs(clock), rng.uniform(0, 3, n), rng.uniform(100, 1200, n),
                             diagnostics=True)
    assert np.all(out["co2_frost"] >= 0.0)
    res = out["absorbed"] - out["emitted"] - out["conducted"] + out["latent"] - out["stored"]
    assert np.max(np.abs(res)) < 1e-6


@pytest.mark.parametrize("n", [1, 32, 64, 70])
def test_block_call_leaves_the_input_state_untouched(n):
    # Regression: with a cell count that fills whole blocks the blocked copy must
    # still be a copy (the state passed in is the caller's, e.g. for a restart).
    clock = make_clock("mars", steps_per_sol=24, n_sols=2, start_ls=60.0)
    m = _model(clock, np.linspace(-89, 89, n))
    st = m.initial_state(150.0)
    t_before, m_before = st.temperature.copy(), st.co2_frost.copy()
    new, out = en.energy_block(m, st, *_inputs(clock), 0.3, 600.0)
    np.testing.assert_array_equal(st.temperature, t_before)
    np.testing.assert_array_equal(st.co2_frost, m_before)
    assert out["co2_frost"][-1].max() > 0.0 and new.co2_frost.max() > 0.0
