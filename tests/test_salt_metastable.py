"""Supersaturated brine, solid-state hydration and metastability data of the salt systems.

Outside values (with sources and flags) are in tests/refdata_metastability.py.
"""

import math

import numpy as np
import pytest
from hypothesis import given, settings, strategies as st

from wetcycle import salts, water
from wetcycle.salts import metastable as mt
from wetcycle.salts import tables

import refdata_metastability as RM

NAMES = salts.names()


def _m(name, wt):
    M = salts.load(name).molar_mass
    return wt / 100.0 / (M * (1.0 - wt / 100.0))


# --- the supersaturated branch against published single-particle water activities ----------------------

@pytest.mark.parametrize("wt", [27.0, 29.0, 31.0, 33.5, 36.0, 38.5, 41.0, 43.5, 44.5])
def test_nacl_supersaturated_water_activity_tang_1997(wt):
    # Tang, Tridico & Fung (1997) EDB polynomial for NaCl at 298 K (from memory); compositions between
    # the fitted ones, so this re-checks the fitted branch.  0.01 = the table's stated sigma (EDB
    # water activities carry 0.01-0.02 in solute mass fraction, Chan et al. 1997).
    s = salts.load("NaCl")
    m = _m("NaCl", wt)
    assert m > s.m_max or wt < 26.6
    assert float(s.water_activity(m, 298.15)) == pytest.approx(RM.poly_aw(RM.TANG1997_NACL_POLY, wt), abs=0.01)


@pytest.mark.parametrize("wt", [38.0, 41.0, 44.0, 46.0, 48.5, 51.0, 53.5, 56.0])
def test_na2so4_supersaturated_water_activity_tang_munkelwitz_1994(wt):
    # Tang & Munkelwitz (1994) EDB polynomial for Na2SO4 at 298 K (from memory); re-check of the
    # fitted branch at compositions between the fitted ones; 0.015 = the table's sigma.
    s = salts.load("Na2SO4")
    assert float(s.water_activity(_m("Na2SO4", wt), 298.15)) == pytest.approx(
        RM.poly_aw(RM.TM1994_NA2SO4_POLY, wt), abs=0.015)


def test_nacl_efflorescence_point_lies_at_the_end_of_the_edb_data():
    # Tang et al. (1997): the polynomial's last point (45 wt%, 14 mol/kg) has a_w 0.455, where
    # droplets effloresce (ERH 0.45, from memory): the branch must reach the ERH near that molality
    # (within 0.5 mol/kg: the ERH's own spread, 43-48 %, spans ~1.5 mol/kg).
    s = salts.load("NaCl")
    m_erh = float(s.molality_at_water_activity(RM.ERH["NaCl"][0], 298.15))
    assert m_erh == pytest.approx(_m("NaCl", RM.TANG1997_NACL_WT_MAX), abs=0.5)
    assert s.m_valid == pytest.approx(_m("NaCl", RM.TANG1997_NACL_WT_MAX), abs=0.05)


@pytest.mark.parametrize("name", sorted(RM.ERH))
def test_published_efflorescence_rh_is_within_the_model_at_every_temperature(name):
    # The crystal-free brine must be representable down to the published ERH (source in
    # refdata_metastability.ERH) at every temperature of the system's range, else a drying brine
    # would leave the model before it effloresces (issue 10, item 2).
    s = salts.load(name)
    erh = RM.ERH[name][0]
    assert s.efflorescence_rh == pytest.approx(erh, abs=0.005), RM.ERH[name][2]
    T = np.linspace(s.T_min, s.T_max, 80)
    assert np.all(s.water_activity(s.m_ext, T) < erh)


@pytest.mark.parametrize("name", NAMES)
def test_water_activity_continuous_and_decreasing_across_the_join(name):
    # Invariants (Gibbs-Duhem stability of one liquid phase; common practice): a_w is continuous at
    # m_max, where the branch takes over, and decreases with molality up to m_ext at every T.
    s = salts.load(name)
    T = np.linspace(s.T_min, s.T_max, 25)
    below = s.water_activity(s.m_max * (1 - 1e-9), T)
    above = s.water_activity(min(s.m_max * (1 + 1e-9), s.m_ext), T)
    np.testing.assert_allclose(above, below, rtol=1e-6)
    m = np.linspace(0.05, s.m_ext, 300)
    for t in T:
        aw = s.water_activity(m, t)
        assert np.all(np.diff(aw) < 0), f"{name} at {t:.1f} K"


