"""Fuzzing the study file's numeric keys with hostile values.

Every numeric key of the schema (found by walking the pydantic models, so a
new key is fuzzed without editing this file) gets values such as inf, -inf,
nan, 1e-300, 1e300, 1e-17, 1 - 1e-17, 0, negative numbers, huge integers and
strings. Whatever the value, the command line must never report an internal
error (exit 3), and stderr must be exactly one line on exit 2 and empty
otherwise.

Profiles as in test_fuzz.py: the default runs 200 examples with a fixed seed
(CI); HYPOTHESIS_PROFILE=nightly runs 2000.
"""

from __future__ import annotations

import itertools
import os
import shutil
import typing

import pytest
from hypothesis import HealthCheck, given, seed, settings
from hypothesis import strategies as st
from pydantic import BaseModel

from conftest import REPO
from validator.cli import main
from validator.inputs.study import StudyConfig

EXAMPLES = 2000 if os.environ.get("HYPOTHESIS_PROFILE") == "nightly" else 200

# a complete study on the invented demo data, every section present
BASE = {
    "study": {"id": '"F-1"', "title": '"fuzz"', "concentration_unit": '"mg/L"', "response_unit": '"uS min"'},
    "calibration": {"data": '"calibration.csv"', "model": '"auto"', "weighting": '"auto"'},
    "samples": {"data": '"samples.csv"'},
    "criteria": {"r_squared_min": "0.995"},
    "blanks": {"data": '"blanks.csv"'},
    "detection": {"readings_per_sample": "2"},
    "recovery": {"data": '"recovery.csv"', "levels": "[{ added = 0.1, range_pct = [80, 120] }]"},
    "precision": {"data": '"precision.csv"', "repeatability_rsd_max_pct": "5",
                  "levels": "[{ level = 0.5, repeatability_rsd_max_pct = 10 }]"},
    "reference_material": {"data": '"crm.csv"', "analyte": '"nitrate"', "certified_value": "12.5",
                           "standard_uncertainty": "0.15"},
    "revalidation": {"previous": '"previous-results.json"'},
    "comparison": {"data": '"comparison.csv"', "slope_limits": "[0.95, 1.05]"},
    "sample_preparation": {"unit": '"mg/kg"', "aliquot": "2.0", "final_volume": "10.0"},
    # the sector characteristics (issue #15), on small files written by the data_folder fixture
    "limit_of_blank": {"blanks": '"lob-blanks.csv"', "low_samples": '"lob-low.csv"', "loq_max_cv_pct": "20",
                       "lob_max": "0.5"},
    "method_detection_limit": {"spiked": '"mdl-spiked.csv"', "blanks": '"mdl-blanks.csv"', "mdl_max": "1"},
    "matrix_effect": {"solvent_data": '"me-solvent.csv"', "lots_data": '"me-lots.csv"', "factor_data": '"me-factor.csv"'},
    "carry_over": {"data": '"carry.csv"'},
    "selectivity": {"data": '"selectivity.csv"'},
    "stability": {"data": '"stability.csv"'},
    "dilution_integrity": {"data": '"dilution.csv"'},
    "reanalysis": {"data": '"isr.csv"'},
    "accuracy_profile": {"acceptance_pct": "15"},
    "uncertainty": {"coverage_factor": "2", "bias_from": "[\"recovery\", \"reference_material\"]"},
}
SECTOR_FILES = {     # invented demo data for the nitrate analyte of the anions example
    "lob-blanks.csv": "analyte,found\n" + "".join(f"nitrate,{0.01 * i}\n" for i in range(12)),
    "lob-low.csv": "analyte,sample,found,nominal\n" + "".join(f"nitrate,L{k},{k + 0.01 * i},{k}\n"
                                                              for k in (1, 2) for i in range(-2, 3)),
    "mdl-spiked.csv": "analyte,found\n" + "".join(f"nitrate,{v}\n" for v in (0.52, 0.48, 0.55, 0.47, 0.5, 0.53, 0.49)),
    "mdl-blanks.csv": "analyte,found\n" + "".join(f"nitrate,{v}\n" for v in ("ND", "0.02", "", "0.05", "ND", "0.01", "ND")),
    "me-solvent.csv": "analyte,concentration,response\n" + "".join(f"nitrate,{x},{0.2 * x + 0.001 * i}\n"
                                                                   for x in (1, 5, 10, 20, 40) for i in (0, 1)),
    "me-lots.csv": "analyte,lot,nominal,found\n" + "".join(f"nitrate,P{k},3,{3 + 0.05 * i}\n"
                                                           for k in range(1, 7) for i in (-1, 0, 1)),
    "me-factor.csv": "analyte,lot,analyte_response,internal_standard_response\nnitrate,neat,100,50\n"
                     + "".join(f"nitrate,P{k},{90 + k},{46 + k}\n" for k in range(1, 7)),
    "carry.csv": "analyte,kind,response\nnitrate,lloq,100\nnitrate,lloq,104\nnitrate,blank,3\n",
    "selectivity.csv": "analyte,lot,kind,response\nnitrate,,lloq,100\n" + "".join(f"nitrate,B{k},blank,{k}\n"
                                                                               for k in range(1, 7)),
    "stability.csv": "analyte,condition,nominal,found\n" + "".join(f"nitrate,bench-top,3,{v}\n" for v in (2.9, 3, 3.1)),
    "dilution.csv": "analyte,factor,nominal,found\n" + "".join(f"nitrate,10,100,{v}\n" for v in (9.8, 10, 10.2, 9.9, 10.1)),
    "isr.csv": "analyte,sample,original,repeat\n" + "".join(f"nitrate,S{i},{10 + i},{10.5 + i}\n" for i in range(6)),
}
DATA = {"anions-drinking-water": ["calibration.csv", "samples.csv", "blanks.csv", "recovery.csv",
                                  "precision.csv", "crm.csv"],
        "anions-after-maintenance": ["comparison.csv", "previous-results.json"]}


