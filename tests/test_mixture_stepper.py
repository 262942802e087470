"""Salt mixtures in the time stepper (issue 13, part 3): tables, kernel, scenarios, grids.

Tables are built small (few temperatures, coarse spacing) to keep the suite fast.
"""

import tomllib
from pathlib import Path

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from wetcycle import cli
from wetcycle.brines import mutual_deliquescence_rh
from wetcycle.brines import mixture as mx
from wetcycle.config import scenario_from_dict
from wetcycle.errors import ConfigError
from wetcycle.phase.mixture_model import MixtureModel
from wetcycle.phase.states import BRINE, BRINE_WITH_ICE, BRINE_WITH_SALT, CRYSTALLINE, FROZEN

ROOT = Path(__file__).resolve().parents[1]
NACL_KCL = {"NaCl": 0.5, "KCl": 0.5}


@pytest.fixture(scope="module")
def nacl_kcl():
    return mx.mixture_tables(NACL_KCL, name="NaCl-KCl", T_range=(294.0, 302.0), dT=2.0)


@pytest.fixture(scope="module")
def nacl():
    return mx.mixture_tables({"NaCl": 1.0}, name="NaCl alone", T_range=(294.0, 302.0), dT=2.0)


@pytest.fixture(scope="module")
def cold_soil():
    # perchlorate-chloride soil around its eutectic and the ice field (binaries extrapolated, flagged)
    return mx.mixture_tables({"Mg(ClO4)2": 0.5, "NaCl": 0.5}, name="cold soil", extrapolate_binaries=True,
                             T_range=(196.0, 276.0), dT=4.0)


def ramp(model, T, rh, dt=60.0, loading=0.05):
    n = rh.size
    st_ = model.initial_state(1, loading, T)
    r = model.step(st_, np.full((n, 1), T), rh[:, None], 600.0, 0.0, dt)
    return st_, r


def test_single_salt_mixture_deliquesces_at_the_binary_drh(nacl):
    # NaCl DRH at 25 C: 0.7528 +- 0.0003 (Greenspan 1977, J. Res. NBS 81A, 89, Table 2); 0.01 asked by the issue
    m = MixtureModel("NaCl alone", {"NaCl": 1.0}, law="equilibrium", tables=nacl)
    rh = np.linspace(0.70, 0.80, 2001)
    _, r = ramp(m, 298.15, rh)
    k = int(np.argmax(r.liquid_fraction[:, 0] > 0))
    assert k > 0 and abs(rh[k] - 0.7528) < 0.01
    assert r.phase[k - 1, 0] == CRYSTALLINE and r.phase[k + 1, 0] in (BRINE_WITH_SALT, BRINE)


def test_nacl_kcl_mutual_deliquescence_from_the_stepper(nacl_kcl):
    # NaCl-KCl eutonic at 25 C: 72.7 % (Tang & Munkelwitz 1993, Atmos. Environ. 27A, 467; from memory);
    # tolerance 0.01: the fitted mixing terms' residual at this point (README table: 72.2 %)
    m = MixtureModel("NaCl-KCl", NACL_KCL, law="equilibrium", tables=nacl_kcl)
    rh = np.linspace(0.65, 0.80, 3001)
    _, r = ramp(m, 298.15, rh)
    k = int(np.argmax(r.liquid_fraction[:, 0] > 0))
    assert abs(rh[k] - 0.727) < 0.01
    # below either salt's own DRH (NaCl 0.753, Greenspan 1977; KCl 0.843, Greenspan 1977)
    assert rh[k] < 0.75
    # the stepper equals the path function's mutual deliquescence RH within the table's resolution
    # (linear in T between rows 2 K apart: ~1e-3)
    ref = mutual_deliquescence_rh({"NaCl": 0.5 / 0.05844, "KCl": 0.5 / 0.07455}, 298.15)
    assert abs(rh[k] - ref) < 2e-3


