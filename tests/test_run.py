"""Scenarios end to end: validation, the demo (short), NetCDF results, statistics, the command.

Checks against outside references where the result has one: CF-1.8 attribute
conventions (units, flag_values/flag_meanings); liquid hours equal the sum of the
saved liquid fractions times the step (definition, common practice); the Mars sol
length of Allison & McEwen (2000) in the clock.
"""

import shutil
import tomllib
from pathlib import Path

import numpy as np
import pytest
import xarray as xr

import wetcycle
from wetcycle import cli
from wetcycle.config import load_scenario, scenario_from_dict
from wetcycle.errors import ConfigError
from wetcycle.output import open_result
from wetcycle.phase import states
from wetcycle.runner import run

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "runs" / "demo.toml"


def short_demo(tmp_path, **clock):
    doc = tomllib.loads(DEMO.read_text())
    doc["clock"].update(dict(sols=4, spinup_max_years=2, steps_per_sol=48), **clock)
    doc["clock"].pop("years", None)
    doc["scenario"]["output"] = str(tmp_path / "short.nc")
    return scenario_from_dict(doc, text=DEMO.read_text(), base_dir=DEMO.parent, source="demo.toml")


@pytest.fixture(scope="module")
def demo_result(tmp_path_factory):
    tmp = tmp_path_factory.mktemp("demo")
    sc = short_demo(tmp)
    ds = run(sc)
    return ds, tmp / "short.nc"


SERIES = ("surface_temperature", "salt_temperature", "vapor_pressure", "relative_humidity",
          "relative_humidity_ice", "phase_state", "brine_water_activity", "liquid_water",
          "hydrate_water", "ice_water")
STATS = ("liquid_hours_per_year", "longest_liquid_spell_hours", "wet_events_per_year",
         "habitable_hours_per_year", "liquid_hours_by_ls", "liquid_hours_by_local_time",
         "liquid_temperature_min", "liquid_temperature_max", "liquid_water_activity_min",
         "liquid_water_activity_max")


def test_demo_netcdf_has_the_variables_and_cf_attributes(demo_result):
    ds, path = demo_result
    back = open_result(path)
    for v in SERIES + STATS:
        assert v in back, v
        assert "units" in back[v].attrs and "long_name" in back[v].attrs
    for c in ("sol", "solar_longitude", "local_solar_time", "salt", "site", "time"):
        assert c in back.coords
    # CF-1.8 flags for the categorical state
    fv = list(back.phase_state.attrs["flag_values"])
    assert fv == list(states.FLAG_VALUES)
    assert back.phase_state.attrs["flag_meanings"].split() == list(states.NAMES)
    assert back.attrs["Conventions"] == "CF-1.8"
    assert back.attrs["wetcycle_version"] == wetcycle.__version__
    assert "[[salt]]" in back.attrs["scenario"] and "not evidence" in back.attrs["caution"]
    assert list(back.salt.values) == ["Ca(ClO4)2", "CaCl2", "MgSO4"]


def test_clock_and_coordinates(demo_result):
    ds, _ = demo_result
    dt = np.diff(ds.time.values)
    # Allison & McEwen (2000): 1 sol = 88775.244 s; 48 steps per sol
    assert np.allclose(dt, 88775.244 / 48, rtol=1e-6)
    assert ds.sol.values[0] == 0 and ds.sol.values[-1] == 3
    assert np.all((ds.local_solar_time >= 0) & (ds.local_solar_time < 24))


