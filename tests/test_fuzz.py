"""Fuzzing: random study files and CSVs never raise anything but validator's own error.

Profiles: the default runs 500 examples with a fixed seed (CI); set
HYPOTHESIS_PROFILE=nightly for 5000.
"""

import os

from hypothesis import HealthCheck, given, seed, settings
from hypothesis import strategies as st

from validator.engine import analyse_study
from validator.errors import ValidatorError
from validator.inputs.loading import load_study
from validator.report import render_html
from validator.registry import REGISTRY, Reading
from validator.results import build_results, dumps

EXAMPLES = 5000 if os.environ.get("HYPOTHESIS_PROFILE") == "nightly" else 500

KEYS = {
    "study": ["id", "title", "concentration_unit", "response_unit", "purpose", "decimal", "delimiter",
              "analyst", "max_data_file_mb", "bogus"],
    "calibration": ["data", "model", "weighting", "through_origin", "modle"],
    "samples": ["data"],
    "criteria": ["alpha", "back_calculation_tolerance_pct", "r_squared_min", "min_fraction_within_tolerance"],
    "blanks": ["data"],
    "detection": ["lod_factor", "loq_factor", "readings_per_sample", "beta", "reporting_basis"],
    "recovery": ["data", "range_pct"],
    "precision": ["data", "repeatability_rsd_max_pct"],
    "comparison": ["data", "error_ratio", "slope_limits"],
    "nonsense": ["x"],
}
VALUES = st.one_of(
    st.sampled_from(['"calibration.csv"', '"samples.csv"', '"blanks.csv"', '"recovery.csv"', '"precision.csv"',
                     '"linear"', '"quadratic"', '"auto"', '"none"', '"1/x"', '"1/y^2"', '"auto"', '"."', '","',
                     '";"', '"tab"', "true", "false", "[90, 110]", "[110, 90]", '"ich-residual-sd"', '"initial"']),
    st.integers(-5, 5).map(str), st.floats(-10, 10, allow_nan=False).map(repr),
    st.text(st.characters(codec="utf-8", exclude_categories=("Cc", "Cs")), max_size=8)
    .map(lambda s: '"' + s.replace("\\", "").replace('"', "") + '"'))

GOOD = {
    "model": ['"linear"', '"quadratic"', '"auto"'], "weighting": ['"none"', '"1/x"', '"1/x^2"', '"1/y"', '"1/y^2"', '"auto"'],
    "through_origin": ["true", "false"], "purpose": ['"initial"', '"revalidation"'], "decimal": ['"."'],
    "delimiter": ['","'], "alpha": ["0.05", "0.01", "0.1"], "r_squared_min": ["0.99", "0.9999999"],
    "back_calculation_tolerance_pct": ["15", "5", "0.1"], "min_fraction_within_tolerance": ["0.75", "1.0"],
    "lod_factor": ["3.3", "3"], "loq_factor": ["10"], "readings_per_sample": ["1", "3"], "beta": ["0.05"],
    "reporting_basis": ['"ich-residual-sd"', '"blank-sd"', '"ich-intercept-sd"'], "range_pct": ["[90, 110]", "[99, 101]"],
    "repeatability_rsd_max_pct": ["5", "0.5"], "analyst": ['"A. N. Other"'], "max_data_file_mb": ["1", "0.0001"],
}
VALID = {
    "study": 'id = "F"\ntitle = "fuzz"\nconcentration_unit = "mg/kg"\nresponse_unit = "a"\n',
    "calibration": 'data = "calibration.csv"\n',
    "samples": 'data = "samples.csv"\n', "blanks": 'data = "blanks.csv"\n',
    "recovery": 'data = "recovery.csv"\n', "precision": 'data = "precision.csv"\n',
    "comparison": 'data = "comparison.csv"\n',
}


@st.composite
def study_text(draw):
    """Mostly well-formed studies with random extra keys and values; some truncated or with stray bytes."""
    sections = ["study", "calibration"] + draw(st.lists(
        st.sampled_from(["samples", "criteria", "blanks", "detection", "recovery", "precision", "comparison"] * 3
                        + ["nonsense"]),
        max_size=4, unique=True))
    if draw(st.integers(0, 9)) == 0:
        sections = draw(st.permutations(sections))[: draw(st.integers(0, len(sections)))]
    parts = []
    for section in sections:
        parts.append(f"[{section}]\n")
        if draw(st.integers(0, 9)) > 0:
            parts.append(VALID.get(section, ""))
        keys = KEYS[section] if draw(st.integers(0, 4)) == 0 else [k for k in KEYS[section] if k not in ("modle", "bogus")]
        for key in draw(st.lists(st.sampled_from(keys or ["x"]), max_size=3, unique=True)):
            if f"{key} =" not in VALID.get(section, "") or draw(st.integers(0, 19)) == 0:
                good = GOOD.get(key)
                value = draw(st.sampled_from(good)) if good and draw(st.integers(0, 4)) > 0 else draw(VALUES)
                parts.append(f"{key} = {value}\n")
    text = "".join(parts)
    if draw(st.integers(0, 9)) == 0:
        text = text[: draw(st.integers(0, max(len(text), 1)))]
    data = text.encode()
    if draw(st.integers(0, 9)) == 0:
        data += draw(st.binary(max_size=4))
    return data


