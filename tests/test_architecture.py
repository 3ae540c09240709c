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
        names += [m.name for m in pkgutil.walk_packages([str(path)], prefix=f"{package}.")]
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


CHARACTERISTICS = PACKAGE / "characteristics"
# what each kind of file of a characteristic's package may import (validator sub-packages/modules)
PACKAGE_FILES = {
    "analysis.py": {"_common", "maths", "sector", "criteria", "characteristics"},   # sector: pure statistics too
    "settings.py": {"_common", "inputs", "errors", "maths", "characteristics"},
    "presentation.py": {"report"},
    "__init__.py": {"characteristics"},
}


def _module_imports(path: Path) -> set:
    """Modules of validator a module imports, as dotted paths below validator (relative imports resolved)."""
    rel = path.relative_to(PACKAGE).with_suffix("")
    parts = list(rel.parts)
    out = set()
    for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
        if isinstance(node, ast.ImportFrom) and node.level:
            base = parts[:len(parts) - node.level]
            target = base + (node.module.split(".") if node.module else [])
            names = [target + [a.name] for a in node.names] if not node.module else [target]
            out.update(".".join(t) for t in names)
        elif isinstance(node, ast.ImportFrom) and (node.module or "").startswith("validator."):
            out.add(node.module.split(".", 1)[1])
        elif isinstance(node, ast.Import):
            out.update(a.name.split(".", 1)[1] for a in node.names if a.name.startswith("validator."))
    return out


def _imports(path: Path) -> set:
    """validator sub-packages (or top-level modules) a module imports."""
    return {module.split(".")[0] for module in _module_imports(path)}


