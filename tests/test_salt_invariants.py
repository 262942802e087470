"""Thermodynamic invariants of every salt system (hypothesis property tests).

These hold for any consistent binary salt-water model (common practice in
electrolyte thermodynamics, e.g. Pitzer 1991 ch. 3): water activity in (0, 1]
and decreasing with molality; the eutectic lies on both the ice liquidus and
the salt's saturation curve; the deliquescence RH is continuous across a
peritectic, where the hydration RH between the two solids equals it; the
stable solid is the least soluble one.
"""

import numpy as np
import pytest
from hypothesis import given, settings, strategies as st

from wetcycle import salts
from wetcycle.salts import tables

NAMES = salts.names()


def _fitted(name):
    s = salts.load(name)
    return s


@pytest.mark.parametrize("name", NAMES)
@settings(max_examples=40)
@given(u=st.floats(0.0, 1.0), v=st.floats(0.0, 1.0))
def test_invariant_water_activity_in_unit_interval_and_decreasing(name, u, v):
    s = _fitted(name)
    T = s.T_min + u * (s.T_max - s.T_min)
    m = 1e-4 + v * (s.m_max - 1e-4)
    aw = s.water_activity(m, T)
    assert 0.0 < aw <= 1.0
    m2 = min(m * 1.01 + 1e-3, s.m_max)
    if m2 - m > 1e-6 * s.m_max:
        assert s.water_activity(m2, T) < aw


@pytest.mark.parametrize("name", NAMES)
@settings(max_examples=25)
@given(u=st.floats(0.0, 1.0), v=st.floats(0.001, 0.999))
def test_invariant_inverse_water_activity(name, u, v):
    s = _fitted(name)
    T = s.T_min + u * (s.T_max - s.T_min)
    m = v * s.m_max
    aw = s.water_activity(m, T)
    assert s.molality_at_water_activity(aw, T) == pytest.approx(m, rel=1e-7, abs=1e-9)


@pytest.mark.parametrize("name", NAMES)
def test_eutectic_lies_on_ice_liquidus_and_saturation_curve(name):
    s = _fitted(name)
    e = s.eutectic()
    assert e is not None, f"{name}: no stable eutectic found in {s.T_min}-{s.T_max} K"
    assert e["solids"][0] == "ice"
    T, m = e["temperature_K"], e["molality"]
    assert s.ice_liquidus_molality(T) == pytest.approx(m, rel=1e-4)
    assert s.saturation_molality(T, e["solids"][1]) == pytest.approx(m, rel=1e-4)
    # ...and at the eutectic the brine has the water activity of ice (Murphy & Koop 2005).
    from wetcycle.water import ice_water_activity
    assert s.water_activity(m, T) == pytest.approx(ice_water_activity(T), rel=1e-5)


@pytest.mark.parametrize("name", NAMES)
def test_drh_continuous_across_peritectics(name):
    s = _fitted(name)
    for p in s.peritectics():
        if p["kind"] != "peritectic":
            continue  # at a hydrate eutectic the stable solid changes at a congruent melt instead
        T = p["temperature_K"]
        lo, hi = max(T - 0.02, s.T_min), min(T + 0.02, s.T_max)
        d_lo, d_hi = s.deliquescence_rh(lo), s.deliquescence_rh(hi)
        assert abs(d_lo - d_hi) < 2e-3, f"{name}: DRH jumps at {T:.2f} K ({d_lo:.4f} vs {d_hi:.4f})"
        assert s.stable_solid(lo) != s.stable_solid(hi)
        # Both solids saturate at the same molality there.
        a, b = p["solids"]
        assert s.saturation_molality(T, a) == pytest.approx(s.saturation_molality(T, b), rel=1e-4)


@pytest.mark.parametrize("name", NAMES)
@settings(max_examples=20)
@given(u=st.floats(0.0, 1.0))
def test_invariant_stable_solid_is_least_soluble(name, u):
    s = _fitted(name)
    T = s.T_min + u * (s.T_max - s.T_min)
    stable = s.stable_solid(T)
    if not stable:
        return
    m_st = s.saturation_molality(T, stable)
    for other in s.solid_names:
        m_o = s.saturation_molality(T, other)
        if np.isfinite(m_o):
            assert m_st <= m_o * (1 + 1e-9)


@pytest.mark.parametrize("name", NAMES)
def test_hydration_rh_equals_drh_where_two_hydrates_coexist_with_brine(name):
    # At a peritectic between hydrates n_low and n_high, solid-state hydration
    # equilibrium a_w = (K_high/K_low)^(1/dn) must equal the brine's a_w (Pitzer 1991 relations).
    s = _fitted(name)
    for p in s.peritectics():
        a, b = p["solids"]
        T = p["temperature_K"]
        for h in s.hydration_transitions(T):
            if {h["lower"], h["higher"]} == {a, b}:
                # (holds at peritectics and hydrate eutectics alike: both solids + one brine)
                assert h["rh"] == pytest.approx(s.water_activity(p["molality"], T), rel=1e-3)


@pytest.mark.parametrize("name", NAMES)
def test_inverse_table_matches_exact_inverse(name):
    # Tabulated inverse (cubic in sqrt(-ln a_w), linear in T) against the exact root.
    s = _fitted(name)
    tab = tables.build_inverse_table(s)
    rng = np.random.default_rng(3)
    T = rng.uniform(s.T_min, s.T_max, 400)
    m = rng.uniform(0.0, s.m_max * 0.98, 400)
    aw = s.water_activity(m, T)
    out = np.empty_like(m)
    tables.molality_from_table_array(aw, T, *tab.args, out)
    ok = np.isfinite(out)
    assert ok.mean() > 0.95
    # 1e-4 in a_w is ten times below the best stated DRH uncertainties (Greenspan 1977: 1e-3).
    assert np.max(np.abs(s.water_activity(out[ok], T[ok]) - aw[ok])) < 1e-4
