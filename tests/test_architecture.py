"""The architecture's promises, checked: typed result types, layers that point one way."""

import ast
import dataclasses
import importlib
import pkgutil
import re
from pathlib import Path

import validator

PACKAGE = Path(validator.__file__).resolve().parent
RESULT_PACKAGES = ("validator.maths", "validator.characteristics")
RESULT_MODULES = ("validator._common", "validator.engine", "validator.criteria", "validator.inputs.loading")
BARE = re.compile(r"^(tuple|dict|list|object|Any)( \| None)?$")


def _modules():
    names = list(RESULT_MODULES)
    for package in RESULT_PACKAGES:
        path = PACKAGE / package.split(".", 1)[1]
        names += [f"{package}.{m.name}" for m in pkgutil.iter_modules([str(path)])]
    return [importlib.import_module(n) for n in names]


def test_result_types_have_no_bare_containers():
    """No field typed plain tuple/dict/list/object: a reader must know what is inside."""
    bare = []
    for module in _modules():
        for obj in vars(module).values():
            if dataclasses.is_dataclass(obj) and obj.__module__ == module.__name__:
                for f in dataclasses.fields(obj):
                    if BARE.match(str(f.type)):
                        bare.append(f"{obj.__module__}.{obj.__name__}.{f.name}: {f.type}")
    assert bare == []


def _imports(path: Path) -> set:
    """validator sub-packages a module imports (relative imports resolved)."""
    rel = path.relative_to(PACKAGE).with_suffix("")
    parts = list(rel.parts)
    out = set()
    for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
        if isinstance(node, ast.ImportFrom) and node.level:
            base = parts[:len(parts) - node.level]
            target = base + (node.module.split(".") if node.module else [])
            out.add(target[0] if target else "")
        elif isinstance(node, ast.ImportFrom) and (node.module or "").startswith("validator."):
            out.add(node.module.split(".")[1])
    return out


def test_layers_point_one_way():
    """maths imports nothing of validator but _common; characteristics never import inputs,
    results, report or the command line; nothing below the report imports it."""
    allowed = {"maths": {"_common", "maths"},
               "characteristics": {"_common", "maths", "characteristics", "criteria"}}
    wrong = []
    for layer, ok in allowed.items():
        for path in (PACKAGE / layer).glob("*.py"):
            bad = _imports(path) - ok
            if bad:
                wrong.append(f"{path.relative_to(PACKAGE)} imports {sorted(bad)}")
    for path in list(PACKAGE.glob("*.py")) + list((PACKAGE / "inputs").glob("*.py")):
        if path.name not in ("cli.py",) and "report" in _imports(path):
            wrong.append(f"{path.relative_to(PACKAGE)} imports the report")
    assert wrong == []
