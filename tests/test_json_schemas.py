"""Every JSON document phasewise writes carries schema_version and matches its JSON Schema in
docs/schemas/ (JSON Schema draft 2020-12; the jsonschema package when installed, else a small checker)."""

from __future__ import annotations

import json

import pytest

from planner.outputs.layout import SCHEMA_VERSION
from tests.clirun import run_cli
from tests.conftest import DEMO_DIR, ROOT
from tests.jsonschema_lite import Checker

SCHEMAS = ROOT / "docs" / "schemas"
TARGET = DEMO_DIR / "c2034-b3-quillfeather.toml"
KAROO = DEMO_DIR / "sites" / "karoo-ridge.toml"


def problems(doc: dict, schema_name: str) -> list[str]:
    """Everything wrong with ``doc`` against docs/schemas/``schema_name``."""
    try:
        import jsonschema
        from referencing import Registry, Resource
    except ImportError:
        checker = Checker(SCHEMAS)
        return checker.errors(doc, checker.load(schema_name), schema_name)
    resources = [
        (p.name, Resource.from_contents(json.loads(p.read_text()))) for p in sorted(SCHEMAS.glob("*.schema.json"))
    ]
    registry = Registry().with_resources(
        resources + [(r.contents["$id"], r) for _, r in resources]  # by file name and by $id
    )
    schema = json.loads((SCHEMAS / schema_name).read_text())
    jsonschema.Draft202012Validator.check_schema(schema)
    validator = jsonschema.Draft202012Validator(schema, registry=registry)
    return [f"{'.'.join(map(str, e.absolute_path))}: {e.message}" for e in validator.iter_errors(doc)]


@pytest.mark.parametrize(
    ("name", "schema"), [("plan.json", "plan.schema.json"), ("diagnostics.json", "diagnostics.schema.json")]
)
def test_plan_folder_documents_match_their_schemas(demo_folder, name, schema):
    doc = json.loads((demo_folder / name).read_text())
    assert doc["schema_version"] == SCHEMA_VERSION
    assert problems(doc, schema) == []


def test_command_documents_match_their_schemas(tmp_path, capsys):
    ephem = run_cli(
        capsys,
        "ephem",
        "--target",
        TARGET,
        "--site",
        KAROO,
        "--start",
        "2034-03-19T20:00",
        "--stop",
        "2034-03-19T22:00",
        "--format",
        "json",
    )
    assert problems(json.loads(ephem.stdout), "ephem.schema.json") == []
    windows = run_cli(
        capsys,
        "windows",
        "--target",
        TARGET,
        "--site",
        KAROO,
        "--start",
        "2034-03-17",
        "--nights",
        "2",
        "--format",
        "json",
    )
    assert problems(json.loads(windows.stdout), "windows.schema.json") == []
    log = tmp_path / "log.csv"
    log.write_text(
        "time_utc,site\n" + "".join(f"2034-03-{16 + i // 3}T{2 + 3 * (i % 3):02d}:00:00Z,A\n" for i in range(12))
    )
    check = run_cli(
        capsys, "check", log, "--trials", "4", "--min-period", "3h", "--max-period", "12h", "--format", "json"
    )
    assert problems(json.loads(check.stdout), "check.schema.json") == []


def test_the_schemas_catch_a_wrong_document(demo_folder):
    doc = json.loads((demo_folder / "plan.json").read_text())
    doc["schema_version"] = SCHEMA_VERSION + 1
    del doc["sites"][0]["timezone"]
    doc["blocks"][0]["start_utc"] = "yesterday"
    found = " | ".join(problems(doc, "plan.schema.json"))
    assert "schema_version" in found and "timezone" in found and "yesterday" in found
    checker = Checker(SCHEMAS)  # the small checker too, whichever validator ran above
    assert len(checker.errors(doc, checker.load("plan.schema.json"), "plan.schema.json")) == 3
