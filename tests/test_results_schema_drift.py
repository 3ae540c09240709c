"""results.json, its JSON Schema and docs/results.md cannot drift apart.

Checked both ways: every field the serialiser (validator/results.py) writes is a property in
the schema and is named in docs/results.md; every schema property is written by some code
path of the serialiser; every object of the schema is closed (``additionalProperties``), so
the schema validation that the tests run on every results.json they write refuses an
undeclared field. The interval levels are checked on the demo outputs.
"""

import ast
import json
import re
from pathlib import Path

import jsonschema
import pytest

from validator.registry import REGISTRY
from validator.results import SERIALISED, json_fields, load_schema

REPO = Path(__file__).resolve().parents[1]
SERIALISER = REPO / "validator" / "results.py"
# other functions whose dictionaries results.py writes as they are: (file, function)
WRITERS = [(REPO / "validator" / "signing.py", "operator_and_host"), (REPO / "validator" / "protocol.py", "protocol_entry")]
DOCS = (REPO / "docs" / "results.md").read_text(encoding="utf-8")
# maps keyed by data, not by field name: library names, coefficient names
DATA_KEYED = {"libraries", "coefficients"}
DATA_KEYED_WRITERS = {"library_versions"}


def _schema_objects(node, path="#"):
    """(path, properties, additionalProperties) of every object node in the schema."""
    if isinstance(node, dict):
        if "properties" in node:
            yield path, node["properties"], node.get("additionalProperties", True)
        for key, value in node.items():
            yield from _schema_objects(value, f"{path}/{key}")
    elif isinstance(node, list):
        for i, value in enumerate(node):
            yield from _schema_objects(value, f"{path}/{i}")


def schema_properties() -> set:
    names = set()
    for path, props, _ in _schema_objects(load_schema()):
        if path.rsplit("/", 1)[-1] not in DATA_KEYED:
            names.update(props)
    return names


def written_keys() -> set:
    """Every field name the serialiser writes: keys of its dict literals, the interval
    fields ``name``/``name_level`` written by ``_interval("name", ...)``, and the fields of
    the result dataclasses written by its ``Serialiser`` (``results.SERIALISED``)."""
    tree = ast.parse(SERIALISER.read_text(encoding="utf-8"))
    keys = set()
    nodes = [n for top in tree.body if getattr(top, "name", "") not in DATA_KEYED_WRITERS for n in ast.walk(top)]
    for node in nodes:
        if isinstance(node, ast.Dict):
            keys.update(k.value for k in node.keys if isinstance(k, ast.Constant) and isinstance(k.value, str))
        if (isinstance(node, ast.Call) and getattr(node.func, "id", "") == "_interval"
                and isinstance(node.args[0], ast.Constant)):
            keys.update({node.args[0].value, f"{node.args[0].value}_level"})
        if (isinstance(node, ast.Subscript) and isinstance(node.ctx, ast.Store)
                and isinstance(node.slice, ast.Constant) and isinstance(node.slice.value, str)):
            keys.add(node.slice.value)
    for section, result_types in SERIALISED.items():      # each section is written under its own name
        keys.add(section)
        keys.update(json_fields(*result_types))
    keys.update(e.written_at.rsplit(".", 1)[-1] for e in REGISTRY if e.result_types)   # e.g. loq_verification
    keys.update(SERIALISED)         # the section names the Serialiser writes under (sector ones by name)
    for path, name in WRITERS:
        tree = ast.parse(path.read_text(encoding="utf-8"))
        function = next(n for n in tree.body if getattr(n, "name", "") == name)
        keys.update(k.value for n in ast.walk(function) if isinstance(n, ast.Dict)
                    for k in n.keys if isinstance(k, ast.Constant) and isinstance(k.value, str))
    return {k for k in keys if "." not in k}        # dotted keys are not_applicable paths, not fields


def test_every_schema_object_is_closed():
    loose = [path for path, _, extra in _schema_objects(load_schema())
             if extra is not False and path.rsplit("/", 1)[-1] not in DATA_KEYED
             and not path.endswith(("/if", "/then"))]
    assert loose == []


def test_every_written_field_is_in_the_schema():
    missing = sorted(written_keys() - schema_properties())
    assert missing == []


def test_every_schema_property_is_written():
    never = sorted(schema_properties() - written_keys())
    assert never == []


def test_every_field_is_documented():
    documented = set(re.findall(r"[A-Za-z_][A-Za-z0-9_]*", DOCS))
    undocumented = sorted((written_keys() | schema_properties()) - documented)
    assert undocumented == []


def _intervals(value, path=""):
    """(path, interval, level) for every ``x``/``x_level`` pair in a results.json."""
    if isinstance(value, dict):
        for key, item in value.items():
            if f"{key}_level" in value:
                yield f"{path}.{key}", item, value[f"{key}_level"]
            yield from _intervals(item, f"{path}.{key}")
    elif isinstance(value, list):
        for i, item in enumerate(value):
            yield from _intervals(item, f"{path}.{i}")


@pytest.mark.parametrize("name", ["anions-drinking-water", "anions-after-maintenance"])
def test_every_interval_carries_its_level(name, tmp_path, outside):
    from validator.cli import main

    study = REPO / "example_studies" / name / "study.toml"
    out = outside / "out"
    assert main(["run", str(study), "--out", str(out), "--format", "json"]) in (0, 1)
    results = json.loads((out / "results.json").read_text(encoding="utf-8"))
    jsonschema.validate(results, load_schema(), cls=jsonschema.Draft202012Validator)
    found = list(_intervals(results))
    assert len(found) > 10
    for path, interval, level in found:
        if interval is None or interval == [None, None]:
            assert level is None, path
        elif path.endswith("change_ci_pct"):
            assert level == pytest.approx(0.90), path        # two one-sided tests at alpha = 0.05
        else:
            assert level == pytest.approx(0.95), path        # the study's alpha = 0.05


def test_weighting_enums_are_the_regression_weightings():
    from validator.maths.regression import WEIGHTINGS

    def enums(node):
        if isinstance(node, dict):
            for key, value in node.items():
                if key in ("weighting", "refit_weighting") and "enum" in value:
                    yield value["enum"]
                yield from enums(value)
        elif isinstance(node, list):
            for value in node:
                yield from enums(value)

    found = list(enums(load_schema()))
    assert len(found) >= 4
    assert all(tuple(e) == WEIGHTINGS for e in found)
