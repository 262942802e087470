"""`wetcycle brine freeze|evaporate`: sequence table, dataset and figure; one-line errors, exit 2.

The mineral checks are the published behaviour the command reports, not model numbers (those are
checked in test_brines_paths.py): a sulfate-rich chloride brine freezes out mirabilite first, as
seawater does (Nelson & Thompson 1954, recalled; Marion et al. 1999), and, its Ca spent on
gypsum, follows the SO4-rich, Ca-poor branch of the chemical divides (Hardie & Eugster 1970);
evaporated at 25 °C it ends with halite (McCaffrey et al. 1987, recalled).  The one-line-error
and exit-2 checks are the project's own CLI rules; charge neutrality of an ionic composition is
common practice.
"""

import shutil
from pathlib import Path

import pytest
import xarray as xr

from wetcycle.cli import main

EXAMPLES = Path(__file__).resolve().parents[1] / "examples" / "brines"


def test_freeze_prints_sequence_and_writes_files(tmp_path, capsys):
    src = tmp_path / "pond.toml"
    shutil.copy(EXAMPLES / "pond.toml", src)
    assert main(["brine", "freeze", str(src)]) == 0
    out = capsys.readouterr().out
    assert "Mineral sequence" in out and "mirabilite" in out and "SO4-rich, Ca-poor" in out
    assert "design decision 9" in out                      # stops at the first binary limit by default
    ds = xr.open_dataset(tmp_path / "pond_freeze.nc")
    assert "solid_moles" in ds and ds.attrs["path"] == "freezing"
    ds.close()
    assert (tmp_path / "pond_freeze.png").stat().st_size > 10_000


def test_evaporate_with_options(tmp_path, capsys):
    src = tmp_path / "pond.toml"
    shutil.copy(EXAMPLES / "pond.toml", src)
    out_nc = tmp_path / "e.nc"
    assert main(["brine", "evaporate", str(src), "-o", str(out_nc), "--figure", str(tmp_path / "e.svg"),
                 "--exclude", "anhydrite"]) == 0
    out = capsys.readouterr().out
    assert "halite" in out and "anhydrite" not in out.split("Mineral sequence")[1].split("dry at")[0]
    assert out_nc.exists() and (tmp_path / "e.svg").exists()


@pytest.mark.parametrize("text,needle", [
    ('[composition]\nNa = 1.0\nCl = 0.9\n', "charge imbalance"),
    ('[composition]\nNa = 1.0\nCl = 1.0\n[freeze]\nstep = 1\n', "freeze.step: unknown key"),
    ('[composition]\nNa = 1.0\nXx = 1.0\n', "ion 'Xx' is not known"),
    ('name = "x"\n', "composition: missing"),
    ('[composition\n', "not valid TOML"),
])
def test_bad_files_one_line_exit_2_nothing_written(tmp_path, capsys, text, needle):
    src = tmp_path / "bad.toml"
    src.write_text(text)
    assert main(["brine", "freeze", str(src)]) == 2
    err = capsys.readouterr().err
    assert needle in err and err.count("\n") == 1
    assert not list(tmp_path.glob("bad_freeze*"))


def test_evaporate_needs_a_temperature(tmp_path, capsys):
    src = tmp_path / "c.toml"
    src.write_text('[composition]\nNa = 1.0\nCl = 1.0\n')
    assert main(["brine", "evaporate", str(src)]) == 2
    assert "evaporate.temperature_K" in capsys.readouterr().err
    assert main(["brine", "evaporate", str(src), "--temperature", "298.15"]) == 0


def test_missing_file_and_bad_figure_suffix(tmp_path, capsys):
    assert main(["brine", "freeze", str(tmp_path / "none.toml")]) == 2
    assert "does not exist" in capsys.readouterr().err
    src = tmp_path / "c.toml"
    src.write_text('[composition]\nNa = 1.0\nCl = 1.0\n')
    assert main(["brine", "freeze", str(src), "--figure", str(tmp_path / "f.gif")]) == 2
    assert "allowed: .png" in capsys.readouterr().err