def test_statistics_agree_with_saved_series(demo_result):
    ds, _ = demo_result
    dt = float(np.diff(ds.time.values)[0])
    years = ds.attrs["years"]
    liquid_h = (ds.liquid_fraction.sum("time") * dt / 3600.0 / years)
    assert np.allclose(liquid_h.values, ds.liquid_hours_per_year.values, rtol=1e-5)
    # a run of 4 sols lies in one Ls bin, simulated once in part: its hours are reported as held
    assert np.allclose(ds.liquid_hours_by_ls.sum("ls_bin", skipna=True), ds.liquid_hours, rtol=1e-5)
    assert np.allclose(ds.liquid_hours, liquid_h * years, rtol=1e-5)
    assert np.allclose(ds.liquid_hours_by_local_time.sum("hour_bin"), ds.liquid_hours_per_year, rtol=1e-5)
    assert np.all(ds.habitable_hours_per_year <= ds.liquid_hours_per_year + 1e-9)
    # a liquid state holds brine water; a crystalline one may hold only a sub-threshold film (a damp salt)
    liquid = np.isin(ds.phase_state.values, states.LIQUID)
    assert np.all(ds.liquid_water.values[liquid] > 0)
    assert np.all(ds.liquid_water.values[~liquid & (ds.phase_state.values != states.CRYSTALLINE)] == 0)
    # the water-weighted statistic: brine water over the liquid time, at most (max water) x (hours)
    lw_max = ds.liquid_water.where(liquid).max("time").fillna(0.0)
    assert np.all(ds.liquid_water_hours_per_year <= lw_max * ds.liquid_hours_per_year * (1 + 1e-6) + 1e-12)
    assert np.all((ds.liquid_water_hours_per_year > 0) == (ds.liquid_hours_per_year > 0))


def _water_balance(ds):
    W = (ds.liquid_water + ds.hydrate_water + ds.ice_water).astype(float).transpose("salt", "site", "time").values
    assert np.all(W >= 0)
    before = np.concatenate([ds.initial_water.values[..., None], W[..., :-1]], axis=-1)
    return W - before, ds.water_exchanged.transpose("salt", "site", "time").values


def test_water_conserved_in_the_run(demo_result, tmp_path):
    # Conservation of mass (definition): the water the parcel holds changes by exactly the water it
    # exchanged with vapour and frost, in every step, the first one included (from the initial
    # hydrate).  Tolerance: the stored float32 water amounts (relative 6e-8 of ~0.05 kg m-2).
    # Two runs: the demo (energy balance) and a humid prescribed series in which CaCl2 deliquesces
    # and dries every sol, so that water does move.
    humid = prescribed_doc(tmp_path, sols=6)
    humid["forcing"].update(temperature_mean=232.0, temperature_diurnal_amplitude=8.0, vapor_pressure_mean=6.0,
                            vapor_pressure_diurnal_amplitude=0.0)   # invented: RH 0.16-0.86 over the sol
    for ds in (demo_result[0], run(scenario_from_dict(humid))):
        change, exchanged = _water_balance(ds)
        np.testing.assert_allclose(change, exchanged, rtol=0, atol=2e-8)
    assert np.abs(exchanged).sum() > 1e-3  # the humid run exchanged water: the check is not empty


def test_scenario_errors_are_one_line(tmp_path):
    base = tomllib.loads(DEMO.read_text())
    cases = [
        (("site", 0, "latitude"), 95.0, "latitude"),
        (("site", 0, "albedo"), "bright", "albedo"),
        (("salt", 0, "name"), "NaBr9", "salt[1].name"),
        (("phase", None, "law"), "magic", "phase.law"),
        (("clock", None, "steps_per_sol"), 2, "steps_per_sol"),
        (("forcing", None, "kind"), "crystal_ball", "forcing.kind"),
    ]
    for (table, idx, key), value, expect in cases:
        doc = tomllib.loads(DEMO.read_text())
        (doc[table][idx] if idx is not None else doc[table])[key] = value
        with pytest.raises(ConfigError) as exc:
            scenario_from_dict(doc, source="demo.toml")
        msg = str(exc.value)
        assert expect in msg and "\n" not in msg and repr(value) in msg or str(value) in msg
    doc = tomllib.loads(DEMO.read_text())
    doc["site"][0]["colour"] = "red"
    with pytest.raises(ConfigError, match="unknown key"):
        scenario_from_dict(doc)


def test_cli_bad_scenario_exit_2_and_nothing_written(tmp_path, capsys):
    text = DEMO.read_text().replace("latitude = 58.0", "latitude = 142.0")
    p = tmp_path / "bad.toml"
    p.write_text(text)
    code = cli.main(["run", str(p), "-o", str(tmp_path / "out.nc"), "-q"])
    err = capsys.readouterr().err
    assert code == 2 and err.count("\n") == 1 and "latitude" in err
    assert not (tmp_path / "out.nc").exists()
    assert list(tmp_path.iterdir()) == [p]


