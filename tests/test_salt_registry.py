"""Salt-system registry and data files: names, sources, fit reproduction.

Every data file must name the source of each parameter and data table and flag
values recalled rather than read ("from memory") or fitted by the project;
every table used by a fit must be reproduced by the stored coefficients within
its stated uncertainty (common practice for a least-squares fit: the residual
rms of a table should not exceed about twice the stated sigma).
"""

import tomllib

import numpy as np
import pytest

from wetcycle import salts
from wetcycle.errors import UnknownNameError, ValidityError
from wetcycle.salts import datafile, fit

FILES = sorted(salts.DATA_DIR.glob("*.toml"))


def test_at_least_ten_systems():
    # Issue 2, "Done when": at least ten systems.
    assert len(salts.names()) >= 10


def test_names_match_case_insensitively():
    assert salts.load("nacl") is salts.load("NaCl")
    assert salts.load("MG(CLO4)2").name == "Mg(ClO4)2"


def test_unknown_name_lists_known_names():
    with pytest.raises(UnknownNameError) as exc:
        salts.load("NaBr9")
    assert "NaCl" in str(exc.value) and "'NaBr9'" in str(exc.value)


@pytest.mark.parametrize("path", FILES, ids=[f.stem for f in FILES])
def test_every_parameter_and_table_names_a_source(path):
    doc = tomllib.loads(path.read_text(encoding="utf-8"))
    pz = doc["pitzer"]
    for name in ("beta0", "beta1", "cphi"):
        assert pz[name].get("source"), f"{path.name}: pitzer.{name} has no source"
        assert pz[name].get("flag") in datafile.FLAGS, f"{path.name}: pitzer.{name} flag"
    for s in doc["solid"]:
        assert s.get("source"), f"{path.name}: solid {s['name']} has no source"
    for t in doc.get("data", []):
        assert t.get("source") and t.get("flag") in datafile.FLAGS
    meta = doc.get("metastability", {})
    for key in ("efflorescence_rh", "supercooling_limit"):
        if key in meta:
            src = key.split("_")[0] + "_source"
            assert meta.get(src), f"{path.name}: metastability.{key} has no {src}"


@pytest.mark.parametrize("path", FILES, ids=[f.stem for f in FILES])
def test_fitted_section_is_current_and_reproduces_fitted_tables(path):
    info = datafile.read(path)
    if not info["fitted"]:
        pytest.skip(f"{path.name} has no fitted section")
    sysobj = salts.from_file(path)
    coef = sysobj.coef
    lnk = np.array([s.lnk_coef for s in sysobj.solids])
    report = fit.residual_report(info, coef, lnk)
    stored = {r["table"]: r for r in info["fitted"].get("residual", [])}
    for r in report:
        s = stored[r["table"]]
        # The stored residuals were computed by this code from these coefficients.
        if np.isfinite(r["rms"]):
            assert r["rms"] == pytest.approx(s["rms"], rel=1e-6, abs=1e-12), f"{path.name} table {r['table']}"
        if r["use"] == "fit":
            assert r["n_missing"] == 0, f"{path.name} table {r['table']}: model has no value at some points"
            # rms of residual/sigma, so tables mixing units (eutectic K and relative) are judged fairly
            assert r["rms_sigma"] <= 2.0, (
                f"{path.name} table {r['table']} ({r['kind']}): rms {r['rms_sigma']:.3g} sigma > 2")
            assert r["rms_sigma"] == pytest.approx(s["rms_sigma"], rel=1e-6, abs=1e-12)


def test_validity_is_enforced():
    s = salts.load("NaCl")
    with pytest.raises(ValidityError, match="temperature"):
        s.deliquescence_rh(s.T_min - 5.0)
    with pytest.raises(ValidityError, match="molality"):
        s.water_activity(s.m_ext + 1.0, 280.0)
    with pytest.raises(ValidityError, match="molality"):
        s.osmotic_coefficient(s.m_max + 1.0, 280.0)  # Pitzer quantities stop at m_max