def test_held_parcel_converges_to_a_w_equal_rh(nacl_kcl):
    # equilibrium as the long-time limit of the vapour-limited law (common practice: a_w = RH at equilibrium)
    m = MixtureModel("NaCl-KCl", NACL_KCL, law="vapour_limited", tables=nacl_kcl)
    n = 3000
    st_ = m.initial_state(1, 0.05, 298.0)
    r = m.step(st_, np.full((n, 1), 298.0), 0.85, 600.0, 0.0, 600.0)
    assert r.phase[-1, 0] == BRINE
    assert abs(r.water_activity[-1, 0] - 0.85) < 1e-6  # relaxed for 500 h: the residual decays exponentially
    # the first step takes up no more than the initial Fick flux F = k_x p_sat (RH - MDRH) allows
    # (the binary kernel's law, imported: wetcycle.phase.kernel._exchange)
    from wetcycle.phase.kernel import _exchange
    psat, kx = _exchange(298.0, 600.0, 0.2, 2.5e-3)
    mdrh = float(np.interp(298.0, nacl_kcl.temperatures, nacl_kcl.mdrh))
    assert 0 < r.exchanged[0, 0] <= kx * psat * (0.85 - mdrh) * 600.0 * (1 + 1e-9)


def test_equilibrium_law_matches_the_equilibrium_solver(nacl_kcl):
    # a_w of the stepper's brine equals equilibrate's for the same water (tables interpolated in log water)
    from wetcycle.brines import chemistry as ch
    from wetcycle.brines.equilibrium import equilibrate
    m = MixtureModel("NaCl-KCl", NACL_KCL, law="equilibrium", tables=nacl_kcl)
    _, r = ramp(m, 298.0, np.full(3, 0.9))
    W = r.liquid_water[-1, 0] + r.hydrate_water[-1, 0]
    _, ions = mx.parse_mixture(NACL_KCL)
    chem = ch.load(tuple(ions))
    b = np.array([ions[i] for i in chem.ions]) * 0.05
    e = equilibrate(chem, b, W / ch.MW, 298.0)
    assert abs(e.water_activity - 0.9) < 2e-3  # log-water interpolation of a_w between table columns


def test_cold_mixture_freezes_and_flags_extrapolated_binaries(cold_soil):
    m = MixtureModel("cold soil", {"Mg(ClO4)2": 0.5, "NaCl": 0.5}, law="equilibrium", extrapolate_binaries=True,
                     tables=cold_soil)
    # above ice saturation at 240 K a brine on the ice field; at 200 K (below Mg(ClO4)2's eutectic,
    # 206 K, Chevrier et al. 2009; a mixture's eutectic cannot lie above it) no liquid
    T = np.array([240.0] * 200 + [200.0] * 200)
    from wetcycle.water import ice_water_activity
    rh = np.minimum(ice_water_activity(T) * 1.05, 1.0)
    st_ = m.initial_state(1, 0.05, 240.0)
    r = m.step(st_, T[:, None], rh[:, None], 600.0, 0.0, 600.0)
    # the equilibrium law fills an ice-free parcel up to the first ice: a brine on the ice liquidus,
    # a_w = a_w,ice (Murphy & Koop 2005), within the table's 4 K interpolation
    assert r.phase[150, 0] in (BRINE_WITH_SALT, BRINE_WITH_ICE, BRINE) and r.liquid_fraction[150, 0] == 1.0
    assert abs(r.water_activity[150, 0] - ice_water_activity(240.0)) < 0.01
    assert r.phase[-1, 0] == FROZEN and r.liquid_fraction[-1, 0] == 0.0
    # 240 K lies below NaCl's fitted range (245 K): the liquid steps are flagged (bit 8)
    assert np.all(r.validity_flag[100:200, 0] & 8)
    assert np.isnan(r.water_activity[-1, 0])


