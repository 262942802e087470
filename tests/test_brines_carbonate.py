"""The carbonate system of the mixed-brine model (stage 3): speciation, pH, carbonate solids, divides.

Each check names its source.  Values marked "from memory" were recalled, not read here.
"""

import math
import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

import xarray as xr

from wetcycle.brines import carbonate as co
from wetcycle.brines import chemistry as ch
from wetcycle.brines import evaporate, freeze, paths
from wetcycle.brines.equilibrium import equilibrate
from wetcycle.cli import main
from wetcycle.errors import ConfigError

T25 = 298.15
ATM = 101325.0


def state(vals, T=T25, co2=None, exclude=()):
    chem = paths._load_chem(vals, "fitted", co2)
    b, W = paths._initial(chem, vals)
    r = equilibrate(chem, b, W, T, co2_pressure_Pa=co2, exclude=exclude)
    assert r.converged, r.message
    return r, dict(zip(chem.ions, r.molality)), chem


# ---- equilibrium constants ------------------------------------------------------------------------

@pytest.mark.parametrize("name, pk", [
    # textbook 25 °C values (e.g. Stumm & Morgan 1996, Aquatic Chemistry, Table 4.2; from memory)
    ("water dissociation", 14.00),
    ("CO2 hydration and first dissociation", 6.35),
    ("bicarbonate dissociation", 10.33),
])
def test_pk_at_25C(name, pk):
    r = next(x for x in co.data()["reactions"] if x["name"] == name)
    # 0.01: the textbook values are given to two decimals
    assert -co.log10k_pb(r["coef"], T25) == pytest.approx(pk, abs=0.01)


def test_henry_and_calcite_constants_at_25C():
    # Plummer & Busenberg (1982) Table: log K_H = -1.468, log K_calcite = -8.48 at 25 °C (from memory;
    # the calcite function itself was read)
    assert co.log10k_pb(co.data()["gas"]["coef"], T25) == pytest.approx(-1.468, abs=0.002)
    chem = ch.load(("Ca", "CO3"))
    assert chem.solid("calcite").ln_k(T25) / math.log(10) == pytest.approx(-8.48, abs=0.005)
    # the exact conversion to the project's ln K form matches the published function at 0 and 90 °C
    for T in (273.15, 363.15):
        pb = co.log10k_pb(co.data()["solids"][0]["coef"], T)
        assert chem.solid("calcite").ln_k(T) / math.log(10) == pytest.approx(pb, abs=1e-9)


# ---- open-system worked examples ------------------------------------------------------------------

def test_calcite_in_water_at_atmospheric_co2():
    # water + calcite at pCO2 = 10^-3.5 atm, 25 °C: pH ≈ 8.3, Ca ≈ 0.5 mmol/kg (Stumm & Morgan 1996,
    # Aquatic Chemistry, worked example of the open CaCO3-CO2-H2O system; from memory)
    r, m, chem = state({"Ca": 0.01, "CO3": 0.01}, co2=ATM * 10 ** -3.5)
    assert r.ph == pytest.approx(8.3, abs=0.1)  # textbook value to one decimal
    assert m["Ca"] * 1e3 == pytest.approx(0.5, abs=0.05)  # textbook "about 0.5 mM"
    assert r.solid_moles[r.solids.index("CaCO3")] > 0
    assert r.co2_from_gas < 0   # the excess carbonate degasses toward the fixed pressure


def test_calcite_solubility_under_one_atm_co2():
    # calcite solubility at pCO2 = 1 atm, 25 °C: ≈ 9 mmol/kg Ca (Plummer & Busenberg 1982; from memory);
    # 10 %: the value is recalled and the model carries no CaHCO3+/CaCO3° ion pairs (HMW 1984 fold them
    # into beta(Ca-HCO3))
    r, m, chem = state({"Ca": 0.05, "CO3": 0.05}, co2=ATM)
    assert m["Ca"] * 1e3 == pytest.approx(9.0, rel=0.10)
    # Henry's law: CO2(aq) = K_H p gamma_CO2^-1, 0.034 mol/kg at 1 atm (Plummer & Busenberg 1982)
    assert m["CO2"] == pytest.approx(0.034, rel=0.02)


def test_rain_water_ph():
    # pure water at pCO2 = 10^-3.5 atm: pH 5.6 (common practice: "unpolluted rain")
    r, m, chem = state({"Na": 1e-6, "Cl": 1e-6}, co2=ATM * 10 ** -3.5)
    assert r.ph == pytest.approx(5.6, abs=0.1)  # the textbook value is given to one decimal (5.6)