@pytest.mark.parametrize("name", [n for n in NAMES if salts.load(n).m_ext > salts.load(n).m_max])
@settings(max_examples=30)
@given(u=st.floats(0.0, 1.0), v=st.floats(0.0, 1.0))
def test_inverse_of_the_full_water_activity(name, u, v):
    # molality_at_water_activity inverts water_activity on the supersaturated branch too (exact
    # bisection; 1e-9 relative in m).
    s = salts.load(name)
    T = s.T_min + u * (s.T_max - s.T_min)
    m = s.m_max + v * (s.m_ext - s.m_max)
    aw = float(s.water_activity(m, T))
    assert float(s.molality_at_water_activity(aw, T)) == pytest.approx(m, rel=1e-8)


@pytest.mark.parametrize("name", NAMES)
def test_forward_and_inverse_tables_match_the_exact_functions(name):
    # The kernel's tables (cubic along sqrt(m) or sqrt(-ln a_w), linear in T) against the exact
    # functions, supersaturated branch included.  1e-4 in a_w is ten times below the best stated DRH
    # uncertainties (Greenspan 1977: 1e-3).
    s = salts.load(name)
    rng = np.random.default_rng(5)
    T = rng.uniform(s.T_min, s.T_max, 500)
    m = rng.uniform(0.0, s.m_ext, 500)
    aw = s.water_activity(m, T)
    fw = tables.build_forward_table(s)
    out = np.empty_like(m)
    tables.ln_aw_from_table_array(m, T, *fw.args, out)
    assert np.max(np.abs(np.exp(out) - aw)) < 1e-4
    inv = tables.build_inverse_table(s)
    tables.molality_from_table_array(aw, T, *inv.args, out)
    ok = np.isfinite(out)
    assert ok.mean() > 0.95
    assert np.max(np.abs(s.water_activity(np.minimum(out[ok], s.m_ext), T[ok]) - aw[ok])) < 1e-4


def test_branch_is_outside_pitzer_parameters():
    # The branch changes no Pitzer parameter: below m_max the water activity is the Pitzer value
    # (the mixed-brine code shares these parameters; Pitzer 1991 relations, exact).
    from wetcycle.salts import pitzer as pz
    s = salts.load("NaCl")
    for m in (1.0, 4.0, s.m_max):
        assert mt.ln_aw_full_kernel(m, 280.0, s.packed, s.branch) == pz.ln_aw_kernel(m, 280.0, s.packed)


# --- solid-state hydration equilibria --------------------------------------------------------------------

@pytest.mark.parametrize("T", [298.15, 303.15, 308.15, 313.15, 318.15])
def test_epsomite_hexahydrite_humidity_chou_seal_2003(T):
    # Chou & Seal (2003) humidity buffers (read; also a fit table: re-check of the fit): equilibrium
    # f_H2O from their ln K; RH = f / p_liq(T) (Murphy & Koop 2005).  0.02 = twice the table's sigma.
    s = salts.load("MgSO4")
    rh = [h["rh"] for h in s.hydration_transitions(T) if {h["lower"], h["higher"]} == {"MgSO4·6H2O", "MgSO4·7H2O"}][0]
    ref = RM.chou_seal_2003_fh2o_pa(T) / float(water.saturation_vapor_pressure_liquid(T))
    assert rh == pytest.approx(ref, abs=0.02)
    if T == 298.15:
        assert abs(RM.MGSO4_7_6_RH_BEFORE - ref) > 0.2  # the defect this fixes was real


def test_mirabilite_thenardite_humidity_steiger_asmussen_2008():
    # Steiger & Asmussen (2008) phase diagram, ~75-80 % at 20 °C (from memory; held out of the fit).
    T, rh_ref, tol = RM.NA2SO4_HYDRATION_20C
    s = salts.load("Na2SO4")
    rh = [h["rh"] for h in s.hydration_transitions(T)][0]
    assert rh == pytest.approx(rh_ref, abs=tol)