@settings(max_examples=25, deadline=None)
@given(st.lists(st.tuples(st.floats(200.0, 276.0), st.floats(0.0, 1.0), st.floats(0.0, 0.02)),
                min_size=2, max_size=40),
       st.sampled_from(["equilibrium", "vapour_limited"]))
def test_water_conserved_and_states_consistent(cold_soil, forcing, law):
    # invariant (common practice): hydrate + brine + ice changes exactly by the water exchanged
    m = MixtureModel("cold soil", {"Mg(ClO4)2": 0.5, "NaCl": 0.5}, law=law, extrapolate_binaries=True,
                     tables=cold_soil)
    a = np.array(forcing)
    T, rh, frost = a[:, 0:1], a[:, 1:2], a[:, 2:3]
    st_ = m.initial_state(1, 0.05, T[0])
    w0 = st_.W.copy()
    r = m.step(st_, T, rh, 600.0, frost, 900.0)
    total = r.liquid_water + r.hydrate_water + r.ice_water
    assert np.allclose(total[-1], w0 + r.exchanged.sum(axis=0), rtol=0, atol=1e-14)
    assert np.allclose(total, w0 + np.cumsum(r.exchanged, axis=0), rtol=0, atol=1e-14)
    assert np.all(r.liquid_water >= 0) and np.all(r.ice_water >= 0) and np.all(r.hydrate_water >= -1e-15)
    assert np.all((r.liquid_fraction >= 0) & (r.liquid_fraction <= 1))
    liquid = np.isin(r.phase, (BRINE, BRINE_WITH_SALT, BRINE_WITH_ICE))
    assert np.all(np.isfinite(r.water_activity[liquid])) and np.all(np.isnan(r.water_activity[~liquid]))
    assert np.all(r.liquid_water[liquid] > 0)
    assert np.all(r.ice_water[r.phase == BRINE_WITH_ICE] > 0) and np.all(r.ice_water[r.phase == FROZEN] > 0)
    assert np.all((r.water_activity[liquid] > 0) & (r.water_activity[liquid] <= 1))


def test_bad_mixture_entries_are_one_line_errors():
    with pytest.raises(ConfigError, match=r"'NaCI' is not a salt system; allowed: .*NaCl"):
        mx.parse_mixture({"NaCI": 1.0})
    with pytest.raises(ConfigError, match="add up to 0.9"):
        mx.parse_mixture({"NaCl": 0.5, "KCl": 0.4})
    with pytest.raises(ConfigError, match=r"mixture.NaCl: -0.5 is not allowed"):
        mx.parse_mixture({"NaCl": -0.5, "KCl": 1.5})


def scenario_doc(tmp_path, salts, **clock):
    doc = {
        "scenario": {"name": "mix", "output": str(tmp_path / "mix.nc")},
        "clock": dict(sols=2, steps_per_sol=24, **clock),
        "site": [{"name": "Salt Flat", "latitude": 10.0, "longitude": 20.0}],
        "forcing": {"kind": "prescribed", "temperature_mean": 298.0, "temperature_diurnal_amplitude": 2.0,
                    "vapor_pressure_mean": 2600.0, "vapor_pressure_diurnal_amplitude": 500.0,
                    "surface_pressure": 600.0},
        "salt": salts,
        "phase": {"law": "equilibrium"},
    }
    return doc


def write_toml(path, doc):
    lines = []
    for t in ("scenario", "clock", "forcing", "phase"):
        lines.append(f"[{t}]")
        lines += [f"{k} = {v!r}".replace("'", '"') for k, v in doc[t].items()]
    for t in ("site", "salt"):
        for it in doc[t]:
            lines.append(f"[[{t}]]")
            for k, v in it.items():
                if isinstance(v, dict):
                    v = "{ " + ", ".join(f'"{a}" = {b!r}' for a, b in v.items()) + " }"
                    lines.append(f"{k} = {v}")
                else:
                    lines.append(f"{k} = {v!r}".replace("'", '"').replace("True", "true"))
    path.write_text("\n".join(lines) + "\n")