def test_phoenix_wcl_with_calcite_at_mars_co2():
    # Phoenix WCL: pH 7.7 ± 0.5 with calcite in the soil (Hecht et al. 2009, Science 325, 64; Boynton et al.
    # 2009, Science 325, 61); ions from Hecht 2009 / Kounaves 2010 (Na, Mg, Cl, ClO4 from memory), SO4
    # closing the charge, plus 10 mmol/kg excess CaCO3 (a few wt% calcite in the cell's ~1 g of soil).
    # CO2 at 570 Pa: about 95 % of a 600 Pa Mars atmosphere (common practice).
    wcl = {"Na": .0014, "K": .00038, "Mg": .0033, "Ca": .00058 + .010, "Cl": .00047, "ClO4": .0024,
           "SO4": .003335, "CO3": .010}
    r, m, chem = state(wcl, co2=570.0)
    assert r.solid_moles[r.solids.index("CaCO3")] > 0
    assert 7.2 <= r.ph <= 8.2   # the published 7.7 ± 0.5


# ---- closed system, solubilities --------------------------------------------------------------------

def _solubility(name, T):
    chem0 = ch.load(("Na", "HCO3", "CO3"))
    s = chem0.solid(name)
    lo, hi = 0.3, 6.0
    while hi / lo > 1.002:
        mid = math.sqrt(lo * hi)
        r, m, chem = state({i: nu * mid for i, nu in s.stoich}, T)
        if np.any(r.solid_moles > 0):
            hi = mid
        else:
            lo = mid
    return math.sqrt(lo * hi)


@pytest.mark.parametrize("name, wt, M, tol", [
    # CRC Handbook, Aqueous solubility of inorganic compounds at various temperatures, 25 °C (from memory):
    # NaHCO3 9.32 mass %, Na2CO3 23.5 mass %; held out of scripts/fit_carbonate.py (fitted to 0-20, 30 °C).
    # Tolerances: 3 % and 7 %, the residuals of the neighbouring fitted points (printed by the script).
    ("NaHCO3", 9.32, 84.007, 0.03),
    ("Na2CO3·10H2O", 23.5, 105.988, 0.07),
])
def test_sodium_carbonate_solubility_25C(name, wt, M, tol):
    m_data = wt / (M * (100 - wt)) * 1000
    assert _solubility(name, T25) == pytest.approx(m_data, rel=tol)


def test_co2_salting_out_in_NaCl():
    # CO2 solubility falls ~20 % from water to 1 mol/kg NaCl at 25 °C (Setschenow coefficient ≈ 0.1 kg/mol
    # on a log10 basis; e.g. Weiss 1974, Mar. Chem. 2, 203; from memory): gamma_CO2 ≈ 1.2-1.3
    chem = ch.load(("Na", "Cl", "CO2"))
    m = np.zeros(chem.n)
    m[chem.index("Na")] = m[chem.index("Cl")] = 1.0
    m[chem.index("CO2")] = 0.03
    m[chem.index("H")] = m[chem.index("HCO3")] = 1e-6
    m[chem.index("OH")] = m[chem.index("CO3")] = 1e-9
    g = chem.activity_coefficients(m, T25)[chem.index("CO2")]
    assert 1.15 <= g <= 1.32


@settings(max_examples=12, deadline=None)
@given(na=st.floats(1e-3, 0.5), hco3_frac=st.floats(0.05, 0.95), co3_frac=st.floats(0.0, 0.9))
def test_closed_system_conserves_carbon_and_charge(na, hco3_frac, co3_frac):
    # invariants of a closed system (common practice): total carbon and electroneutrality kept
    hco3 = na * hco3_frac
    co3 = (na - hco3) * co3_frac / 2
    cl = na - hco3 - 2 * co3
    vals = {"Na": na, "HCO3": hco3, "CO3": co3, "Cl": cl} if cl > 1e-9 else {"Na": na, "HCO3": hco3 + cl, "CO3": co3}
    r, m, chem = state(vals)
    c_liq = m["CO2"] + m["HCO3"] + m["CO3"]
    c_sol = sum(x * sum(nu for i, nu in chem.solid(nm).stoich if i in ("HCO3", "CO3"))
                for nm, x in zip(r.solids, r.solid_moles)) / (r.liquid_water_mol * 0.018015268)
    c_in = vals["HCO3"] + vals.get("CO3", 0.0)
    assert (c_liq * r.liquid_water_mol * 0.018015268 + c_sol * r.liquid_water_mol * 0.018015268) == \
        pytest.approx(c_in, rel=1e-8)   # rounding of the folded reaction extents
    q = float(np.dot(chem.z, r.molality))
    assert abs(q) < 1e-9 * float(np.dot(np.abs(chem.z), r.molality))