# --- metastability data: ice nucleation, deliquescence below the eutectic, kinetics ---------------------

@pytest.mark.parametrize("name", ["Ca(ClO4)2", "Mg(ClO4)2"])
def test_perchlorate_ice_nucleation_limit_rivera_valentin_2020(name):
    # Rivera-Valentin et al. (2020), Ext. Data Fig. 3 (read): metastable to RH_ice 145 %.
    assert salts.load(name).metastability["ice_nucleation_rh_ice"] == pytest.approx(RM.RIVERA_VALENTIN_2020_RH_ICE_MAX)
    # ...consistent with the homogeneous-nucleation line a_w,ice + 0.305 of Koop et al. (2000; from memory)
    # near 230 K, within 0.02 in RH_ice (the figure's line width)
    aw_ice = float(water.ice_water_activity(232.0))
    assert (aw_ice + RM.KOOP2000_DELTA_AW) / aw_ice == pytest.approx(RM.RIVERA_VALENTIN_2020_RH_ICE_MAX, abs=0.02)


@pytest.mark.parametrize("name", ["NaCl", "KCl", "CaCl2", "MgCl2", "FeCl3"])
def test_chloride_ice_nucleation_limit_matches_15_K_of_supercooling(name):
    # Toner et al. (2014; read): ~15 K of supercooling below the freezing point.  A eutectic brine
    # cooled 15 K reaches a_w,ice(T_eut)/a_w,ice(T_eut - 15 K) (Murphy & Koop 2005): the data file's
    # limit, to its printed 0.01.
    s = salts.load(name)
    Te = s.eutectic()["temperature_K"]
    S = float(water.ice_water_activity(Te) / water.ice_water_activity(Te - RM.TONER2014_SUPERCOOLING_K))
    assert s.metastability["ice_nucleation_rh_ice"] == pytest.approx(S, abs=0.006)


def test_naclo4_deliquescence_below_its_eutectic_gough_2011():
    # Gough et al. (2011; read) saw NaClO4.H2O deliquesce at 228 K, below the 236 K eutectic of
    # Chevrier et al. (2009; read): the data file allows vapour deliquescence that far below.
    s = salts.load("NaClO4")
    T, _ = RM.GOUGH2011_NACLO4_H2O_DRH_228K
    depth = s.metastability["metastable_deliquescence_depth"]
    assert depth == pytest.approx(RM.CHEVRIER2009_NACLO4_EUTECTIC - T)
    assert s.eutectic()["temperature_K"] - depth <= T + 1.5  # model eutectic 1.4 K below Chevrier's


def test_every_new_metastability_value_names_a_source():
    for name in NAMES:
        s = salts.load(name)
        meta = s.metastability
        for key, src in (("ice_nucleation_rh_ice", "ice_nucleation_source"),
                         ("metastable_deliquescence_depth", "metastable_deliquescence_source")):
            if key in meta:
                assert meta.get(src) and meta.get(src.replace("_source", "_flag")), f"{name}: {key}"
        assert "ice_nucleation_rh_ice" in meta, name
        if s.supersaturated:
            assert s.supersaturated["source"] and s.supersaturated["uncertainty"], name
        if s.kinetics:
            assert s.kinetics.get("hydrate_source") and s.kinetics.get("hydrate_flag"), name


def test_mgso4_hydrate_kinetics_slow_at_mars_temperatures():
    # Wang et al. (2011; from memory): months to years at -10 °C; Chipera & Vaniman (read): weeks at
    # room temperature.  The time constant must grow from weeks at 298 K to months or more at 263 K.
    k = salts.load("MgSO4").kinetics
    tau = lambda T: k["hydrate_time_constant_days"] * math.exp(
        k["hydrate_activation_temperature"] * (1 / T - 1 / k["hydrate_reference_temperature"]))
    assert 7 <= tau(298.15) <= 60
    assert tau(263.15) >= 90
