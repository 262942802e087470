"""The phase-state kernel: chamber programmes, eutectic behaviour, invariants, convergence.

Outside references: Greenspan (1977, J. Res. NBS 81A, 89) DRH of NaCl at 25 °C = 0.7529;
Gu et al. (2017, RSC Adv. 7, 46866) DRH of Ca(ClO4)2·4H2O, 0.185 at 278 K; the eutectic
temperatures and supercooling limits are those of the systems' data files (themselves
checked against published values in test_salt_references.py).
"""

import math

import numpy as np
import pytest
from hypothesis import given, settings, strategies as st

import wetcycle
from wetcycle import salts
from wetcycle.phase import PhaseModel, states
from wetcycle.water import ice_water_activity, saturation_vapor_pressure_liquid


def ramp(values, n_per):
    out = [np.linspace(a, b, n_per, endpoint=False) for a, b in zip(values[:-1], values[1:])]
    return np.concatenate(out + [[values[-1]]])


def first_change(ds, frm, to):
    ph = ds.phase_state.values
    for i in range(1, ph.size):
        if ph[i - 1] == frm and ph[i] == to:
            return i
    return None


def test_chamber_deliquescence_at_published_drh_nacl():
    # Greenspan (1977): NaCl DRH 0.7529 at 25 °C; 1 % RH as in issue 2 (model vs reference),
    # plus the programme's RH step (5e-4).
    rh = ramp([0.60, 0.85], 500)
    t = np.arange(rh.size) * 60.0
    ds = wetcycle.run_series("NaCl", t, np.full(rh.size, 298.15), rh, law="equilibrium")
    i = first_change(ds, states.CRYSTALLINE, states.BRINE)
    assert i is not None
    assert rh[i] == pytest.approx(0.7529, abs=0.01)
    assert ds.liquid_water[i - 1] == 0 and ds.liquid_water[i] > 0


def test_chamber_efflorescence_only_at_efflorescence_rh():
    # Ca(ClO4)2: deliquescence at the DRH of the tetrahydrate (Gu et al. 2017: 0.185 at 278 K,
    # 0.03 as in test_salt_references), then on drying the brine stays liquid below the DRH and
    # crystallises only at the efflorescence RH of the data file.
    s = salts.load("Ca(ClO4)2")
    rh = ramp([0.10, 0.40, 0.05], 600)
    t = np.arange(rh.size) * 60.0
    ds = wetcycle.run_series("Ca(ClO4)2", t, np.full(rh.size, 278.0), rh, law="equilibrium")
    i_wet = first_change(ds, states.CRYSTALLINE, states.BRINE)
    assert rh[i_wet] == pytest.approx(0.185, abs=0.03)
    ph = ds.phase_state.values
    drying = np.arange(rh.size) > np.argmax(rh)
    below_drh = drying & (rh < s.deliquescence_rh(278.0)) & (rh > s.efflorescence_rh + 0.002)
    assert np.all(ph[below_drh] == states.SUPERSATURATED)   # metastable, no crystals
    dry_again = np.flatnonzero(drying & (ph == states.CRYSTALLINE))[0]
    assert rh[dry_again] == pytest.approx(s.efflorescence_rh, abs=0.002)