def test_cli_run_and_summary(tmp_path, capsys):
    sc_text = DEMO.read_text().replace("years = 1.0", "sols = 2").replace("spinup_max_years = 10",
                                                                           "spinup_max_years = 0")
    p = tmp_path / "tiny.toml"
    p.write_text(sc_text.replace('output = "demo/demo.nc"', 'output = "tiny.nc"'))
    assert cli.main(["run", str(p), "-q"]) == 0
    out = capsys.readouterr().out
    assert "Ca(ClO4)2" in out and "Caution" in out and "tiny.nc" in out
    assert cli.main(["summary", str(tmp_path / "tiny.nc")]) == 0
    assert "liquid h/yr" in capsys.readouterr().out
    assert not any(f.name.endswith(".tmp") for f in tmp_path.iterdir())


def test_chamber_scenario_runs(tmp_path):
    # The invented chamber programme of forcing/chamber_demo.toml replayed on CaCl2 (its ramp at
    # 243 K is below the NaCl eutectic, where a salt does not deliquesce in the model).
    doc = {
        "scenario": {"name": "chamber", "output": str(tmp_path / "c.nc")},
        "clock": {"step_s": 60.0},
        "site": [{"name": "chamber", "latitude": 0.0, "longitude": 0.0}],
        "forcing": {"kind": "chamber", "programme": str(ROOT / "forcing" / "chamber_demo.toml")},
        "salt": [{"name": "CaCl2", "loading": 0.01}],
    }
    ds = run(scenario_from_dict(doc))
    assert ds.sizes["time"] > 100
    assert float(ds.liquid_hours.sel(salt="CaCl2").values[0]) > 0  # the RH ramp passes the DRH


def test_file_scenario_runs(tmp_path):
    # The invented CSV series of an imaginary Earth analog site (forcing/analog_site_demo.csv).
    import csv
    rows = list(csv.reader(l for l in open(ROOT / "forcing" / "analog_site_demo.csv") if not l.startswith("#")))
    start = rows[1][0]
    doc = {
        "scenario": {"name": "analog", "planet": "earth", "output": str(tmp_path / "a.nc")},
        "clock": {"start_utc": start, "sols": 1, "steps_per_sol": 48},
        "site": [{"name": "Site Kestrel", "latitude": -24.0, "longitude": 10.0}],
        "forcing": {"kind": "file", "path": str(ROOT / "forcing" / "analog_site_demo.csv"),
                    "gap_policy": "interpolate", "max_gap_s": 7200.0},
        "salt": [{"name": "NaCl"}, {"name": "CaCl2"}],
    }
    ds = run(scenario_from_dict(doc))
    assert ds.sizes["time"] == 48
    assert np.all(np.isfinite(ds.relative_humidity))


def test_package_run_stays_callable_after_use(tmp_path):
    # Python import semantics (common practice): a submodule named like a package attribute
    # replaces that attribute once imported; wetcycle.run must stay the documented function.
    import wetcycle
    f = wetcycle.run
    import wetcycle.runner  # noqa: F401  (the orchestrator module, imported as the CLI does)
    assert callable(wetcycle.run) and wetcycle.run is f


def test_sols_and_years_together_refused():
    # A scenario must say how long it runs once (one clear line; common practice for configs).
    doc = tomllib.loads(DEMO.read_text())
    doc["clock"]["sols"] = 3
    with pytest.raises(ConfigError, match=r"clock.sols and clock.years: give one or the other") as exc:
        scenario_from_dict(doc, source="demo.toml")
    assert "\n" not in str(exc.value)


@pytest.mark.parametrize("bad", ["a_folder", "missing_parent_is_a_file/x.nc", "ends_with_slash/"])
def test_cli_unwritable_output_refused_before_computing(tmp_path, capsys, bad):
    (tmp_path / "a_folder").mkdir()
    (tmp_path / "missing_parent_is_a_file").write_text("not a folder")
    code = cli.main(["run", str(DEMO), "-o", str(tmp_path / bad) + ("/" if bad.endswith("/") else ""), "-q"])
    err = capsys.readouterr().err
    assert code == 2 and err.count("\n") == 1 and "--output" in err
    assert sorted(p.name for p in tmp_path.iterdir()) == ["a_folder", "missing_parent_is_a_file"]