def test_layers_point_one_way():
    """maths imports nothing of validator but _common; characteristics never import inputs,
    results or the report (but for their settings and presentation files); nothing below the
    report imports it; nothing but the pipeline imports the engine or the registry."""
    # sector may use maths (the distribution functions): both are pure statistics, and maths imports nothing above
    allowed = {"maths": {"_common", "maths"}, "sector": {"_common", "sector", "maths"},
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
    # the pipeline loops over the registry; everything below it (maths, criteria, the characteristics,
    # the report's helpers) never imports the engine or the registry
    pipeline = {"engine.py", "registry.py", "results.py", "cli.py", "report/__init__.py", "inputs/loading.py",
                "inputs/study.py", "qualification/__init__.py",
                "protocol.py"}          # which keys of the characteristics' tables count as design or criteria
    for path in PACKAGE.rglob("*.py"):
        rel = path.relative_to(PACKAGE).as_posix()
        if rel not in pipeline and {"engine", "registry"} & _imports(path):
            wrong.append(f"{rel} imports the engine or the registry")
    assert wrong == []


def test_each_file_of_a_characteristic_package_stays_in_its_layer():
    """analysis.py is pure (maths, criteria, _common, other characteristics' analysis); settings.py reads
    inputs (inputs, errors, _common); presentation.py formats (the report's text and plot helpers only)."""
    packages = [p for p in CHARACTERISTICS.iterdir() if (p / "__init__.py").is_file()]
    assert {"recovery", "reference_material"} <= {p.name for p in packages}
    wrong = []
    for package in packages:
        for path in package.glob("*.py"):
            imports = _module_imports(path)
            ok = PACKAGE_FILES.get(path.name)
            if ok is None:
                wrong.append(f"{path.relative_to(PACKAGE)}: not one of {sorted(PACKAGE_FILES)}")
                continue
            for module in imports:
                top, _, rest = module.partition(".")
                if top not in ok:
                    wrong.append(f"{path.relative_to(PACKAGE)} imports {module}")
                elif path.name == "analysis.py" and top == "characteristics" and not (
                        rest.endswith(".analysis") or rest.split(".")[0] in ("_common",) or "." not in rest
                        and (CHARACTERISTICS / f"{rest}.py").is_file()):
                    wrong.append(f"{path.relative_to(PACKAGE)} imports {module} (only other analysis modules)")
                elif path.name == "settings.py" and top == "characteristics":
                    wrong.append(f"{path.relative_to(PACKAGE)} imports {module}")
                elif path.name == "presentation.py" and module not in ("report.text", "report.plots"):
                    wrong.append(f"{path.relative_to(PACKAGE)} imports {module} (only report.text, report.plots)")
    assert wrong == []


TOY_SETTINGS = '''
"""The toy's table: [toy] data = "toy.csv", maximum = ..."""
from pydantic import Field

from validator.inputs.loading import numeric_column, per_analyte
from validator.inputs.study import DataPath, _Section


class ToySection(_Section):
    data: DataPath
    maximum: float = Field(1e9, gt=0, le=1e12)


def load(reader, settings, analytes):
    return per_analyte(reader, settings, analytes, "toy", ("reading",), ("analyte",), "toy reading",
                       lambda table: numeric_column(table, "reading", reader.decimal),
                       lambda values, idx, name: values[idx])
'''

TOY_ANALYSIS = '''
"""The toy's analysis: the largest reading, and the calibration's residual SD, against a maximum."""
from dataclasses import dataclass

from validator.criteria import Criterion, at_most


@dataclass(frozen=True)
class ToyResult:
    largest: float
    residual_sd: float
    maximum: float


def toy_criteria(result):
    return (Criterion("toy-largest", f"largest toy reading at most {result.maximum:g}", result.largest,
                      result.maximum, at_most(result.largest, result.maximum)),)
'''

TOY_INIT = '''
from pathlib import Path

from validator.characteristics._entry import Assessment, Characteristic
from validator.characteristics.calibration import ENTRY as CALIBRATION

from . import settings
from .analysis import ToyResult, toy_criteria


def assess(ctx):
    readings = ctx.data_of(ENTRY)
    if readings is None:
        return None
    calibration = ctx.result_of(CALIBRATION)      # an entry above it in the registry
    result = ToyResult(largest=float(max(readings)), residual_sd=calibration.fit.residual_sd,
                       maximum=ctx.settings_of(ENTRY).maximum)
    return Assessment(result, toy_criteria(result))


def sentences(entry, reading):
    return {"largest": f"The toy's largest reading is {entry['largest']:g} {reading.unit}."}


ENTRY = Characteristic("toy", "Toy", assess, settings=settings.ToySection, load=settings.load,
                       result_types=(ToyResult,), sentences=sentences,
                       fragment=str(Path(__file__).with_name("toy.html.j2")))
'''

TOY_FRAGMENT = '''{% from "_macros.html.j2" import n with context %}
<h3 id="toy-{{ a.index }}">{{ e.title }}</h3>
<p>Largest reading {{ n(d.toy.largest, ab ~ ".toy.largest") }}; {{ a.text.toy.largest }}</p>
'''


def test_a_toy_characteristic_flows_through_the_registry(make_study, outside, tmp_path, monkeypatch):
    """A characteristic in a package of its own (settings table and loader, pure analysis with a
    result dataclass and a criterion, a sentence, a fragment), added by one registry line (the
    tuple patched here), is read from the study file and its CSV, assessed, written to results.json
    and shown in the dossier without editing any file of validator."""
    import json
    import sys

    from bs4 import BeautifulSoup

    import validator.registry as registry
    from conftest import CALIBRATION
    from validator.cli import main

    folder = tmp_path / "toy_site" / "toy_characteristic"
    folder.mkdir(parents=True)
    for name, text in (("__init__.py", TOY_INIT), ("settings.py", TOY_SETTINGS), ("analysis.py", TOY_ANALYSIS),
                       ("toy.html.j2", TOY_FRAGMENT)):
        (folder / name).write_text(text, encoding="utf-8")
    monkeypatch.syspath_prepend(str(folder.parent))
    import toy_characteristic

    try:
        monkeypatch.setattr(registry, "REGISTRY", registry.REGISTRY + (toy_characteristic.ENTRY,))
        study = make_study('[calibration]\ndata = "calibration.csv"\n[toy]\ndata = "toy.csv"\nmaximum = 50\n',
                           files={"calibration.csv": CALIBRATION,
                                  "toy.csv": "reading\n3.5\n42.25\n7\n"})
        out = outside / "out"
        assert main(["run", str(study), "--out", str(out), "--format", "json,html"]) in (0, 1)
        results = json.loads((out / "results.json").read_text(encoding="utf-8"))
        analyte = results["analytes"][0]
        # its own values, written by the Serialiser from its result dataclass
        assert analyte["toy"] == {"largest": 42.25, "residual_sd": analyte["calibration"]["residual_sd"],
                                  "maximum": 50.0}       # hand computation: the largest of 3.5, 42.25, 7
        assert "toy" in analyte["characteristics_assessed"]
        toy = [c for c in analyte["criteria"] if c["id"] == "toy-largest"]
        assert len(toy) == 1 and toy[0]["pass"] is True and toy[0]["value"] == 42.25 and toy[0]["limit"] == 50
        assert {"role": "toy", "path": "toy.csv"}.items() <= next(f for f in results["inputs"]
                                                                  if f["role"] == "toy").items()
        assert {"key": "toy.maximum", "value": 50} not in results["defaults_applied"]
        html = BeautifulSoup((out / "dossier.html").read_text(encoding="utf-8"), "html.parser")
        section = html.find(id="toy-0")
        assert section is not None and section.get_text() == "Toy"
        assert html.find(attrs={"data-src": "analytes.0.toy.largest"}).get_text() == "42.25"
        assert "The toy's largest reading is 42.25" in html.get_text(" ")
        assert "largest toy reading at most 50" in html.get_text(" ")
        # a misspelt key of its table is refused like any other, naming the table's keys
        bad = make_study('[calibration]\ndata = "calibration.csv"\n[toy]\ndata = "toy.csv"\nmaximun = 5\n',
                         files={"calibration.csv": CALIBRATION})
        assert main(["check", str(bad)]) == 2
    finally:
        sys.modules.pop("toy_characteristic", None)
        sys.modules.pop("toy_characteristic.settings", None)
        sys.modules.pop("toy_characteristic.analysis", None)


def test_the_registry_is_an_ordered_tuple_and_each_step_reads_only_what_came_before():
    from validator.registry import REGISTRY

    names = [c.name for c in REGISTRY]
    assert isinstance(REGISTRY, tuple) and len(set(names)) == len(names)
    assert names[0] == "calibration"          # its data name the analytes
    # the working range and the LOQ verification use recovery and precision; re-validation uses all
    assert names.index("working_range") > max(names.index("recovery"), names.index("precision"))
    assert names.index("loq_check") > names.index("detection")
    assert names[-1] == "revalidation"


def test_the_study_schema_has_a_table_for_each_characteristic_with_settings():
    from validator.inputs.study import StudyConfig
    from validator.registry import REGISTRY

    tables = list(StudyConfig.model_fields)
    for entry in REGISTRY:
        if entry.settings is not None:
            assert StudyConfig.model_fields[entry.name].annotation in (entry.settings, entry.settings | None) or \
                entry.settings in getattr(StudyConfig.model_fields[entry.name].annotation, "__args__", ())
    assert tables[0] == "study" and tables[-2:] == ["design", "protocol"]


def test_every_package_is_installed():
    """A new package (a characteristic's, say) must be listed in pyproject.toml, or an installed
    validator lacks it."""
    import tomllib

    listed = set(tomllib.loads((PACKAGE.parent / "pyproject.toml").read_text(encoding="utf-8"))
                 ["tool"]["setuptools"]["packages"])
    found = {".".join(p.parent.relative_to(PACKAGE.parent).parts) for p in PACKAGE.rglob("__init__.py")
             if "__pycache__" not in p.parts}
    assert found - listed == set()