@pytest.fixture
def small_tables(monkeypatch):
    monkeypatch.setattr(mx, "DEFAULT_DT", 4.0)  # coarse tables: the check is the plumbing, not the numbers


def test_cli_runs_a_mixture_scenario(tmp_path, small_tables, capsys):
    doc = scenario_doc(tmp_path, [{"name": "sea salt crust", "mixture": NACL_KCL}, {"name": "NaCl"}])
    p = tmp_path / "mix.toml"
    write_toml(p, doc)
    assert cli.main(["run", str(p)]) == 0
    import xarray as xr
    with xr.open_dataset(tmp_path / "mix.nc") as ds:
        assert list(ds.salt.values) == ["sea salt crust", "NaCl"]
        assert '"KCl": 0.5' in ds.attrs["mixtures"] and "equilibrium states only" in ds.attrs["mixture_model"]
        assert ds.ion_molality.dims == ("salt", "site", "time", "ion")
        assert sorted(ds.ion.values) == ["Cl", "K", "Na"]
        im = ds.ion_molality.sel(salt="sea salt crust", site="Salt Flat")
        wet = ds.liquid_water.sel(salt="sea salt crust", site="Salt Flat").values > 0
        # the brine is electrically neutral (Na + K = Cl), and NaCl alone has no ion series
        assert np.allclose((im.sel(ion="Na") + im.sel(ion="K") - im.sel(ion="Cl")).values[wet], 0, atol=1e-4)
        assert np.all(np.isnan(ds.ion_molality.sel(salt="NaCl").values))
        assert float(ds.liquid_hours.sel(salt="sea salt crust").max()) > 0


def test_bad_mixture_entry_exits_2_with_one_line(tmp_path, capsys):
    doc = scenario_doc(tmp_path, [{"name": "bad", "mixture": {"NaCl": 0.5, "Kcl2": 0.5}}])
    p = tmp_path / "bad.toml"
    write_toml(p, doc)
    assert cli.main(["run", str(p)]) == 2
    err = capsys.readouterr().err.strip()
    assert len(err.splitlines()) == 1 and "salt[1].mixture" in err and "'Kcl2' is not a salt system" in err
    assert not (tmp_path / "mix.nc").exists()


def test_grid_with_a_mixture_runs(tmp_path, small_tables):
    from wetcycle.grid import run_grid
    doc = tomllib.loads((ROOT / "runs" / "demo.toml").read_text())
    doc.pop("site")
    doc["grid"] = dict(lat_min=-20.0, lat_max=20.0, lat_step=20.0, lon_min=0.0, lon_max=60.0, lon_step=60.0,
                       chunk_cells=2)
    doc["clock"].update(sols=2, steps_per_sol=24, spinup_max_years=0)
    doc["clock"].pop("years", None)
    doc["salt"] = [{"name": "sea salt crust", "mixture": NACL_KCL, "extrapolate_binaries": True}]
    doc["scenario"]["output"] = str(tmp_path / "grid.nc")
    ds = run_grid(scenario_from_dict(doc))
    assert list(ds.salt.values) == ["sea salt crust"]
    assert ds.liquid_hours_per_year.shape == (1, 3, 2) and np.all(np.isfinite(ds.liquid_hours_per_year))
    assert "sea salt crust" in ds.attrs["mixtures"]


