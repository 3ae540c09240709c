"""Property: every null test or estimate in results.json has its reason in ``not_applicable``.

Studies are generated from well-formed data files (the generators of tests/test_fuzz.py) with
random sections and settings, so that degenerate but legal designs (one blank, one result per
recovery level, a single precision series, exact fits, nominal-zero calibrators) are reached.
"""

import os

from hypothesis import HealthCheck, given, seed, settings
from hypothesis import strategies as st

from test_fuzz import GOOD, good_calibration, good_table
from validator.registry import REGISTRY
from validator.engine import analyse_study
from validator.errors import ValidatorError
from validator.inputs.loading import load_study
from validator.results import build_results

EXAMPLES = 1000 if os.environ.get("HYPOTHESIS_PROFILE") == "nightly" else 100
SECTIONS = {"samples": "samples.csv", "blanks": "blanks.csv", "recovery": "recovery.csv",
            "precision": "precision.csv", "comparison": "comparison.csv"}
# sections that are null when not assessed (characteristics_assessed says so), registry entries included
OPTIONAL = ("recovery", "precision", "reference_material", "revalidation", "comparison") + tuple(
    e.name for e in REGISTRY if e.result_types)
WEIGHTINGS = ('"none"', '"auto"')
LEGACY = ("lack_of_fit", "mandel", "normality", "heteroscedasticity", "levene", "intercept_test")


def nulls(value, path=""):
    """Every null leaf, as a dotted path (an independent walk, not the one in results.py)."""
    if value is None:
        return [path]
    if isinstance(value, dict):
        return [p for k, v in value.items() for p in nulls(v, f"{path}.{k}" if path else k)]
    if isinstance(value, list):
        return [p for i, v in enumerate(value) for p in nulls(v, f"{path}.{i}")]
    return []


def covered(path, analyte):
    items = {}
    for entry in analyte["not_applicable"]:
        item = entry["item"]
        if item in LEGACY:
            item = f"calibration.{item}"
        elif item.startswith("samples.") and not item.split(".")[1].isdigit():
            sid = item.split(".", 1)[1]
            item = next(f"samples.{i}" for i, s in enumerate(analyte["samples"]) if s["id"] == sid)
        items[item] = entry["reason"]
    parts = path.split(".")
    reasons = [items[p] for p in (".".join(parts[:k]) for k in range(len(parts), 0, -1)) if p in items]
    return bool(reasons) and all(r.strip() for r in reasons)


@st.composite
def study(draw):
    sections = draw(st.lists(st.sampled_from(sorted(SECTIONS)), unique=True, max_size=5))
    text = ('[study]\nid = "N"\ntitle = "nulls"\nconcentration_unit = "mg/kg"\nresponse_unit = "a"\n'
            '[calibration]\ndata = "calibration.csv"\n'
            f'model = {draw(st.sampled_from(GOOD["model"]))}\n'
            f'weighting = {draw(st.sampled_from(WEIGHTINGS))}\n'
            f'through_origin = {draw(st.sampled_from(["false", "false", "true"]))}\n'
            '[detection]\n'
            f'reporting_basis = {draw(st.sampled_from(GOOD["reporting_basis"]))}\n')
    files = {"calibration.csv": draw(good_calibration())}
    for name in sections:
        text += f'[{name}]\ndata = "{SECTIONS[name]}"\n'
        files[SECTIONS[name]] = draw(good_table(SECTIONS[name]))
    return text, files


@seed(20261202)
@settings(max_examples=EXAMPLES, deadline=None,
          suppress_health_check=[HealthCheck.too_slow, HealthCheck.function_scoped_fixture,
                                 HealthCheck.data_too_large])
@given(case=study())
def test_every_null_has_a_reason(tmp_path_factory, case):
    folder = tmp_path_factory.mktemp("nulls")
    text, files = case
    (folder / "study.toml").write_text(text)
    for name, content in files.items():
        (folder / name).write_bytes(content)
    try:
        result = analyse_study(load_study(folder / "study.toml"))
    except ValidatorError:
        return                      # refused input: nothing is written, nothing to explain
    results = build_results(result, generated_at="2026-01-01T00:00:00Z")
    for analyte in results["analytes"]:
        body = {k: v for k, v in analyte.items()
                if k != "not_applicable" and not (k in OPTIONAL and v is None)}
        missing = [p for p in nulls(body) if not covered(p, analyte)]
        assert not missing, (missing, analyte["not_applicable"])