def test_eutectic_supercooling_and_melting():
    # Air at ice saturation (RH = a_w,ice, Murphy & Koop 2005), no frost: the brine takes up vapour
    # and sits on the ice liquidus without ice (no nucleation at RH_ice = 1, below the limit of the
    # data file); it stays liquid through the eutectic as supercooled brine down to the supercooling
    # limit (CaCl2: eutectic 223 K less ~15 K, Toner et al. 2014; here the model's T_min decides,
    # flagged), freezes there, and melts again at the eutectic on warming (Oakes et al. 1990
    # eutectic, checked in test_salt_references).
    s = salts.load("CaCl2")
    T_eut = s.eutectic()["temperature_K"]
    T_sup = max(s.supercooling_limit, s.T_min)
    T = ramp([240.0, T_sup - 3.0, 240.0], 800)
    t = np.arange(T.size) * 60.0
    rh = ice_water_activity(T)
    ds = wetcycle.run_series("CaCl2", t, T, rh, loading_kg_m2=0.02, law="equilibrium")
    ph = ds.phase_state.values
    assert ph[0] == states.BRINE
    cooling = np.arange(T.size) <= np.argmin(T)
    above = cooling & (T > T_eut + 0.1)
    assert np.all(ph[above][1:] == states.BRINE) and np.all(ds.ice_water.values[above] == 0)
    # on the liquidus: a_w = a_w,ice(T) (Murphy & Koop 2005), to the equilibrium law's rounding
    np.testing.assert_allclose(ds.brine_water_activity.values[above], ice_water_activity(T[above]), rtol=1e-6)
    sc = cooling & (T < T_eut - 0.1) & (T > T_sup + 0.1)
    assert sc.any() and np.all(ph[sc] == states.SUPERCOOLED)
    i_frz = np.flatnonzero(ph == states.FROZEN)[0]
    assert T[i_frz] == pytest.approx(T_sup, abs=0.2)
    warming = ~cooling
    i_melt = np.flatnonzero(warming & np.isin(ph, states.LIQUID))[0]
    assert T[i_melt] == pytest.approx(T_eut, abs=0.2)
    assert not np.any(np.isin(ph[warming & (T < T_eut - 0.1)], states.LIQUID))  # no liquid below T_eut on warming


def test_brine_touching_frost_freezes_at_the_eutectic():
    # A perchlorate brine film with frost around it froze at the eutectic (Nikolakakos & Whiteway
    # 2015, GRL 42, 7899, read): with ice present, no supercooling below the eutectic.
    s = salts.load("Mg(ClO4)2")
    T_eut = s.eutectic()["temperature_K"]
    T = np.linspace(T_eut + 6.05, T_eut - 5.95, 121)  # no sample exactly at the eutectic
    t = np.arange(T.size) * 120.0
    ds = wetcycle.run_series("Mg(ClO4)2", t, T, ice_water_activity(T), frost_kg_m2=1.0, law="equilibrium")
    ph = ds.phase_state.values
    assert np.all(np.isin(ph[T > T_eut + 0.05], states.LIQUID))
    assert np.all(ph[T < T_eut - 0.05] == states.FROZEN)
    i = np.flatnonzero(ph == states.FROZEN)[0]
    # the crossing is placed inside the step (0.1 K steps: liquid fraction in (0, 1))
    assert T[i - 1] >= T_eut > T[i] and 0.0 < float(ds.liquid_fraction[i]) < 1.0


def test_contact_melting_with_frost():
    # A salt touching water frost above its eutectic dissolves into it and sits on the ice
    # liquidus (brine + ice activity a_w,ice(T); Murphy & Koop 2005) - common practice.
    s = salts.load("Mg(ClO4)2")
    T = np.full(50, s.eutectic()["temperature_K"] + 10.0)
    rh = np.full(50, 0.3)
    t = np.arange(50) * 300.0
    ds = wetcycle.run_series("Mg(ClO4)2", t, T, rh, frost_kg_m2=1.0, law="equilibrium")
    assert int(ds.phase_state[-1]) in states.LIQUID
    assert float(ds.brine_water_activity[-1]) == pytest.approx(ice_water_activity(T[0]), rel=1e-3)


def test_equilibrium_brine_amount_follows_pitzer_inverse():
    # In the equilibrium law the brine has a_w = RH: water = n / m(RH) (Pitzer model inverse).
    s = salts.load("CaCl2")
    rh = np.full(20, 0.6)
    ds = wetcycle.run_series("CaCl2", np.arange(20) * 60.0, np.full(20, 280.0), rh, loading_kg_m2=0.05, law="equilibrium")
    n = 0.05 / s.molar_mass
    assert float(ds.liquid_water[-1]) == pytest.approx(n / s.molality_at_water_activity(0.6, 280.0), rel=1e-4)
    assert float(ds.brine_water_activity[-1]) == pytest.approx(0.6, abs=1e-4)


