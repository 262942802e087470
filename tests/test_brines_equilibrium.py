"""Equilibrium solver: binary limits, conservation, optimality conditions, starts, metastable requests."""

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from wetcycle import salts
from wetcycle.brines import chemistry as ch
from wetcycle.brines import equilibrate, freeze
from wetcycle.errors import ValidityError
from wetcycle.salts.pitzer import MW

W = 1.0 / MW


def test_halite_saturation_equals_the_binary_system():
    # binary edge (issue: "binary edges as today"): NaCl-H2O saturation at 25 °C from the binary model,
    # itself checked against CRC solubility (tests/test_salt_references.py). Tolerance: solver tolerance.
    chem = ch.load(("Na", "Cl"))
    r = equilibrate(chem, np.array([10.0, 10.0]), W, 298.15)
    assert r.converged and r.present() == ("NaCl",)
    assert r.molality[0] == pytest.approx(float(salts.load("NaCl").saturation_molality(298.15)), rel=1e-8)


def test_ice_liquidus_equals_the_binary_system():
    chem = ch.load(("Mg", "Cl"))
    r = equilibrate(chem, np.array([0.5, 1.0]), W, 250.0)
    assert r.present() == ("ice",)
    assert r.molality[0] == pytest.approx(float(salts.load("MgCl2").ice_liquidus_molality(250.0)), rel=1e-8)


@pytest.mark.parametrize("name", ["NaCl", "KCl", "MgCl2", "CaCl2", "Mg(ClO4)2"])
def test_freeze_path_ends_at_the_binary_eutectic(name):
    # binary edge: a single-salt freezing path ends at the binary system's own eutectic, derived by
    # wetcycle.salts from the same Pitzer model (NaCl: -21.2 °C, Oakes et al. 1990, is its fitted point).
    # Tolerance 0.01 K: bisection to 1e-3 K plus the binary's own root tolerance.
    s = salts.load(name)
    c, a = ch.ion_name(s.cation), ch.ion_name(s.anion)
    ds = freeze({c: 0.3 * s.nu_cation, a: 0.3 * s.nu_anion}, step_K=1.0, temperature_end_K=s.T_min)
    assert ds.attrs["eutectic_temperature_K"] == pytest.approx(s.eutectic()["temperature_K"], abs=0.01)
    assert set(ds.attrs["eutectic_solids"].split(", ")) == set(s.eutectic()["solids"])


def _seawater_b(chem):
    sw = dict(Na=0.4860, K=0.01058, Mg=0.05474, Ca=0.01065, Cl=0.5657, SO4=0.02926)
    from wetcycle.brines.paths import _neutral
    return _neutral(chem, sw)


@settings(max_examples=25, deadline=None)
@given(st.floats(0.2, 1.0), st.floats(245.0, 300.0))
def test_mass_is_conserved_and_kkt_holds(water_fraction, T):
    # invariants of the minimisation (common practice): totals conserved to rounding; every solid present
    # is saturated (|SI| ~ 0) and every absent one undersaturated (SI <= 0). Domain: seawater concentrated
    # up to 100 times (drier mixtures need lower hydrates than the model has: reported, see below).
    chem = ch.load(("Na", "K", "Mg", "Ca", "Cl", "SO4"))
    b = _seawater_b(chem) * 20.0
    r = equilibrate(chem, b, W * water_fraction, T)
    assert r.converged
    A, h = chem.stoichiometry
    cols = [chem.solid_names.index(n) for n in r.solids]
    assert np.allclose(r.ion_moles + A[:, cols] @ r.solid_moles, b, rtol=1e-12, atol=1e-14)
    assert r.liquid_water_mol + h[cols] @ r.solid_moles == pytest.approx(W * water_fraction, rel=1e-12)
    if r.liquid:
        present = r.solid_moles > 0
        assert np.all(np.abs(r.saturation_index[present]) < 1e-6)
        assert np.all(r.saturation_index[~present] < 1e-6)


def test_any_start_gives_the_same_state():
    # convexity: a cold start, a start with the wrong solids and the converged state give one answer
    chem = ch.load(("Na", "K", "Mg", "Ca", "Cl", "SO4"))
    b = _seawater_b(chem) * 10.0
    r0 = equilibrate(chem, b, W, 280.0)
    wrong = {"NaCl·2H2O": 0.3, "KCl": 0.05, "MgSO4·7H2O": 0.1, "ice": 20.0}
    r1 = equilibrate(chem, b, W, 280.0, start=wrong)
    assert r0.converged and r1.converged
    assert r0.present() == r1.present()
    assert np.allclose(r0.molality, r1.molality, rtol=1e-7)


def test_exclude_gives_the_metastable_assemblage():
    # metastable on request: without hydrohalite, NaCl brine meets ice + halite, whose metastable eutectic
    # lies below the stable one (Drebushchak et al. 2017: metastable ice + halite eutectic ~ -27 °C, read)
    ds_stable = freeze({"Na": 1.0, "Cl": 1.0}, step_K=0.5, temperature_end_K=245.0)
    ds_meta = freeze({"Na": 1.0, "Cl": 1.0}, step_K=0.5, exclude=("hydrohalite",), extrapolate_binaries=True)
    assert "NaCl·2H2O" not in ds_meta.attrs["eutectic_solids"]
    assert ds_meta.attrs["eutectic_temperature_K"] < ds_stable.attrs["eutectic_temperature_K"] - 2.0
    # Tolerance 3 K: the published value is rounded and the binary was fitted to the stable branch only
    assert ds_meta.attrs["eutectic_temperature_K"] - 273.15 == pytest.approx(-27.0, abs=3.0)


def test_below_the_eutectic_all_solid_by_linear_programme():
    chem = ch.load(("Na", "Cl"))
    r = equilibrate(chem, np.array([1.0, 1.0]), W, 250.0)
    assert not r.liquid and r.converged
    got = dict(zip(r.solids, r.solid_moles))
    assert got["NaCl·2H2O"] == pytest.approx(1.0) and got["ice"] == pytest.approx(W - 2.0)


def test_bad_inputs_are_refused():
    chem = ch.load(("Na", "Cl"))
    with pytest.raises(ValidityError):
        equilibrate(chem, np.array([1.0, 0.0]), W, 260.0)
    with pytest.raises(ValidityError):
        equilibrate(chem, np.array([1.0, 1.0]), W, 260.0, exclude=("not-a-solid",))


def test_dry_solids_without_room_for_their_water_are_reported_not_invented():
    # seawater salts with 0.0625 kg of the water at 240 K: MgCl2 needs >= 6 waters in every hydrate the
    # model has, so no solid assemblage exists; the solver says so instead of inventing one
    chem = ch.load(("Na", "K", "Mg", "Ca", "Cl", "SO4"))
    r = equilibrate(chem, _seawater_b(chem) * 20.0, 0.0625 / MW, 240.0)
    assert not r.converged and "no solid assemblage" in r.message
    assert math.isfinite(r.temperature)