def test_perchlorate_chloride_mutual_deliquescence_below_either_salt():
    # Mg(ClO4)2/MgCl2 eutonic RH 28 % at 243-253 K (Gough, Chevrier & Tolbert 2014, read in the abstract;
    # journal from memory); the mixing terms were fitted to it (README: 31 % / 26 %): tolerance 0.05, the
    # fit's spread over that range.  Below both salts' own DRH (binary systems of wetcycle.salts).
    from wetcycle import salts
    tb = mx.mixture_tables({"Mg(ClO4)2": 0.5, "MgCl2": 0.5}, name="perchlorate-chloride", T_range=(244.0, 252.0),
                           dT=4.0)
    m = MixtureModel("perchlorate-chloride", {"Mg(ClO4)2": 0.5, "MgCl2": 0.5}, law="equilibrium", tables=tb)
    rh = np.linspace(0.15, 0.6, 2251)
    _, r = ramp(m, 248.0, rh)
    k = int(np.argmax(r.liquid_fraction[:, 0] > 0))
    assert k > 0 and abs(rh[k] - 0.28) < 0.05
    own = min(float(salts.load(n).deliquescence_rh(248.0)) for n in ("Mg(ClO4)2", "MgCl2"))
    assert rh[k] < own


@pytest.mark.parametrize("tables_name, law", [("cold_soil", "equilibrium"), ("cold_soil", "vapour_limited"),
                                              ("nacl_kcl", "equilibrium"), ("nacl_kcl", "vapour_limited")])
def test_kernel_gives_the_numbers_of_its_reference(request, tables_name, law):
    # The kernel's speed-up changed how it reads its tables, not what it computes: on random forcing
    # (temperatures inside and outside the tables, humid and dry air, frost, uneven steps) every output and
    # the carried state equal those of the kernel before the speed-up (tests/mixture_kernel_reference.py,
    # wetcycle 45076c1) exactly: the same floating-point operations in the same order.
    from mixture_kernel_reference import step_mixture_block as reference

    from wetcycle.phase import mixture_kernel as mk
    from wetcycle.phase.model import forcing_arrays
    tb = request.getfixturevalue(tables_name)
    m = MixtureModel("x", tb.composition, law=law, extrapolate_binaries=tb.extrapolate_binaries, tables=tb)
    rng = np.random.default_rng(13)
    n_step, n_cell = 120, 64
    lo, hi = tb.T_min - 6.0, tb.T_max + 6.0
    T = rng.uniform(lo, hi, n_cell)[None, :] + rng.normal(0.0, 2.0, (n_step, n_cell)).cumsum(axis=0)
    T = np.clip(T, lo, hi)
    rh = np.clip(rng.uniform(0.0, 1.1, (n_step, n_cell)) ** 2, 0.0, 1.0)
    frost = np.where(rng.uniform(size=(n_step, n_cell)) < 0.2, rng.uniform(0.0, 0.01, (n_step, n_cell)), 0.0)
    P = rng.uniform(300.0, 1200.0, (n_step, n_cell))
    dt = rng.uniform(60.0, 3600.0, n_step)
    results = []
    for kernel in (mk.step_mixture_block, reference):
        st0 = m.initial_state(n_cell, np.linspace(0.01, 0.2, n_cell), T[0])
        kst = mk.MixState(st0.W, st0.prev, st0.started)
        shape = T.shape
        out = mk.MixOut(np.empty(shape, np.int64), *(np.empty(shape) for _ in range(6)), np.empty(shape, np.int64),
                        np.empty(shape + (len(tb.ions),)))
        for a, b in ((0, 50), (50, n_step)):  # two blocks: the carried state is part of the check
            f = forcing_arrays(T[a:b], rh[a:b], P[a:b], frost[a:b], dt[a:b])
            o = mk.MixOut(*(x[a:b] for x in out))
            kernel(*f, st0.mass, m._law, m._xtab, m._ktab, kst, o)
        results.append((out, kst))
    (new, st_new), (ref, st_ref) = results
    for name, x, y in zip(mk.MixOut._fields + mk.MixState._fields, tuple(new) + tuple(st_new),
                          tuple(ref) + tuple(st_ref)):
        assert np.array_equal(x, y, equal_nan=True), name
    # the forcing reached every kind of state (else the comparison would miss a branch)
    seen = set(np.unique(new.phase))
    assert {CRYSTALLINE} < seen and seen & {BRINE, BRINE_WITH_SALT, BRINE_WITH_ICE}