def _numeric_keys() -> list:
    """(section, key, is_list, edges) for every number-valued key of the schema, list items included.

    ``edges`` are legal values at the key's bounds (the bound itself, or just
    inside an open bound), so that fuzzing also reaches the analysis.
    """
    def numeric(ann) -> tuple:
        args = typing.get_args(ann)
        if ann in (int, float):
            return True, False
        if typing.get_origin(ann) is list and args:
            return numeric(args[0])[0], True
        if args and type(None) in args:                        # Optional[...]
            return numeric(next(a for a in args if a is not type(None)))
        if typing.get_origin(ann) is typing.Annotated:
            return numeric(args[0])
        return False, False

    out = []
    for section, field in StudyConfig.model_fields.items():
        if typing.get_origin(field.annotation) is list:     # [[exclusions]]: arrays of tables, not in BASE
            continue
        model = next(a for a in (typing.get_args(field.annotation) or (field.annotation,))
                     if isinstance(a, type) and issubclass(a, BaseModel))
        for key, sub in model.model_fields.items():
            is_number, is_list = numeric(sub.annotation)
            if is_number:
                out.append((section, key, is_list, _edges(sub.metadata)))
    return out


def _edges(metadata) -> tuple:
    edges = []
    for m in metadata:
        for attr, inside in (("ge", 0.0), ("le", 0.0), ("gt", 1e-12), ("lt", -1e-12)):
            bound = getattr(m, attr, None)
            if bound is not None:
                edges.append(repr(bound + inside * max(abs(bound), 1.0)) if inside else repr(bound))
    edges += ["1e-300"] if any(getattr(m, "gt", None) == 0 for m in metadata) else []
    return tuple(edges)


NUMERIC_KEYS = _numeric_keys()
# keys inside the inline tables of recovery.levels and precision.levels
LEVEL_KEYS = [("recovery", "added"), ("precision", "level"), ("precision", "repeatability_rsd_max_pct"),
              ("precision", "intermediate_rsd_max_pct")]

HOSTILE = st.sampled_from([
    "inf", "-inf", "+inf", "nan", "-nan", "1e999", "-1e999", "1e-300", "-1e-300", "1e300", "1e-17",
    "0.99999999999999999", "1.0000000000000001", "0", "0.0", "-0.0", "-1", "-0.05", "1", "0.5", "0.4999999",
    "1e-6", "9.9e-7", "2048", "2048.0001", "1000", "1001", "100", "100.000001", "9" * 30, "-" + "9" * 30,
    "9" * 400, "9" * 5000, "18446744073709551617", '"0.05"', '""', '"inf"', "true", "[]", "[1]", "[1, 2, 3]",
    "{ a = 1 }", "1979-05-27", "0x10", "1_000"])