def test_vapour_limited_brine_grows_over_hours():
    # Vapour-limited law at a Mars-like 240 K and 600 Pa: after a jump in RH the brine takes up
    # water at the rate of Fick's law through the layer, F = D (rho_air - rho_surface) / L with
    # D = 1.387e-5 (T/273.15)^1.5 (1e5/P) m2/s (common practice; value from memory), grows
    # monotonically without overshoot, and reaches the equilibrium amount a_w = RH.
    from wetcycle.phase.kernel import D_REF, MW, R_GAS
    s = salts.load("CaCl2")
    n = 0.05 / s.molar_mass
    T, P, L = 240.0, 600.0, 0.02
    t = np.arange(0, 30 * 86400.0, 600.0)
    # equilibrate as brine at RH 0.60 first (DRH(240 K) ~ 0.58), then 0.70: both below ice
    # saturation at 240 K (a_w,ice = 0.7255, Murphy & Koop 2005), so no ice forms
    t_jump = 3 * 86400.0
    rh = np.where(t < t_jump, 0.60, 0.70)
    ds = wetcycle.run_series("CaCl2", t, np.full(t.size, T), rh, law="vapour_limited", loading_kg_m2=0.05,
                             diffusion_length_m=L, diffusivity_factor=1.0, surface_pressure_Pa=P)
    w_eq = n / s.molality_at_water_activity(0.70, T)
    w = ds.liquid_water.values
    j = int(np.argmax(t >= t_jump))  # first step after the jump
    assert int(ds.phase_state[j - 1]) == 1 and float(ds.brine_water_activity[j - 1]) == pytest.approx(0.60, abs=1e-3)
    D = D_REF * (T / 273.15) ** 1.5 * (1e5 / P)
    rate = D * MW / (R_GAS * T * L) * (0.70 - float(ds.brine_water_activity[j - 1])) * saturation_vapor_pressure_liquid(T)
    # first-step uptake within 5 % of Fick's law (the exponential integrator slows it slightly)
    assert float(ds.water_exchanged[j]) == pytest.approx(rate * 600.0, rel=0.05)
    assert w[j + 3] < 0.9 * w_eq                # not there yet half an hour later
    assert int(ds.ice_water.max()) == 0
    assert np.all(np.diff(w[j:]) >= -1e-15)     # monotonic growth
    assert np.all(w <= w_eq * (1 + 1e-6))       # no overshoot
    assert w[-1] == pytest.approx(w_eq, rel=0.01)


def _random_series(draw_T, draw_rh, n):
    return np.asarray(draw_T[:n]), np.asarray(draw_rh[:n])


@pytest.mark.parametrize("law", ["equilibrium", "vapour_limited"])
@pytest.mark.parametrize("salt", ["NaCl", "Mg(ClO4)2", "MgSO4", "CaCl2"])
@settings(max_examples=15)
@given(data=st.data())
def test_invariant_water_conserved_and_states_consistent(law, salt, data):
    s = salts.load(salt)
    n = 80
    lo, hi = max(s.T_min - 5.0, 180.0), min(s.T_max, 300.0)
    T = np.array(data.draw(st.lists(st.floats(lo, hi), min_size=n, max_size=n)))
    T = np.convolve(np.pad(T, (2, 1), mode="edge"), np.ones(4) / 4, mode="valid")  # smoother, like a record
    rh = np.array(data.draw(st.lists(st.floats(0.0, 1.0), min_size=n, max_size=n)))
    frost = np.array(data.draw(st.lists(st.sampled_from([0.0, 0.0, 0.0, 0.5]), min_size=n, max_size=n)))
    t = np.arange(n) * 1800.0
    ds = wetcycle.run_series(salt, t, T, rh, law=law, frost_kg_m2=frost, loading_kg_m2=0.03)
    W = (ds.liquid_water + ds.hydrate_water + ds.ice_water).values
    ex = ds.water_exchanged.values
    # Invariant: water conserved to rounding (held = initial + exchanged).
    assert np.allclose(W[1:] - W[:-1], ex[1:], rtol=0, atol=1e-12)
    ph = ds.phase_state.values
    liquid = np.isin(ph, states.LIQUID)
    # liquid states hold at least the threshold water (issue 10: a fraction of the saturated
    # solution's water, here the default 1 %; 1 % tolerance: the kernel interpolates m_sat in T, the
    # check reads the nearest table row); a sub-threshold film is a damp crystalline salt that
    # counts no liquid time unless its brine ended in that step
    model = PhaseModel(salt)
    st0 = model.initial_state(1, 0.03, T[0], rh[0])
    thr = np.array([model.liquid_threshold_water(st0, x)[0] for x in T])
    lw = ds.liquid_water.values
    assert np.all(lw[liquid] >= 0.99 * thr[liquid])
    assert np.all(lw[~liquid & (ph != states.CRYSTALLINE)] == 0)
    damp = (ph == states.CRYSTALLINE) & (lw > 0)
    assert np.all(ds.liquid_fraction.values[damp & (np.r_[True, ~liquid[:-1]])] == 0)
    aw = ds.brine_water_activity.values
    assert np.all((aw[liquid] > 0) & (aw[liquid] <= 1.0))
    assert np.all(np.isnan(aw[~liquid]))
    # no liquid below the supercooling limit
    T_sup = max(s.supercooling_limit, s.T_min)
    assert not np.any(liquid & (T < T_sup - 1e-9))
    # an ice-free brine never exceeds the ice-nucleation limit of its data file: a_w <= S a_w,ice(T)
    S_nuc = s.metastability["ice_nucleation_rh_ice"]
    cold = liquid & (ds.ice_water.values == 0) & (T < 273.15) & (T >= s.T_min)
    if cold.any():
        assert np.all(aw[cold] <= S_nuc * ice_water_activity(T[cold]) * (1 + 1e-4))
    assert np.all((ds.liquid_fraction.values >= 0) & (ds.liquid_fraction.values <= 1))


