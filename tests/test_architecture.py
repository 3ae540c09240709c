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
        # commands that write a document of their own: the command line, the protocol document
        if path.name not in ("cli.py", "protocol.py") and "report" in _imports(path):
            wrong.append(f"{path.relative_to(PACKAGE)} imports the report")
    assert wrong == []


TOY_MODULE = '''
"""A toy characteristic (test only): the residual SD of the calibration against a maximum."""
from validator.criteria import Criterion, at_most
from validator.engine import Assessment, Characteristic

MAXIMUM = 1e9       # common practice, no published source: a limit any calibration meets


def assess(ctx):
    sd = ctx.calibration.fit.residual_sd
    return Assessment(sd, (Criterion("toy-residual-sd", f"residual SD at most {MAXIMUM:g}", sd, MAXIMUM,
                                     at_most(sd, MAXIMUM)),))


ENTRY = Characteristic("toy", assess)
'''


def test_a_toy_characteristic_flows_through_the_registry(make_study, outside, tmp_path, monkeypatch):
    """A characteristic in a module of its own, added by one registry line (the tuple patched
    here), reaches the engine's context, results.json and the dossier without editing any file."""
    import json
    import sys

    from bs4 import BeautifulSoup

    import validator.engine as engine
    from validator.cli import main

    folder = tmp_path / "toy_pkg"
    folder.mkdir()
    (folder / "toy_characteristic.py").write_text(TOY_MODULE, encoding="utf-8")
    monkeypatch.syspath_prepend(str(folder))
    import toy_characteristic

    monkeypatch.setattr(engine, "REGISTRY", engine.REGISTRY + (toy_characteristic.ENTRY,))
    study = make_study()
    out = outside / "out"
    assert main(["run", str(study), "--out", str(out), "--format", "json,html"]) == 0
    results = json.loads((out / "results.json").read_text(encoding="utf-8"))
    toy = [c for c in results["analytes"][0]["criteria"] if c["id"] == "toy-residual-sd"]
    assert len(toy) == 1 and toy[0]["pass"] is True and toy[0]["limit"] == toy_characteristic.MAXIMUM
    assert toy[0]["value"] == results["analytes"][0]["calibration"]["residual_sd"]     # the context's value
    text = BeautifulSoup((out / "dossier.html").read_text(encoding="utf-8"), "html.parser").get_text(" ")
    assert "residual SD at most 1e+09" in text
    sys.modules.pop("toy_characteristic", None)


def test_the_registry_is_an_ordered_tuple_and_each_step_reads_only_what_came_before():
    from validator.engine import REGISTRY, AnalyteContext

    names = [c.name for c in REGISTRY]
    assert isinstance(REGISTRY, tuple) and len(set(names)) == len(names)
    fields = [f.name for f in dataclasses.fields(AnalyteContext)]
    assert all(n in fields for n in names)
    # the working range and the LOQ verification use recovery and precision; re-validation uses all
    assert names.index("working_range") > max(names.index("recovery"), names.index("precision"))
    assert names.index("loq_check") > names.index("detection")
    assert names[-1] == "revalidation"