# ---- paths and divides ------------------------------------------------------------------------------

def test_evaporation_alkaline_branch_after_calcite():
    # Hardie & Eugster (1970), Mineral. Soc. Am. Spec. Pap. 3, 273: a dilute water with 2 Ca < alkalinity
    # precipitates calcite first, which exhausts Ca; the brine follows the alkaline branch (pH rises,
    # carbonate enriched) and ends with sodium carbonates
    comp = {"Na": 0.0008, "Ca": 0.0002, "Cl": 0.0002, "HCO3": 0.0010}
    ds = evaporate(comp, temperature_K=T25, step=0.25, co2_pressure_Pa=40.0)
    assert str(ds.event_solid.values[0]) == "CaCO3"
    assert float(ds.concentration_factor.sel(water_removed=float(ds.event_at[0]), method="nearest")) > 1.0
    assert ds.event_exhausted_ion.values[0] == "Ca"
    assert ds.event_enriched_ion.values[0] == "alkalinity"
    assert "alkaline" in ds.event_branch.values[0]
    later = [str(s) for s in ds.event_solid.values[1:]]
    assert any(s in later for s in ("NaHCO3", "Na2CO3·10H2O", "Na2CO3·H2O", "Na3H(CO3)2·2H2O"))
    ph = ds.pH.values[np.isfinite(ds.pH.values)]
    assert ph[-1] > ph[0] + 1.0
    ca = ds.ion_molality.sel(ion="Ca").values
    assert np.nanmin(ca) < 0.1 * ca[0]


def test_evaporation_calcium_branch():
    # Hardie & Eugster (1970): with 2 Ca > alkalinity calcite exhausts the carbonate and the brine stays
    # Ca-rich (the path toward gypsum/CaCl2 brines); pH falls as the carbonate is used up
    comp = {"Na": 0.001, "Ca": 0.002, "Cl": 0.0046, "HCO3": 0.0004}
    ds = evaporate(comp, temperature_K=T25, step=0.3, concentration_factor_end=300.0, co2_pressure_Pa=40.0)
    k = list(ds.event_solid.values).index("CaCO3")
    assert ds.event_exhausted_ion.values[k] == "alkalinity"
    assert ds.event_enriched_ion.values[k] == "Ca"
    alk = ds.alkalinity.values
    assert alk[-1] < alk[0]
    assert ds.attrs["carbonate_system"] == "open"


def test_freeze_stops_at_carbonate_validity_or_flags():
    comp = {"Na": 0.01, "Cl": 0.008, "HCO3": 0.002}
    ds = freeze(comp, temperature_start_K=275.15, step_K=1.0)
    assert float(ds.temperature.min()) >= co.T_VALID[0] - 1e-9
    assert "273.15" in ds.attrs["stopped_by"]
    ds2 = freeze(comp, temperature_start_K=275.15, temperature_end_K=265.15, step_K=1.0, extrapolate_binaries=True)
    below = ds2.temperature.values < co.T_VALID[0]
    assert below.any() and np.all(ds2.validity_flag.values[below] & 1)
    assert "pH" in ds2 and np.all(np.isfinite(ds2.pH.values))


def test_stage_two_brines_have_no_carbonate_variables():
    ds = evaporate({"Na": 0.1, "Cl": 0.1}, temperature_K=T25, concentration_factor_end=2.0)
    assert "pH" not in ds and "H" not in list(ds.ion.values)


# ---- bad input ---------------------------------------------------------------------------------------

@pytest.mark.parametrize("p", [-1.0, 0.0, 3e5, float("nan"), "600", True])
def test_bad_co2_pressure(p):
    with pytest.raises(ConfigError, match="co2_pressure_Pa"):
        evaporate({"Na": 0.01, "HCO3": 0.01}, temperature_K=T25, co2_pressure_Pa=p)


def test_unknown_ion_lists_carbonate_names():
    with pytest.raises(ConfigError, match="HCO3, CO3, CO2"):
        evaporate({"Na": 0.01, "HS": 0.01}, temperature_K=T25)


def test_cli_bad_co2_in_file(tmp_path, capsys):
    # the project's CLI rules: one line naming the field, exit 2, nothing written
    f = tmp_path / "c.toml"
    f.write_text('[composition]\nNa = 0.01\nHCO3 = 0.01\n[evaporate]\ntemperature_K = 298.15\n'
                 'co2_pressure_Pa = -5\n')
    assert main(["brine", "evaporate", str(f)]) == 2
    err = capsys.readouterr().err
    assert "evaporate.co2_pressure_Pa" in err and err.count("\n") == 1
    assert not list(tmp_path.glob("c_*"))