def test_run_dataset_mixture_cell_equals_run_series(small_tables):
    # A mixture goes through run_series and run_dataset as a single salt does (DESIGN decision 1: one path
    # through the phase model, wetcycle.block.run_cells): a cell of run_dataset equals run_series on that
    # cell bitwise.  The physics is checked above; here the plumbing, and two outside facts: the brine is
    # electrically neutral (Na + K = Cl, common practice) and appears near the NaCl-KCl eutonic RH, 72.7 %
    # (Tang & Munkelwitz 1993, from memory; 0.03: 4 K table spacing and the 1 % ramp step).
    import xarray as xr

    import wetcycle
    mix = {"name": "sea salt crust", "mixture": NACL_KCL}
    t = np.arange(0.0, 48 * 1800.0, 1800.0)
    T = np.stack([298.0 + 2.0 * np.sin(t / 20000.0), np.full(t.size, 297.0)], axis=1)
    rh = np.stack([np.linspace(0.60, 0.95, t.size), np.linspace(0.95, 0.60, t.size)], axis=1)
    forcing = xr.Dataset({"surface_temperature": (("time", "site"), T, {"units": "K"}),
                          "relative_humidity": (("time", "site"), rh, {"units": "1"})},
                         coords={"time": ("time", t, {"units": "s"}), "site": ["a", "b"]})
    ds = wetcycle.run_dataset(forcing.chunk({"site": 1}), [mix, "NaCl"], law="equilibrium", series=True).compute()
    assert list(ds.salt.values) == ["sea salt crust", "NaCl"] and '"KCl": 0.5' in ds.attrs["mixtures"]
    # a time axis in several chunks streams through the same path (carried state): bitwise the same
    streamed = wetcycle.run_dataset(forcing.chunk({"site": 1, "time": 20}), mix, law="equilibrium",
                                    series=True).compute()
    for k in ("liquid_water", "phase_state", "liquid_hours"):
        assert np.array_equal(streamed[k].sel(salt="sea salt crust").values,
                              ds[k].sel(salt="sea salt crust").transpose(*streamed[k].sel(salt="sea salt crust").dims)
                              .values, equal_nan=True), k
    for j in range(2):
        one = wetcycle.run_series(mix, t, T[:, j], rh[:, j], law="equilibrium")
        cell = ds.sel(salt="sea salt crust").isel(site=j)
        for k in ("phase_state", "liquid_water", "hydrate_water", "brine_water_activity", "liquid_fraction",
                  "water_exchanged", "liquid_hours", "wet_events", "longest_liquid_spell_hours"):
            assert np.array_equal(cell[k].values, one[k].values, equal_nan=True), k
        wet = one.liquid_water.values > 0
        assert wet.any() and sorted(one.ion.values) == ["Cl", "K", "Na"]
        im = one.ion_molality
        assert np.allclose((im.sel(ion="Na") + im.sel(ion="K") - im.sel(ion="Cl")).values[wet], 0, atol=1e-4)
        assert np.all(np.isnan(im.values[~wet]))
    first = int(np.argmax(ds.liquid_water.sel(salt="sea salt crust").isel(site=0).values > 0))
    assert abs(rh[first, 0] - 0.727) < 0.03
    assert '"KCl": 0.5' in one.attrs["mixtures"] and "equilibrium states only" in one.attrs["mixture_model"]


def test_run_series_refuses_a_bad_mixture_in_one_line():
    import wetcycle
    t = np.arange(3.0)
    for salt, msg in (({"name": "x", "mixture": {"NaCl": 0.5, "KCl": 0.4}}, "salt.mixture: mass fractions add up"),
                      ({"mixture": NACL_KCL}, "salt.name: None is not allowed"),
                      ({"name": "x", "mixture": NACL_KCL, "loading": 1.0}, "key 'loading' is not allowed"),
                      (3.0, "salt: 3.0 is not allowed")):
        with pytest.raises(ConfigError, match=msg) as e:
            wetcycle.run_series(salt, t, np.full(3, 280.0), np.full(3, 0.5))
        assert "\n" not in str(e.value)