def _liquid_hours(steps_per_sol, law):
    # A prescribed diurnal cycle (invented demo-style forcing; the check is a numerical
    # property, not a physical value): T sinusoid, constant vapour pressure.
    sol = 88775.244  # s (Allison & McEwen 2000)
    n_sols = 12
    t = np.arange(n_sols * steps_per_sol + 1) * sol / steps_per_sol
    T = 215.0 + 25.0 * np.sin(2 * np.pi * t / sol)
    e = 0.6  # Pa
    rh = np.minimum(e / saturation_vapor_pressure_liquid(T), 1.0)
    ds = wetcycle.run_series("Ca(ClO4)2", t, T, rh, law=law)
    dt = np.diff(t)[0]
    return float(ds.liquid_fraction.sum()) * dt / 3600.0


@pytest.mark.parametrize("law", ["equilibrium", "vapour_limited"])
def test_liquid_hours_converge_as_step_halves(law):
    # Issue 4: halving 96 -> 192 steps per sol changes liquid hours by < 1 %.
    h96 = _liquid_hours(96, law)
    h192 = _liquid_hours(192, law)
    assert h96 > 10.0  # the forcing does produce brine
    assert abs(h96 - h192) / h192 < 0.01


@pytest.mark.parametrize("salt", ["Ca(ClO4)2", "CaCl2", "NaCl"])
def test_ice_saturated_air_is_not_a_knife_edge(salt):
    # Over water frost the forcing holds vapour exactly at ice saturation (RH = a_w,ice, Murphy
    # & Koop 2005).  Perturbing RH by 1e-7 (relative) around that value must not change the
    # answer (common practice: results robust to rounding): liquid time within 1e-3 relative, or
    # one step (a threshold crossing may move by one step).
    s = salts.load(salt)
    T_eut = s.eutectic()["temperature_K"]
    t = np.arange(0, 6 * 88775.244, 900.0)
    T = T_eut + 12.0 * np.sin(2 * np.pi * t / 88775.244)
    T = np.maximum(T, s.T_min + 0.5)
    rh = ice_water_activity(np.minimum(T, 273.15))
    frost = np.where(np.sin(2 * np.pi * t / 88775.244) < 0, 1e-5, 0.0)  # a trace of night frost
    out = []
    for f in (1 - 1e-7, 1.0, 1 + 1e-7):
        ds = wetcycle.run_series(salt, t, T, np.minimum(rh * f, 1.0), frost_kg_m2=frost, law="equilibrium")
        out.append(float(ds.liquid_fraction.sum()))
    assert out[1] > 0
    assert max(out) - min(out) <= max(1e-3 * out[1], 1.0) * 1.001


