"""Write the results.json schema definitions of the sector characteristics (issue #15).

The result dataclasses of each sector characteristic's registry entry (``SECTOR`` below) declare
their results.json form (field metadata read by ``validator.results.Serialiser``); this script
turns them into ``$defs`` entries named ``sector_<dataclass in snake case>`` and one property per
characteristic in the analyte object of ``validator/schema/results.schema.json``, replacing what
an earlier run wrote. The drift test (tests/test_results_schema_drift.py) checks the outcome.

    PYTHONPATH=. python tools/sector_schema.py
"""

from __future__ import annotations

import dataclasses
import json
import re
import types
import typing
from pathlib import Path

from validator.characteristics import (carry_over, dilution_integrity, limit_of_blank, matrix_effect,
                                       method_detection_limit, reanalysis, selectivity, stability)

SECTOR = tuple(p.ENTRY for p in (limit_of_blank, method_detection_limit, matrix_effect, carry_over, selectivity,
                                 stability, dilution_integrity, reanalysis))

SCHEMA = Path(__file__).resolve().parents[1] / "validator" / "schema" / "results.schema.json"


def _snake(name: str) -> str:
    return re.sub(r"(?<!^)(?=[A-Z])", "_", name).lower()


def _parts(tp):
    """(the type without None, whether None is allowed)."""
    args = typing.get_args(tp)
    if typing.get_origin(tp) in (typing.Union, types.UnionType) and type(None) in args:
        rest = [a for a in args if a is not type(None)]
        return (rest[0] if len(rest) == 1 else typing.Union[tuple(rest)]), True
    return tp, False


def _schema(tp, defs: dict):
    inner, nullable = _parts(tp)
    if dataclasses.is_dataclass(inner):
        _define(inner, defs)
        ref = {"$ref": f"#/$defs/sector_{_snake(inner.__name__)}"}
        return {"oneOf": [{"type": "null"}, ref]} if nullable else ref
    if inner is float:
        return {"$ref": "#/$defs/num"}
    if typing.get_origin(inner) is tuple:
        out = {"type": "array", "items": _schema(typing.get_args(inner)[0], defs)}
        return {"oneOf": [{"type": "null"}, out]} if nullable else out
    name = {int: "integer", str: "string", bool: "boolean"}[inner]
    return {"type": [name, "null"]} if nullable else {"type": name}


def _define(cls, defs: dict) -> None:
    key = f"sector_{_snake(cls.__name__)}"
    if key in defs:
        return
    defs[key] = None                     # reserved against recursion
    hints = typing.get_type_hints(cls)
    props, required = {}, []
    for f in dataclasses.fields(cls):
        name = f.metadata.get("json", f.name)
        if name is None:
            continue
        if "interval" in f.metadata:
            props[name] = ({"oneOf": [{"type": "null"}, {"$ref": "#/$defs/ci"}]} if f.metadata["interval"] == "null"
                           else {"$ref": "#/$defs/ci"})
            props[f"{name}_level"] = {"$ref": "#/$defs/level"}
            required += [name, f"{name}_level"]
            continue
        if f.metadata.get("as_float"):
            props[name] = {"$ref": "#/$defs/num"}
        else:
            props[name] = _schema(hints[f.name], defs)
        if not (f.metadata.get("omit_none") or "when" in f.metadata):
            required.append(name)
    defs[key] = {"type": "object", "required": required, "properties": props, "additionalProperties": False}


def _text(defs: dict, indent: str) -> str:
    lines = []
    for key, value in defs.items():
        body = [f'{indent}  "type": "object",', f'{indent}  "required": {json.dumps(value["required"])},',
                f'{indent}  "properties": {{']
        body += [f'{indent}    {json.dumps(k)}: {json.dumps(v)},' for k, v in value["properties"].items()]
        body[-1] = body[-1].rstrip(",")
        body += [f"{indent}  }},", f'{indent}  "additionalProperties": false']
        lines.append(f'{indent}"{key}": {{\n' + "\n".join(body) + f"\n{indent}}}")
    return ",\n".join(lines)


def main() -> None:
    defs: dict = {}
    for entry in SECTOR:
        for tp in entry.result_types:
            _define(tp, defs)
    text = SCHEMA.read_text(encoding="utf-8")
    # drop what an earlier run wrote
    text = re.sub(r',\n    "sector_[a-z_]+": \{\n.*?\n    \}(?=,\n    "sector_|\n  \},\n  "properties")', "", text,
                  flags=re.S)
    text = re.sub(r'\n {10}"(%s)": \{"oneOf": \[\{"type": "null"\}, \{"\$ref": "#/\$defs/sector_[a-z_]+"\}\]\},'
                  % "|".join(e.name for e in SECTOR), "", text)
    end_of_defs = text.index('\n  },\n  "properties": {')
    text = text[:end_of_defs] + ",\n" + _text(defs, "    ") + text[end_of_defs:]
    anchor = '\n          "diagnostics": {"type": "array", "items": {"type": "string"}},'
    assert text.count(anchor) == 1
    props = "".join(f'\n          "{e.name}": {{"oneOf": [{{"type": "null"}}, {{"$ref": "#/$defs/sector_'
                    f'{_snake(e.result_types[0].__name__)}"}}]}},' for e in SECTOR)
    text = text.replace(anchor, props + anchor)
    json.loads(text)
    SCHEMA.write_text(text, encoding="utf-8")


if __name__ == "__main__":
    main()