def test_cli_open_system_reports_ph(tmp_path, capsys):
    f = tmp_path / "s.toml"
    f.write_text('[composition]\nNa = 0.0008\nCa = 0.0002\nCl = 0.0002\nHCO3 = 0.0010\n'
                 '[evaporate]\ntemperature_K = 298.15\nstep = 0.5\nconcentration_factor_end = 50.0\n')
    assert main(["brine", "evaporate", str(f), "--co2-pressure", "40"]) == 0
    out = capsys.readouterr().out
    assert "calcite" in out and "alkaline" in out and "pH (Pitzer scale; carbonate system open" in out
    ds = xr.open_dataset(tmp_path / "s_evaporate.nc")
    assert ds.attrs["carbonate_system"] == "open" and "pH" in ds
    ds.close()


def test_dic_input_is_the_same_water_as_its_species():
    # DIC with the alkalinity closing the charge is an exact restatement (common practice: alkalinity =
    # charge excess of the strong cations); both inputs must give one equilibrium
    vals, _ = paths.check_composition({"Na": 0.01, "Cl": 0.007, "DIC": 0.004})
    assert vals["HCO3"] == pytest.approx(0.003) and vals["CO2"] == pytest.approx(0.001) and "CO3" not in vals
    a = evaporate({"Na": 0.01, "Cl": 0.007, "DIC": 0.004}, temperature_K=T25, concentration_factor_end=1.0)
    b = evaporate({"Na": 0.01, "Cl": 0.007, "HCO3": 0.003, "CO2": 0.001}, temperature_K=T25,
                  concentration_factor_end=1.0)
    assert float(a.pH[0]) == pytest.approx(float(b.pH[0]), abs=1e-9)
    # the textbook bicarbonate buffer: pH ≈ pK1 + log10(HCO3/CO2) = 6.35 + 0.48 (Henderson-Hasselbalch;
    # 0.1 for the activity coefficients at I = 0.01)
    assert float(a.pH[0]) == pytest.approx(6.35 + math.log10(3.0), abs=0.1)


@pytest.mark.parametrize("comp, needle", [
    ({"Na": 0.01, "Cl": 0.007, "DIC": 0.001}, "between 0 and 2 DIC"),
    ({"Na": 0.01, "Cl": 0.012, "DIC": 0.004}, "between 0 and 2 DIC"),
    ({"Na": 0.01, "Cl": 0.007, "DIC": 0.004, "HCO3": 0.003}, "either DIC"),
])
def test_bad_dic(comp, needle):
    with pytest.raises(ConfigError, match=needle):
        paths.check_composition(comp)


def test_seawater_ph_and_calcite_supersaturation():
    # surface seawater at 25 °C (major ions as in the seawater freezing tests; DIC 2.05 mM, carbonate
    # alkalinity 2.30 meq/kg): pH ≈ 8.2 on the free-proton scale (8.1 on the total scale) and calcite
    # supersaturated about 5-6 fold (common practice, e.g. Zeebe & Wolf-Gladrow 2001, CO2 in Seawater;
    # from memory).  Calcite is excluded: the ocean holds it metastably.  Tolerances: 0.2 pH for the
    # scale and the borate alkalinity the model lacks; a factor 1.5 on the saturation state.
    sw = {"Na": 0.486, "K": 0.0106, "Mg": 0.0547, "Ca": 0.0107, "Cl": 0.566, "SO4": 0.0293,
          "HCO3": 0.00180, "CO3": 0.00025}
    r, m, chem = state(sw, exclude=("calcite",))
    assert r.ph == pytest.approx(8.2, abs=0.2)
    ln_iap = sum(math.log(m[i]) + r.ln_gamma[chem.index(i)] for i in ("Ca", "CO3"))
    omega = math.exp(ln_iap - chem.solid("calcite").ln_k(T25))
    assert 5.5 / 1.5 <= omega <= 5.5 * 1.5
    assert m["MgCO3(aq)"] > m["CO3"]   # most carbonate ion is paired with Mg in seawater (common practice)


@pytest.mark.parametrize("name, pk", [
    # 0 °C: pK1 6.58 (Harned & Davis 1943, J. Am. Chem. Soc. 65, 2030), pK2 10.63 (Harned & Scholes 1941,
    # J. Am. Chem. Soc. 63, 1706), pKw 14.94 (Harned & Robinson 1940); from memory
    ("CO2 hydration and first dissociation", 6.58),
    ("bicarbonate dissociation", 10.63),
    ("water dissociation", 14.94),
])
def test_pk_at_0C(name, pk):
    r = next(x for x in co.data()["reactions"] if x["name"] == name)
    # 0.02: the recalled values to two decimals, and the fits' own scatter
    assert -co.log10k_pb(r["coef"], 273.15) == pytest.approx(pk, abs=0.02)