NUMBERS = st.one_of(
    st.floats(allow_nan=True, allow_infinity=True).map(repr),          # inf, nan are TOML too
    st.integers(-(2 ** 80), 2 ** 80).map(str))
VALUE = st.one_of(HOSTILE, HOSTILE, NUMBERS)


def _toml(sections: dict) -> str:
    return "".join(f"[{name}]\n" + "".join(f"{k} = {v}\n" for k, v in keys.items())
                   for name, keys in sections.items())


@st.composite
def hostile_study(draw) -> str:
    sections = {name: dict(keys) for name, keys in BASE.items()}
    for section, key, is_list, edges in draw(st.lists(st.sampled_from(NUMERIC_KEYS), min_size=1, max_size=3,
                                                      unique=True)):
        if is_list and draw(st.booleans()):
            items = draw(st.lists(st.one_of(VALUE, st.sampled_from(["90", "110", "0.9", "1.1"])),
                                  min_size=0, max_size=3))
            sections[section][key] = "[" + ", ".join(items) + "]"
        elif edges and draw(st.booleans()):
            sections[section][key] = draw(st.sampled_from(edges))
        else:
            sections[section][key] = draw(VALUE)
    if draw(st.integers(0, 3)) == 0:                  # a hostile value inside an inline table of levels
        section, key = draw(st.sampled_from(LEVEL_KEYS))
        pairs = {"recovery": {"added": "0.1", "range_pct": "[80, 120]"},
                 "precision": {"level": "0.5", "repeatability_rsd_max_pct": "10"}}[section]
        pairs[key] = draw(VALUE)
        sections[section]["levels"] = "[{ " + ", ".join(f"{k} = {v}" for k, v in pairs.items()) + " }]"
    # sometimes drop optional sections, so that defaults and absent sections are fuzzed too
    for name in draw(st.lists(st.sampled_from([n for n in BASE if n not in ("study", "calibration")]),
                              max_size=4, unique=True)):
        sections.pop(name)
    return _toml(sections)


@pytest.fixture(scope="module")
def data_folder(tmp_path_factory):
    folder = tmp_path_factory.mktemp("fuzz-keys")
    for example, names in DATA.items():
        for name in names:
            shutil.copy(REPO / "example_studies" / example / name, folder / name)
    for name, text in SECTOR_FILES.items():
        (folder / name).write_text(text, encoding="utf-8")
    return folder


def test_every_numeric_key_is_fuzzed():
    keys = {(s, k) for s, k, _, _ in NUMERIC_KEYS}
    # a sample of the keys the hostile-input report named; the walk must find them
    assert {("study", "max_data_file_mb"), ("criteria", "alpha"), ("detection", "beta"),
            ("reference_material", "standard_uncertainty"), ("comparison", "error_ratio"),
            ("recovery", "range_pct"), ("criteria", "back_calculation_tolerance_pct")} <= keys


_runs = itertools.count()


@seed(20261202)
@settings(max_examples=EXAMPLES, deadline=None, derandomize=False,
          suppress_health_check=[HealthCheck.too_slow, HealthCheck.function_scoped_fixture,
                                 HealthCheck.data_too_large])
@given(text=hostile_study(), full_run=st.booleans())
def test_numeric_keys_never_give_an_internal_error(data_folder, capsys, text, full_run):
    study = data_folder / "study.toml"
    study.write_text(text, encoding="utf-8")
    commands = [["check", str(study)]]
    if full_run:                          # a study that passes the check is also analysed (results.json)
        commands.append(["run", str(study), "--out", str(data_folder / f"out-{next(_runs)}"), "--format", "json"])
    for argv in commands:
        code = main(argv)
        _, err = capsys.readouterr()
        assert code in (0, 1, 2), err
        if code == 2:
            assert err.startswith("validator: error: ") and err.count("\n") == 1 and err.endswith("\n"), err
            assert len(err) < 3000, err
            break
        assert err == ""