def test_result_file_mode_follows_umask(demo_result, tmp_path):
    # POSIX (common practice): a new file gets mode 0666 & ~umask; mkstemp's 0600 must not leak.
    import os
    from wetcycle.output import write_result
    old = os.umask(0o022)
    os.umask(old)
    p = write_result(demo_result[0], tmp_path / "m.nc")
    assert (p.stat().st_mode & 0o777) == (0o666 & ~old)


def test_site_series_carry_validity_flag_and_limit_notes(demo_result):
    # CF-1.8 flags: validity_flag as a bit field (flag_masks/flag_meanings); the summary names the model
    # limits a result leans on, and says when '/yr' figures come from less than a year.
    from wetcycle.output import summary_text
    demo_result = open_result(demo_result[1])  # as read back from the file
    vf = demo_result["validity_flag"]
    assert vf.dims == ("salt", "site", "time") and list(vf.attrs["flag_masks"]) == [1, 2, 4, 8]
    assert len(vf.attrs["flag_meanings"].split()) == 4
    # the statistics count the bits of the saved series
    for k, bit in (("clamped_steps", 1), ("molality_limit_steps", 2), ("lower_limit_freezes", 4)):
        np.testing.assert_array_equal(demo_result[k].values, ((vf.values & bit) != 0).sum(axis=-1))
    lf = demo_result["liquid_fraction"].values
    np.testing.assert_array_equal(demo_result["extrapolated_liquid_steps"].values,
                                  (((vf.values & 8) != 0) & (lf > 0)).sum(axis=-1))
    # the phase settings, the liquid threshold among them, are recorded
    assert demo_result.attrs["phase_liquid_threshold"] == pytest.approx(0.01)
    assert demo_result.attrs["law"] == demo_result.attrs["phase_law"]
    np.testing.assert_array_equal(demo_result["clamped_liquid_steps"].values,
                                  (((vf.values & 1) != 0) & (lf > 0)).sum(axis=-1))
    text = summary_text(demo_result)
    assert "scaled up from it" in text  # 4 sols < 1 year
    for salt in demo_result.salt.values:
        n = int(demo_result[["molality_limit_steps", "lower_limit_freezes", "clamped_liquid_steps"]]
                .sel(salt=salt).to_array().sum())
        assert (f"Model limits, {salt}:" in text) == (n > 0)


def test_time_coordinate_is_cf_and_forcing_files_are_recorded(demo_result, tmp_path):
    # CF-1.8 sec. 4.4: a time coordinate carries "<unit> since <date>"; xarray (a general reference
    # library) must decode it to the run's start date.  Forcing files are named by sha256 (FIPS 180-4).
    import hashlib
    path = demo_result[1]
    raw = xr.open_dataset(path, decode_times=False)
    assert raw.time.attrs["units"] == f"seconds since {raw.attrs['start_utc']}"
    dec = xr.open_dataset(path)
    assert dec.time.values[0] == np.datetime64(raw.attrs["start_utc"].replace(" ", "T"))
    # a file forcing records its file; a chamber programme has no date (no CF time) but its text
    csv = ROOT / "forcing" / "analog_site_demo.csv"
    rows = [l for l in csv.read_text().splitlines() if l and not l.startswith("#")]
    doc = {"scenario": {"name": "analog", "planet": "earth", "output": str(tmp_path / "a.nc")},
           "clock": {"start_utc": rows[1].split(",")[0], "sols": 1, "steps_per_sol": 24},
           "site": [{"name": "Site Kestrel", "latitude": -24.0, "longitude": 10.0}],
           "forcing": {"kind": "file", "path": str(csv), "gap_policy": "interpolate", "max_gap_s": 7200.0},
           "salt": [{"name": "NaCl"}]}
    ds = run(scenario_from_dict(doc))
    assert ds.attrs["forcing_file_sha256"] == hashlib.sha256(csv.read_bytes()).hexdigest()
    prog = ROOT / "forcing" / "chamber_demo.toml"
    doc = {"scenario": {"name": "chamber", "output": str(tmp_path / "c.nc")}, "clock": {"step_s": 600.0},
           "site": [{"name": "chamber", "latitude": 0.0, "longitude": 0.0}],
           "forcing": {"kind": "chamber", "programme": str(prog)}, "salt": [{"name": "CaCl2"}]}
    ds = run(scenario_from_dict(doc))
    assert ds.attrs["forcing_programme_text"] == prog.read_text()
    assert "standard_name" not in ds.time.attrs and ds.time.attrs["units"] == "s"


