"""README and CI agree (common practice: the documented commands are the tested ones)."""

import re

import pytest
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]


def _quick_start_commands():
    text = (ROOT / "README.md").read_text(encoding="utf-8")
    section = re.split(r"^## ", text, flags=re.M)
    qs = next(s for s in section if s.lower().startswith("quick start"))
    return re.findall(r"```bash\n(.+?)\n```", qs, flags=re.S)


def test_quick_start_has_exactly_two_commands():
    cmds = _quick_start_commands()
    assert len(cmds) == 2
    assert all("\n" not in c for c in cmds)


def test_ci_runs_the_readme_commands_verbatim():
    ci = (ROOT / ".ci" / "run").read_text(encoding="utf-8")
    for cmd in _quick_start_commands():
        assert cmd in ci, f"README command not in .ci/run: {cmd}"


def test_readme_states_the_cautions():
    text = (ROOT / "README.md").read_text(encoding="utf-8").lower()
    assert "not evidence" in text and "planetary-protection" in text


def test_developer_guide_lists_every_scenario_field():
    # The guide's field table is generated from the schema; it must be current (documentation
    # that drifts from the code is a defect; common practice: generated reference sections).
    from wetcycle.config import SCHEMA, schema_markdown
    text = (ROOT / "DEVELOPERS.md").read_text()
    block = text.split("<!-- fields:begin -->\n")[1].split("<!-- fields:end -->")[0]
    assert block == schema_markdown(), "run: python scripts/field_reference.py"
    assert sum(len(v) for v in SCHEMA.values()) == block.count("\n") - 2


def test_json_schema_accepts_the_examples_and_refuses_what_wetcycle_refuses(capsys):
    # jsonschema (the reference validator of JSON Schema draft 2020-12) checks the example
    # scenarios against the schema that `wetcycle schema` prints.
    import json
    import tomllib

    jsonschema = pytest.importorskip("jsonschema")
    from wetcycle import cli
    assert cli.main(["schema"]) == 0
    schema = json.loads(capsys.readouterr().out)
    jsonschema.Draft202012Validator.check_schema(schema)
    for path in sorted((ROOT / "runs").glob("*.toml")):
        jsonschema.validate(tomllib.loads(path.read_text()), schema)
    doc = tomllib.loads((ROOT / "runs" / "demo.toml").read_text())
    for table, key, bad in (("clock", "steps_per_sol", 2), ("forcing", "kind", "crystal_ball"),
                            ("phase", "colour", "red")):
        broken = json.loads(json.dumps(doc))
        broken[table][key] = bad
        with pytest.raises(jsonschema.ValidationError):
            jsonschema.validate(broken, schema)


def test_license_file_matches_the_metadata():
    # The package metadata declares BSD-3-Clause; the file must exist and say so (SPDX: BSD-3-Clause).
    import tomllib
    meta = tomllib.loads((ROOT / "pyproject.toml").read_text())["project"]
    assert meta["license"]["text"] == "BSD-3-Clause"
    text = (ROOT / "LICENSE").read_text()
    assert text.startswith("BSD 3-Clause License") and "Neither the name of the copyright holder" in text


def test_dependency_lower_bounds_are_consistent():
    # NumPy 2.0 support arrived in numba 0.60 (numba release notes, from memory): a bound that
    # allows numpy 2 must not allow an older numba.
    import tomllib
    deps = tomllib.loads((ROOT / "pyproject.toml").read_text())["project"]["dependencies"]
    bound = {d.split(">=")[0].split("[")[0].strip().lower(): d.split(">=")[1].split(",")[0].split()[0]
             for d in deps if ">=" in d}
    assert bound["numpy"].startswith("2")
    assert tuple(int(x) for x in bound["numba"].split(".")[:2]) >= (0, 60)