NUMBER = st.one_of(st.floats(0, 1e3).map(lambda v: f"{v:.4g}"), st.integers(0, 50).map(str),
                   st.floats(-1e3, 1e6).map(repr),
                   st.sampled_from(["inf", "-inf", "nan", "", "1,5", "1.2.3", "12 mg", "NaN", "0", "-1"]))


@st.composite
def csv_bytes(draw, columns):
    if draw(st.integers(0, 4)) > 0:
        header = [c for c in columns if c != "analyte"][:3]
    else:
        header = draw(st.lists(st.sampled_from(columns + ["extra", "Analyte "]), min_size=1, max_size=4))
    cell = st.one_of(NUMBER, NUMBER, NUMBER, st.sampled_from(["a", "b", "day-1", "day-2", "S1"]))
    rows = draw(st.lists(st.lists(cell, min_size=len(header), max_size=len(header) + (draw(st.integers(0, 9)) == 0)),
                         max_size=25))
    text = ",".join(header) + "\n" + "".join(",".join(r) + "\n" for r in rows)
    data = text.encode()
    if draw(st.integers(0, 9)) == 0:
        data = data[: draw(st.integers(0, len(data)))] + draw(st.binary(max_size=6))
    return data


@st.composite
def good_table(draw, name):
    """A well-formed data file, so that fuzzing reaches the analysis and not only the loader."""
    rows = {"samples.csv": ["sample,response"] + [f"S{i % 3},{draw(st.floats(0, 50)):.4g}" for i in range(draw(st.integers(1, 6)))],
            "blanks.csv": ["response"] + [f"{draw(st.floats(-0.1, 0.5)):.4g}" for _ in range(draw(st.integers(1, 6)))],
            "recovery.csv": ["added,found"] + [f"{a},{a * draw(st.floats(0.5, 1.5)):.4g}" for a in draw(st.lists(st.sampled_from([1, 2, 5]), min_size=1, max_size=9))],
            "comparison.csv": ["sample,reference,test"] + [f"S{i},{v:.4g},{v * draw(st.floats(0.8, 1.2)):.4g}" for i, v in enumerate(draw(st.lists(st.floats(0.1, 50), min_size=1, max_size=12)))],
            "precision.csv": ["level,series,found"] + [f"{lv},d{draw(st.integers(1, 3))},{lv * draw(st.floats(0.8, 1.2)):.5g}" for lv in draw(st.lists(st.sampled_from([1, 5]), min_size=1, max_size=12))],
            }[name]
    return ("\n".join(rows) + "\n").encode()


COLUMNS = {
    "calibration.csv": ["concentration", "response", "analyte", "series"],
    "samples.csv": ["sample", "response", "analyte"],
    "blanks.csv": ["response", "analyte"],
    "recovery.csv": ["added", "found", "native"],
    "precision.csv": ["level", "series", "found"],
    "comparison.csv": ["sample", "reference", "test"],
}


@st.composite
def good_calibration(draw):
    levels = draw(st.lists(st.sampled_from([0, 0.5, 1, 2, 5, 10, 20]), min_size=3, max_size=7, unique=True))
    reps = draw(st.integers(1, 3))
    rows = ["concentration,response"]
    for x in levels:
        for _ in range(reps):
            rows.append(f"{x},{0.1 + 2 * x + draw(st.floats(-0.5, 0.5)):.6g}")
    return ("\n".join(rows) + "\n").encode()


@seed(20261201)
@settings(max_examples=EXAMPLES, deadline=None, derandomize=False,
          suppress_health_check=[HealthCheck.too_slow, HealthCheck.function_scoped_fixture,
                                 HealthCheck.data_too_large])
@given(data=st.data())
def test_fuzz_only_validator_errors(tmp_path_factory, data):
    folder = tmp_path_factory.mktemp("fuzz")
    (folder / "study.toml").write_bytes(data.draw(study_text()))
    for name, cols in COLUMNS.items():
        if data.draw(st.integers(0, 3)) > 0:
            content = data.draw(good_calibration() if name == "calibration.csv" else good_table(name))
        else:
            content = data.draw(csv_bytes(cols))
        (folder / name).write_bytes(content)
    try:
        loaded = load_study(folder / "study.toml")
        result = analyse_study(loaded)
        results = build_results(result, generated_at="2026-01-01T00:00:00Z")
        dumps(results)
        for a in results["analytes"]:
            for e in REGISTRY:          # every characteristic's sentences from its written entry (calibration too)
                if e.sentences is not None and a.get(e.name):
                    e.sentences(a[e.name], Reading(0.05, "mg/kg"))
        if data.draw(st.integers(0, 7)) == 0:          # the whole HTML for a sample of the runs
            render_html(result, results)
    except ValidatorError as exc:
        assert str(exc) and "\n" not in str(exc)