def test_brine_with_crystals_is_metastable_below_the_eutectic_until_frost_touches_it():
    # Salt crystals do not nucleate ice: a wet crust cooled just below its eutectic without ice stays
    # a (metastable) brine with salt; when frost touches it, the eutectic assemblage forms at once
    # (with ice present there is no supercooling: Nikolakakos & Whiteway 2015, read).  A dry crust
    # touches a trace of frost just above the eutectic (partial contact melting), cools below it
    # in air at its DRH, then meets frost again.
    s = salts.load("CaCl2")
    T_eut = s.eutectic()["temperature_K"]
    T = np.array([T_eut + 2.0, T_eut + 0.1] + list(np.linspace(T_eut - 0.5, T_eut - 3.0, 10)) + [T_eut - 3.0] * 3)
    t = np.arange(T.size) * 300.0
    rh = np.full(T.size, 0.3)
    rh[1:] = s.deliquescence_rh(np.maximum(T[1:], s.T_min)) * (1 - 1e-6)  # just below the DRH: the brine keeps its salt
    frost = np.zeros(T.size)
    frost[1] = 2e-3  # too little to dissolve the whole crust
    frost[-2:] = 1e-3
    ds = wetcycle.run_series("CaCl2", t, T, rh, frost_kg_m2=frost, loading_kg_m2=0.05, law="vapour_limited")
    ph = ds.phase_state.values
    assert ph[0] == states.CRYSTALLINE and ph[1] == states.BRINE_WITH_SALT
    assert np.all(ph[2:-2] == states.BRINE_WITH_SALT)
    assert np.all(ph[-2:] == states.FROZEN)


def test_supercooled_brine_below_validity_limit_freezes_flagged():
    # Ca(ClO4)2 brines supercool to ~150 K (data file, Toner et al. 2014), below the Pitzer
    # model's lower validity limit T_min: the kernel freezes them at T_min and flags it (bit 4), never
    # following a brine with properties it cannot compute (no silent extrapolation).
    s = salts.load("Ca(ClO4)2")
    assert s.supercooling_limit < s.T_min < s.eutectic()["temperature_K"]
    T = np.concatenate([np.full(50, 230.0), np.linspace(230.0, s.T_min - 5.0, 300)])
    rh = np.concatenate([np.full(50, 0.6), np.full(300, 0.45)])
    ds = wetcycle.run_series("Ca(ClO4)2", np.arange(T.size) * 300.0, T, rh, loading_kg_m2=0.02, law="equilibrium")
    i = first_change(ds, states.SUPERCOOLED, states.FROZEN)
    assert i is not None and T[i - 1] >= s.T_min > T[i]
    assert int(ds.validity_flag[i]) == 1 + 4  # clamped below T_min, and frozen there (bit 4)
    assert np.all(ds.validity_flag.values[:i][T[:i] >= s.T_min] == 0)


def test_frozen_parcel_keeps_its_ice_in_ice_supersaturated_air_below_validity():
    # Murphy & Koop (2005): ice is stable wherever the vapour pressure exceeds p_ice(T), i.e.
    # RH_liquid >= a_w,ice(T).  Below a salt's validity limit the salt tables are clamped, but the
    # ice test must use the true temperature: at 221 K with RH over ice 1.05 the ice stays.
    s = salts.load("MgCl2")
    T = np.concatenate([np.linspace(s.eutectic()["temperature_K"] + 5.0, s.T_min - 11.0, 40),
                        np.full(40, s.T_min - 11.0)])
    rh = np.minimum(1.05 * ice_water_activity(T), 1.0)
    ds = wetcycle.run_series("MgCl2", np.arange(T.size) * 600.0, T, rh, frost_kg_m2=np.r_[1e-3, np.zeros(79)],
                             loading_kg_m2=0.02, law="equilibrium")
    ph = ds.phase_state.values
    k = np.flatnonzero(T < s.T_min)
    assert np.all(ph[k] == states.FROZEN)
    assert np.all(ds.ice_water.values[k] > 0.0)