@pytest.mark.parametrize("content", [b"\x89PNG\r\n\x1a\n\x00\x00\x00\rIHDR", "name = 'caf\u00e9'".encode("latin-1")])
def test_binary_or_non_utf8_scenario_is_one_line(tmp_path, capsys, content):
    # TOML 1.0 (toml.io): a TOML file is UTF-8 text; anything else is refused in one line.
    p = tmp_path / "scenario.toml"
    p.write_bytes(content)
    code = cli.main(["run", str(p), "-q"])
    err = capsys.readouterr().err
    assert code == 2 and err.count("\n") == 1 and "not a text TOML file" in err


def test_fractional_sols_refused_not_rounded():
    # Issue: sols = 2.6 ran 3 sols silently.  The clock runs whole sols; a fraction is refused.
    doc = tomllib.loads(DEMO.read_text())
    doc["clock"].pop("years")
    doc["clock"]["sols"] = 2.6
    with pytest.raises(ConfigError, match=r"clock.sols: 2.6 is not a whole number") as ei:
        scenario_from_dict(doc, source="demo.toml")
    assert "\n" not in str(ei.value)
    doc["clock"]["sols"] = 3.0
    assert scenario_from_dict(doc)["clock"]["sols"] == 3.0


@pytest.mark.parametrize("name", ["analog_file_demo", "chamber_demo"])
def test_example_scenarios_run(tmp_path, name):
    # Every example in runs/ must run as shipped (paths relative to the scenario file).
    sc = load_scenario(ROOT / "runs" / f"{name}.toml")
    ds = run(sc, write=False)
    assert np.isfinite(ds.salt_temperature).all() and ds.sizes["salt"] == 2


def prescribed_doc(tmp_path, **clock):
    return {"scenario": {"name": "p", "output": str(tmp_path / "p.nc")},
            "clock": dict(dict(start_ls=10.0, sols=120, steps_per_sol=24), **clock),
            "site": [{"name": "s", "latitude": 0.0, "longitude": 0.0}],
            "forcing": {"kind": "prescribed", "temperature_mean": 250.0, "temperature_diurnal_amplitude": 25.0,
                        "vapor_pressure_mean": 0.6, "vapor_pressure_diurnal_amplitude": 0.2},
            "salt": [{"name": "CaCl2"}], "habitability": {}}


def test_short_run_reports_ls_bins_as_held_and_says_it_is_short(tmp_path):
    # Issue: a 150-sol run reported 535.6 h in a 30 deg Ls bin that held 117.9 h.  A bin's hours are
    # those it held (per occurrence simulated, never scaled up); bins not simulated are NaN.
    # Reference: the saved liquid fractions times the step, grouped by the saved Ls (definition).
    ds = run(scenario_from_dict(prescribed_doc(tmp_path)))
    dt = float(np.diff(ds.time.values)[0])
    ls = ds.solar_longitude.values
    held = np.array([(ds.liquid_fraction.isel(salt=0, site=0).values[(ls >= 30 * b) & (ls < 30 * (b + 1))]).sum()
                     * dt / 3600.0 for b in range(12)])
    got = ds.liquid_hours_by_ls.isel(salt=0, site=0).values
    simulated = np.array([((ls >= 30 * b) & (ls < 30 * (b + 1))).any() for b in range(12)])
    assert simulated.sum() in (3, 4) and np.all(np.isnan(got[~simulated]))
    np.testing.assert_allclose(got[simulated], held[simulated], rtol=1e-9)  # same sums, other order
    # a bin's edges fall inside steps: its coverage may pass 1 by up to one step's share (1/24 sol)
    cov = ds.ls_bin_coverage.values
    assert np.all(cov[simulated] > 0) and np.all(cov <= 1.0 + 1.0 / 24 / 40)
    comment = ds.liquid_hours_per_year.attrs["comment"]
    assert "not a statistic of a whole year" in comment
    assert np.allclose(ds.liquid_hours_per_year * ds.attrs["years"], ds.liquid_hours)


