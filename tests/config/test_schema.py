"""The JSON Schemas shipped for editors are current, and the example files satisfy them
(checked with the general-purpose jsonschema validator, Draft 2020-12)."""

from __future__ import annotations

import json
from pathlib import Path

import jsonschema
import pytest
import yaml

from harness.config.schema import schema
from harness.runner.sim_station import sim_station_text

ROOT = Path(__file__).resolve().parents[2]
SCHEMA_DIR = ROOT / "sequences" / "schema"


@pytest.mark.parametrize("which", ["sequence", "station", "record"])
def test_shipped_schema_is_current(which: str) -> None:
    shipped = json.loads((SCHEMA_DIR / f"{which}.schema.json").read_text())
    assert shipped == schema(which), f"regenerate: harness schema {which} > sequences/schema/{which}.schema.json"


@pytest.mark.parametrize("path", sorted((ROOT / "sequences").glob("*.yaml")), ids=lambda p: p.name)
def test_example_sequences_satisfy_the_schema(path: Path) -> None:
    jsonschema.Draft202012Validator(schema("sequence")).validate(yaml.safe_load(path.read_text()))


@pytest.mark.parametrize("path", sorted((ROOT / "sequences" / "records").glob("*.yaml")), ids=lambda p: p.name)
def test_example_records_satisfy_the_schema(path: Path) -> None:
    jsonschema.Draft202012Validator(schema("record")).validate(yaml.safe_load(path.read_text()))


def test_station_satisfies_the_schema() -> None:
    jsonschema.Draft202012Validator(schema("station")).validate(yaml.safe_load(sim_station_text()))


def test_schema_rejects_an_unknown_step_kind() -> None:
    doc = yaml.safe_load((ROOT / "sequences" / "routine_single_phase.yaml").read_text())
    doc["steps"].append({"kind": "teleport"})
    with pytest.raises(jsonschema.ValidationError):
        jsonschema.Draft202012Validator(schema("sequence")).validate(doc)