@pytest.mark.parametrize("salt,T,rh", [("NaCl", 285.0, 0.9), ("MgCl2", 290.0, 0.6)])
def test_hydrate_above_its_peritectic_gives_way_and_deliquesces(salt, T, rh):
    # Hydrohalite decomposes above 0.1 °C (Salt Institute table) and MgCl2·8H2O above -3.4 °C
    # (Linke & Seidell 1965, from memory); above the DRH of the stable solid (Greenspan 1977:
    # NaCl 0.755, MgCl2 0.33) the salt must deliquesce, whatever hydrate the humid start suggests.
    t = np.arange(50) * 600.0
    ds = wetcycle.run_series(salt, t, np.full(t.size, T), np.full(t.size, rh), law="equilibrium")
    assert ds.phase_state.values[-1] == states.BRINE
    assert float(ds.brine_water_activity[-1]) == pytest.approx(rh, abs=1e-6)


@pytest.mark.parametrize("law", ["equilibrium", "vapour_limited"])
def test_saturated_air_keeps_diluting_the_brine(law):
    # At RH -> 1 a brine takes up water (a_w -> 1 only at infinite dilution; common practice);
    # it must not be flagged as beyond the molality limit.  The equilibrium law caps the dilution at
    # the kernel's M_DILUTE (a model choice).
    from wetcycle.phase.kernel import M_DILUTE
    t = np.arange(200) * 600.0
    rh = np.r_[0.7, np.linspace(0.99, 1.0, 199)]
    load = 0.01
    ds = wetcycle.run_series("NaCl", t, np.full(t.size, 290.0), rh, law=law, loading_kg_m2=load)
    assert np.all(ds.phase_state.values[1:] == states.BRINE)
    assert np.all(ds.validity_flag.values == 0)
    w = ds.liquid_water.values
    assert np.all(np.diff(w[1:]) >= -1e-12) and w[-1] > w[1]
    assert w[-1] <= load / 0.0584428 / M_DILUTE * (1 + 1e-9)  # NaCl 58.443 g/mol (IUPAC)


def test_vapour_limited_efflorescence_keeps_the_hydrate_water():
    # A drying MgCl2 brine persists to its efflorescence RH (~0.09, Gupta et al. 2015, read), then
    # crystallises and dries to the hexahydrate (bischofite, Linke & Seidell 1965), holding 6 waters
    # per salt; no model limit is met on the way.
    t = np.arange(200) * 600.0
    rh = np.r_[np.linspace(0.5, 0.05, 100), np.linspace(0.05, 0.05, 100)]
    ds = wetcycle.run_series("MgCl2", t, np.full(t.size, 280.0), rh, law="vapour_limited", loading_kg_m2=0.01)
    assert not np.any(ds.validity_flag.values & 2)
    n = 0.01 / 0.095211  # mol m-2 (IUPAC atomic weights)
    assert ds.phase_state.values[-1] == states.CRYSTALLINE
    assert float(ds.hydrate_water[-1]) == pytest.approx(n * 6 * 0.018015268, rel=1e-9)


def test_liquid_hours_converge_to_the_analytic_value():
    # A sinusoidal RH at fixed T: liquid from the up-crossing of the DRH to the down-crossing of
    # the ERH (hysteresis, common practice), computed in closed form from the same DRH/ERH.
    s = salts.load("NaClO4")
    d, e = float(s.deliquescence_rh(260.0)), s.efflorescence_rh
    per_sol = (np.pi - np.arcsin((e - 0.375) / 0.325) - np.arcsin((d - 0.375) / 0.325)) / (2 * np.pi) * 24.0
    for dt, tol in ((900.0, 0.002), (300.0, 0.001)):
        t = np.arange(0.0, 3 * 86400.0 + 1.0, dt)
        rh = 0.375 + 0.325 * np.sin(2 * np.pi * t / 86400.0)
        ds = wetcycle.run_series("NaClO4", t, np.full(t.size, 260.0), rh, law="equilibrium")
        hours = float((ds.liquid_fraction.values[1:] * dt).sum()) / 3600.0
        assert hours == pytest.approx(3 * per_sol, rel=tol), dt


def test_frost_is_a_budget_not_a_source():
    # Water conservation (invariant): a salt touching 1e-4 kg m-2 of frost cannot draw more than
    # that from it while the frost cover lasts.
    t = np.arange(500) * 60.0
    ds = wetcycle.run_series("NaCl", t, np.full(t.size, 260.0), np.full(t.size, 0.3), frost_kg_m2=1e-4, law="equilibrium")
    gained = ds.water_exchanged.values.clip(min=0).sum()
    assert gained <= 1e-4 * (1 + 1e-9)


