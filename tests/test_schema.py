"""The published JSON Schema of the plan: valid itself, and every plan output validates."""

from __future__ import annotations

import json

import jsonschema
import pytest

from strobeplan.schema import plan_schema
from tests.conftest import EXAMPLES, example, run_cli


@pytest.fixture(scope="module")
def validator():
    schema = json.loads(run_cli("schema").stdout)
    # Oracle: the jsonschema package's own meta-schema check (JSON Schema 2020-12).
    jsonschema.Draft202012Validator.check_schema(schema)
    return jsonschema.Draft202012Validator(schema)


@pytest.mark.parametrize("name", EXAMPLES)
def test_examples_validate(validator, name):
    data = json.loads(run_cli("check", example(name), "--json").stdout)
    validator.validate(data)


def test_divider_json_validates(validator):
    r = run_cli("divider", "--from", "lvcmos33", "--to", "lvcmos18", "--json")
    validator.validate(json.loads(r.stdout))


def test_schema_rejects_drift(validator):
    data = json.loads(run_cli("check", example("levitator-40k"), "--json").stdout)
    data["timing"]["an_undocumented_key_s"] = 1.0
    with pytest.raises(jsonschema.ValidationError):
        validator.validate(data)
    data = json.loads(run_cli("check", example("levitator-40k"), "--json").stdout)
    data["verdict"] = "maybe"
    with pytest.raises(jsonschema.ValidationError):
        validator.validate(data)


def test_every_section_is_in_the_schema():
    from strobeplan.plan import SECTION_ORDER

    props = plan_schema()["properties"]
    assert set(SECTION_ORDER) <= set(props)