def test_chamber_reports_totals_and_refuses_clock_fields(tmp_path):
    # Issue: an 8-hour programme was reported as 3,630 h per year.  A chamber has no year and no sun.
    doc = {"scenario": {"name": "chamber", "output": str(tmp_path / "c.nc")},
           "clock": {"step_s": 60.0},
           "site": [{"name": "chamber", "latitude": 0.0, "longitude": 0.0}],
           "forcing": {"kind": "chamber", "programme": str(ROOT / "forcing" / "chamber_demo.toml")},
           "salt": [{"name": "CaCl2", "loading": 0.01}]}
    ds = run(scenario_from_dict(doc))
    assert "liquid_hours_per_year" not in ds and "liquid_hours_by_ls" not in ds and "hour_bin" not in ds.dims
    total = float(ds.liquid_fraction.sum() * 60.0 / 3600.0)
    assert float(ds.liquid_hours.sel(salt="CaCl2").values[0]) == pytest.approx(total, rel=1e-5)  # float32 series
    assert total <= float(ds.time.values[-1]) / 3600.0 + 1e-9        # never more than the programme lasts
    assert ds.time.attrs["long_name"] == "time since the start of the programme"
    from wetcycle.output import summary_text
    assert "liquid h (total)" in summary_text(ds)
    for key, value in (("sols", 3), ("start_ls", 90.0), ("steps_per_sol", 48)):
        bad = json_copy(doc)
        bad["clock"][key] = value
        with pytest.raises(ConfigError, match=f"clock.{key}: not used by a chamber programme"):
            scenario_from_dict(bad)


def json_copy(d):
    import json
    return json.loads(json.dumps(d))


def test_earth_runs_speak_of_days_and_months(tmp_path):
    # Issue: Earth analog runs spoke of sols and Ls.  Months are calendar months (UTC).
    doc = prescribed_doc(tmp_path, sols=40)
    doc["scenario"]["planet"] = "earth"
    doc["clock"] = {"start_utc": "2030-01-20T00:00:00Z", "sols": 40, "steps_per_sol": 24}
    ds = run(scenario_from_dict(doc))
    assert "liquid_hours_by_ls" not in ds and list(ds.month.values) == list(range(1, 13))
    by_month = ds.liquid_hours_by_month.isel(salt=0, site=0).values
    assert np.isfinite(by_month[:3]).sum() == 2 and np.all(np.isnan(by_month[2:]))   # January and February
    np.testing.assert_allclose(ds.month_coverage.values[:2], [12 / 31, 28 / 28], rtol=1e-9)  # 12 and 28 days
    assert "Earth year" in ds.liquid_hours_per_year.attrs["long_name"]
    assert ds.liquid_hours_per_year.attrs["units"] == "h (365.2422 d)-1"
    assert "day" in ds.sol.attrs["long_name"]


def test_site_result_names_its_inputs_by_hash(tmp_path):
    # Every file the scenario names and each salt's tables, by SHA-256 (FIPS 180-4; hashlib).
    import hashlib
    import json
    doc = {"scenario": {"name": "analog", "planet": "earth", "output": str(tmp_path / "a.nc")},
           "clock": {"start_utc": "2024-12-10T00:00:00Z", "sols": 1, "steps_per_sol": 24},
           "site": [{"name": "Site Kestrel", "latitude": -24.0, "longitude": 10.0}],
           "forcing": {"kind": "file", "path": str(ROOT / "forcing" / "analog_site_demo.csv"),
                       "gap_policy": "interpolate", "max_gap_s": 7200.0},
           "salt": [{"name": "NaCl"}]}
    ds = run(scenario_from_dict(doc))
    h = json.loads(ds.attrs["input_sha256"])
    csv = ROOT / "forcing" / "analog_site_demo.csv"
    assert h["forcing.path"]["sha256"] == hashlib.sha256(csv.read_bytes()).hexdigest()
    assert len(h["salt:NaCl"]["sha256"]) == 64