def test_calcite_solubility_is_retrograde():
    # calcite is less soluble in warmer water at a fixed CO2 pressure (common practice; Plummer &
    # Busenberg 1982): dissolved Ca falls from 5 to 45 °C at pCO2 = 10^-3.5 atm
    ca = [state({"Ca": 0.01, "CO3": 0.01}, T=T, co2=ATM * 10 ** -3.5)[1]["Ca"] for T in (278.15, 298.15, 318.15)]
    assert ca[0] > ca[1] > ca[2]


@settings(max_examples=8, deadline=None)
@given(alk=st.floats(1e-4, 0.049), extra_co2=st.floats(1e-4, 0.05), p=st.floats(10.0, 1e5))
def test_open_system_forgets_its_carbon(alk, extra_co2, p):
    # in an open system the alkalinity is conserved and the CO2 pressure sets the rest: the same water
    # with more dissolved CO2 at the start reaches the same state (common practice)
    base = {"Na": 0.05, "Cl": 0.05 - alk, "HCO3": alk}
    r1, m1, _ = state(base, co2=p)
    r2, m2, _ = state(dict(base, CO2=extra_co2), co2=p)
    assert r1.ph == pytest.approx(r2.ph, abs=1e-7)   # solver tolerance on SI (1e-9) scaled to pH
    assert m1["HCO3"] == pytest.approx(m2["HCO3"], rel=1e-6)


def test_mutual_deliquescence_with_carbonate_salts():
    # a mixture deliquesces below each of its salts (mutual deliquescence; Tang & Munkelwitz 1993 for the
    # concept), and calcite, nearly insoluble, leaves NaCl's deliquescence RH as it is (0.753, Greenspan
    # 1977; the model's own NaCl value to 1e-3, since calcite adds ~0.1 mmol/kg of solutes)
    from wetcycle.brines import mutual_deliquescence_rh as mdrh
    nat, nacl = mdrh({"natron": 1}, T25), mdrh({"NaCl": 1}, T25)
    both = mdrh({"natron": 1, "NaCl": 1}, T25, details=True)
    assert both["rh"] < min(nat, nacl) - 0.01
    assert set(both["solids"]) == {"NaCl", "Na2CO3·10H2O"}
    assert mdrh({"calcite": 1, "NaCl": 1}, T25) == pytest.approx(nacl, abs=1e-3)


def test_soda_brine_freezes_natron_first():
    # a Na-carbonate-chloride brine freezing: natron comes out soon after ice, before hydrohalite (the
    # winter natron of soda lakes; common practice), and the eutectic lies below NaCl-H2O's -21.2 °C
    # (Oakes, Bodnar & Simonson 1990, read): extra solutes lower it.  Below 0 °C every step is flagged.
    comp = {"Na": 0.1, "Cl": 0.05, "HCO3": 0.01, "CO3": 0.02}
    ds = freeze(comp, step_K=0.5, extrapolate_binaries=True, temperature_end_K=240.0)
    order = [str(s) for s in ds.event_solid.values]
    assert order.index("Na2CO3·10H2O") < order.index("NaCl·2H2O")
    assert 240.0 < ds.attrs["eutectic_temperature_K"] < 273.15 - 21.2
    assert np.all(ds.validity_flag.values[ds.temperature.values < 273.15] & 1)


def test_a_key_outside_its_table_in_the_carbonate_data_is_refused():
    # TOML puts a key written after a [[pair]] header into that pair (TOML v1.0.0, "Array of
    # Tables"): a mixing value placed there must be refused, not silently ignored
    import tomllib
    from wetcycle.brines import carbonate
    from wetcycle.errors import InputDataError
    doc = tomllib.loads(carbonate.PATH.read_text(encoding="utf-8"))
    carbonate.check_keys(doc)                        # the shipped file passes
    doc["pair"][-1]["theta"] = 0.1
    with pytest.raises(InputDataError, match=r"^carbonate.toml: \[\[pair\]\] entry \d+: key 'theta' is not allowed"):
        carbonate.check_keys(doc)
    with pytest.raises(InputDataError, match="top-level key 'extra'"):
        carbonate.check_keys({**tomllib.loads(carbonate.PATH.read_text(encoding="utf-8")), "extra": 1})
