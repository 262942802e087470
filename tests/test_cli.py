"""The wetcycle command: salt table, one system as JSON, one-line errors.

Reference values: Greenspan (1977, J. Res. NBS 81A, 89, Table 2) DRH of NaCl at
25 °C = 0.7529 ± 0.0012; NaCl-H2O eutectic 251.9 K (-21.2 °C) with ice +
hydrohalite (e.g. Oakes, Bodnar & Simonson 1990, Geochim. Cosmochim. Acta 54, 603).
"""

import json
import subprocess
import sys

import pytest

from wetcycle import cli, salts


def run(argv, capsys):
    code = cli.main(argv)
    out = capsys.readouterr()
    return code, out.out, out.err


def test_salts_table_lists_every_system(capsys):
    code, out, err = run(["salts"], capsys)
    assert code == 0 and err == ""
    for name in salts.names():
        assert name in out
    assert len(salts.names()) >= 10


def test_salts_json(capsys):
    code, out, _ = run(["salts", "--json"], capsys)
    rows = json.loads(out)
    nacl = next(r for r in rows if r["system"] == "NaCl")
    # Greenspan (1977): NaCl DRH 0.753 at 25 °C; JSON numbers are numbers, not strings
    assert isinstance(nacl["drh_298K"], float) and nacl["drh_298K"] == pytest.approx(0.753, abs=0.01)
    assert isinstance(nacl["eutectic_temperature_K"], float)


def test_salt_nacl_json_done_when(capsys):
    # Issue 2 "Done when": DRH 0.753 ± 0.01 at 298.15 K (Greenspan 1977) and a
    # eutectic at 252 ± 1.5 K with NaCl·2H2O and ice.
    code, out, _ = run(["salt", "NaCl", "--json", "--at", "298.15"], capsys)
    assert code == 0
    d = json.loads(out)
    assert d["system"] == "NaCl"
    assert set(d["solids"]) >= {"ice", "NaCl", "NaCl·2H2O"}
    assert d["eutectic"]["temperature_K"] == pytest.approx(252.0, abs=1.5)
    assert set(d["eutectic"]["solids"]) == {"ice", "NaCl·2H2O"}
    assert d["eutectic"]["molality"] > 0
    (at,) = d["at"]
    assert at["temperature_K"] == 298.15
    assert at["deliquescence_rh"] == pytest.approx(0.753, abs=0.01)
    assert at["stable_solid"] == "NaCl"
    assert at["ice_liquidus_molality"] is None  # above 273.15 K
    for key in ("saturation_molality", "ice_water_activity", "hydrate_transitions"):
        assert key in at
    assert isinstance(d["peritectics"], list)


def test_salt_below_freezing_has_liquidus_and_ice_activity(capsys):
    code, out, _ = run(["salt", "nacl", "--json", "--at", "263.15"], capsys)
    (at,) = json.loads(out)["at"]
    assert at["stable_solid"] == "NaCl·2H2O"  # hydrohalite below 0.1 °C (Oakes et al. 1990)
    assert 0 < at["ice_liquidus_molality"] < at["saturation_molality"]
    assert 0 < at["ice_water_activity"] < 1


def test_salt_readable_table(capsys):
    code, out, _ = run(["salt", "MgSO4", "--at", "298.15", "270"], capsys)
    assert code == 0 and "eutectic" in out and "298.15" in out


def test_unknown_name_one_line_exit_2(capsys):
    code, out, err = run(["salt", "Unobtainium"], capsys)
    assert code == 2 and out == ""
    assert err.count("\n") == 1 and "NaCl" in err and "Unobtainium" in err


def test_temperature_outside_validity_exit_2(capsys):
    code, _, err = run(["salt", "NaCl", "--at", "100"], capsys)
    assert code == 2 and err.count("\n") == 1 and "100" in err and "validity" in err


def test_bad_argument_exit_2(capsys):
    with pytest.raises(SystemExit) as exc:
        cli.main(["salt", "NaCl", "--at", "warm"])
    assert exc.value.code == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "warm" in err


def test_console_script_module_entry():
    # The installed entry point is wetcycle.cli:main; run it as a module in a subprocess.
    r = subprocess.run([sys.executable, "-m", "wetcycle.cli", "salt", "nope"], capture_output=True, text=True)
    assert r.returncode == 2 and "traceback" not in r.stderr.lower()


def test_hydration_above_the_drh_is_marked_as_via_brine(capsys):
    # Common practice (binary phase diagrams): a solid whose hydration RH lies above its own DRH
    # deliquesces first, so the change goes through the brine.  NaCl at 25 °C: DRH 0.753
    # (Greenspan 1977) below its hydrohalite hydration RH; at 250 K the hydration RH is below the DRH.
    code, out, _ = run(["salt", "NaCl", "--json", "--at", "298.15", "250"], capsys)
    at = json.loads(out)["at"]
    hot = at[0]["hydrate_transitions"][0]
    assert hot["rh"] > at[0]["deliquescence_rh"] and hot["solid_state"] is False
    cold = at[1]["hydrate_transitions"][0]
    assert cold["rh"] < at[1]["deliquescence_rh"] and cold["solid_state"] is True


def test_demo_runs_outside_a_checkout(tmp_path, monkeypatch):
    # Issue: `wetcycle demo` worked only at the top of a checkout.  The package ships the scenario
    # (identical to runs/demo.toml); outside a checkout the result goes to ./wetcycle-demo/.
    from pathlib import Path
    from wetcycle.config import load_scenario
    root = Path(__file__).resolve().parents[1]
    monkeypatch.chdir(tmp_path)
    path, output = cli._demo_path()
    assert path.read_text() == (root / "runs" / "demo.toml").read_text()
    assert output == tmp_path / "wetcycle-demo" / "demo.nc"
    assert load_scenario(path).name == "demo"
    monkeypatch.chdir(root)
    assert cli._demo_path() == (root / "runs" / "demo.toml", None)