def test_each_frost_cover_is_a_new_budget():
    # Water conservation (invariant): two separate frost covers of 1e-4 kg m-2 each can give at
    # most 2e-4 in all; the second cover is not spent by the first.
    t = np.arange(600) * 60.0
    frost = np.where((t < 100 * 60.0) | ((t >= 300 * 60.0) & (t < 400 * 60.0)), 1e-4, 0.0)
    ds = wetcycle.run_series("NaCl", t, np.full(t.size, 260.0), np.full(t.size, 0.3), frost_kg_m2=frost, law="equilibrium")
    gain = ds.water_exchanged.values.clip(min=0)
    first, second = gain[:300].sum(), gain[300:].sum()
    assert 0.0 < first <= 1e-4 * (1 + 1e-9) and 0.0 < second <= 1e-4 * (1 + 1e-9)


@pytest.mark.parametrize("salt", ["CaCl2", "NaCl"])
def test_closed_parcel_in_the_ice_field_grows_and_melts_ice_with_temperature(salt):
    # Air at ice saturation over frost (Murphy & Koop 2005) above the eutectic: the brine sits on
    # the ice liquidus with ice and the parcel keeps its water, so ice grows while T falls and melts
    # while it rises -- two state changes per temperature cycle, never a rounding flicker (invariant
    # of the rule).
    s = salts.load(salt)
    t = np.arange(400) * 300.0
    T = s.eutectic()["temperature_K"] + 6.0 + 2.0 * np.sin(2 * np.pi * t / 21600.0)
    frost = np.full(t.size, 1.0)  # a frost cover larger than the parcel ever draws
    ds = wetcycle.run_series(salt, t, T, ice_water_activity(T), loading_kg_m2=0.02, frost_kg_m2=frost,
                             law="equilibrium")
    ph, wi = ds.phase_state.values, ds.ice_water.values
    n_cycles = t[-1] / 21600.0
    assert np.count_nonzero(np.diff(ph)) <= 2 * np.ceil(n_cycles) + 1
    falling = np.r_[False, np.diff(T) < 0]
    assert np.all(wi[falling & (t > 21600.0)] > 0.0)
    assert np.all(np.isin(ph, states.LIQUID))


def test_water_properties_outside_their_range_are_clamped_not_nan():
    # Murphy & Koop (2005) hold for liquid water at 123-332 K: a brief excursion to 334 K under the
    # vapour-limited law must leave finite water (clamped, flagged), not NaN thereafter.
    t = np.arange(72) * 300.0
    T = np.full(t.size, 290.0)
    T[24:48] = 334.0
    ds = wetcycle.run_series("NaCl", t, T, np.full(t.size, 0.8), law="vapour_limited", loading_kg_m2=0.01)
    total = ds.liquid_water.values + ds.hydrate_water.values + ds.ice_water.values
    assert np.all(np.isfinite(total))
    assert np.all(ds.validity_flag.values[24:48] & 1) and not np.any(ds.validity_flag.values[48:] & 1)


def test_lower_limit_freeze_flagged_when_a_step_jumps_past_both_limits():
    # CaCl2: published supercooling limit 208 K lies below the model's T_min (215 K): a step from
    # 218 K straight to 190 K freezes the brine at T_min, and says so (bit 4).
    s = salts.load("CaCl2")
    assert s.supercooling_limit < s.T_min
    T = np.r_[np.full(20, 230.0), np.linspace(230.0, 218.0, 20), 190.0]
    rh = np.r_[np.full(20, 0.65), np.full(21, 0.55)]  # DRH(230 K) 0.61 < 0.65 < a_w,ice 0.66
    ds = wetcycle.run_series("CaCl2", np.arange(T.size) * 300.0, T, rh, loading_kg_m2=0.02, law="equilibrium")
    assert int(ds.phase_state[-2]) in states.LIQUID and int(ds.phase_state[-1]) == states.FROZEN
    assert int(ds.validity_flag[-1]) & 4