def test_mixture_given_as_ions_equals_it_given_as_salts(nacl_kcl):
    # The same salts given as ions (moles; only ratios matter) give the same tables: 0.5 kg NaCl + 0.5 kg KCl
    # is 0.5/M_NaCl mol Na, 0.5/M_KCl mol K and their sum of Cl (molar masses of the ions,
    # wetcycle.brines.chemistry.IONS: IUPAC atomic weights, from memory).  Scaled by 1000 (mmol): ratios only.
    from wetcycle.brines import chemistry as ch
    m_nacl = ch.IONS["Na"][1] + ch.IONS["Cl"][1]
    m_kcl = ch.IONS["K"][1] + ch.IONS["Cl"][1]
    ions = {"Na": 500 / m_nacl, "K": 500 / m_kcl, "Cl": 500 / m_nacl + 500 / m_kcl}
    comp, b = mx.parse_ions(ions)
    _, b_salts = mx.parse_mixture(NACL_KCL)
    for ion in b_salts:  # mol per kg of anhydrous salt; 1e-9: the stored mole fractions have 12 digits
        assert b[ion] == pytest.approx(b_salts[ion], rel=1e-9)
    tb = mx.mixture_tables({"ions": ions}, name="NaCl-KCl ions", T_range=(294.0, 302.0), dT=2.0)
    assert tb.composition == comp and sorted(tb.ions) == sorted(nacl_kcl.ions)
    order = [list(tb.ions).index(i) for i in nacl_kcl.ions]
    # the equilibrium solver converges to ~1e-10 in ln a_w; the compositions agree to 1e-12
    assert np.allclose(tb.aw, nacl_kcl.aw, rtol=0, atol=1e-8)
    assert np.allclose(tb.u_dry, nacl_kcl.u_dry, rtol=1e-6, atol=0)
    assert np.allclose(tb.mol[:, :, order], nacl_kcl.mol, rtol=1e-6, atol=1e-9)


def test_ions_with_a_charge_imbalance_over_one_percent_are_refused_in_one_line():
    # the brine functions' rule (issue 13: "a charge imbalance over 1 % is refused in one line");
    # electroneutrality of a salt is common practice
    with pytest.raises(ConfigError, match=r"ions: charge imbalance -4.88 % .* exceeds 1 %") as e:
        mx.parse_ions({"Na": 1.0, "Cl": 1.05})
    assert "\n" not in str(e.value)
    comp, b = mx.parse_ions({"Na": 1.0, "Cl": 1.005})  # 0.5 %: accepted, made neutral
    assert comp == {"ions": {"Cl": 0.5, "Na": 0.5}} and b["Na"] == b["Cl"]
    with pytest.raises(ConfigError, match=r"ion 'Na\+' is not known; allowed: Na, K"):
        mx.parse_ions({"Na+": 1.0, "Cl": 1.0})
    doc = scenario_doc(Path("/tmp"), [{"name": "leachate", "ions": {"Mg": 1.0, "ClO4": 1.0}}])
    with pytest.raises(ConfigError, match=r"salt\[1\].ions: charge imbalance \+66.67 %"):
        scenario_from_dict(doc)
    doc = scenario_doc(Path("/tmp"), [{"name": "leachate", "ions": {"Mg": 1.0, "ClO4": 2.0}}])
    sc = scenario_from_dict(doc)
    assert sc.salts[0]["mixture"] == {"ions": {"ClO4": pytest.approx(2 / 3, abs=1e-12),
                                               "Mg": pytest.approx(1 / 3, abs=1e-12)}}
    doc["salt"][0]["mixture"] = {"NaCl": 1.0}
    with pytest.raises(ConfigError, match=r"salt\[1\].ions: give a mixture as salts \(mixture\) or as ions"):
        scenario_from_dict(doc)
