"""The qualification kit (validator qualify) and its reference cases.

The cases, their published expected values and the source of each value live
in ONE place, validator/qualification/cases.toml; the parametrised test below
runs every one of them through ``validator run`` exactly as ``qualify`` does.
"""

import hashlib
import json

import pytest

from validator.cli import main
from validator.qualification import CASES_FILE, load_cases, package_digest, run_case

CASES = load_cases()


def test_the_kit_covers_the_published_reference_sets():
    ids = {c.id for c in CASES}
    assert {"strd-norris", "strd-pontius", "strd-noint1", "strd-noint2", "handbook-pontius-lack-of-fit",
            "handbook-berger-lack-of-fit", "strd-anova-sirstv", "strd-anova-atmwtag",
            "passing-bablok-sen-1968", "passing-bablok-noise-small", "bland-altman-giavarina-2015"} <= ids
    assert {f"strd-anova-smls0{i}" for i in range(1, 10)} <= ids
    assert all(c.source and all(k.source for k in c.checks) for c in CASES)


@pytest.mark.parametrize("case", CASES, ids=[c.id for c in CASES])
def test_reference_case(case, tmp_path):
    # expected values: published/certified, with their source, in validator/qualification/cases.toml
    result = run_case(case, tmp_path)
    assert result.error == ""
    failed = [(c.check.path, c.obtained, c.check.expected) for c in result.checks if not c.passed]
    assert not failed, failed
    assert result.passed


@pytest.fixture(scope="module")
def qualified(tmp_path_factory):
    out = tmp_path_factory.mktemp("qualify") / "report"
    code = main(["qualify", "--out", str(out)])
    return code, out


def test_qualify_passes_and_writes_the_report(qualified, capsys):
    code, out = qualified
    assert code == 0
    assert sorted(p.name for p in out.iterdir()) == ["manifest.json", "qualification.html",
                                                     "qualification.json", "qualification.pdf"]
    report = json.loads((out / "qualification.json").read_text())
    assert report["verdict"] == "pass" and report["failed_cases"] == []
    assert [c["id"] for c in report["cases"]] == [c.id for c in CASES]
    assert set(report["environment"]["libraries"]) >= {"python", "numpy", "scipy", "statsmodels"}
    assert report["environment"]["platform"]
    assert report["cases_file_sha256"] == hashlib.sha256(CASES_FILE.read_bytes()).hexdigest()
    assert len(report["sign_off"]) == 3 and all(s["attests"] for s in report["sign_off"])
    check = report["cases"][0]["checks"][0]
    assert set(check) >= {"path", "expected", "obtained", "rtol", "atol", "pass", "source"}
    assert main(["verify", str(out)]) == 0          # the report folder carries its own manifest


def test_package_digest_rule(qualified):
    # hand computation of the documented rule: SHA-256 over "<sha256>  <file>\n", sorted by file
    _, out = qualified
    digest = json.loads((out / "qualification.json").read_text())["package_digest"]
    names = [f["file"] for f in digest["files"]]
    assert names == sorted(names)
    assert any(n.endswith("validator/characteristics/calibration/analysis.py") for n in names)
    assert any(n.endswith("qualification.html.j2") for n in names)
    assert any(n.startswith("validator/reference_data/nist-strd/") for n in names)
    text = "".join(f"{f['sha256']}  {f['file']}\n" for f in digest["files"])
    assert digest["sha256"] == hashlib.sha256(text.encode()).hexdigest()
    assert package_digest()["sha256"] == digest["sha256"]


def test_report_html_and_pdf_show_every_case(qualified):
    from pypdf import PdfReader

    _, out = qualified
    html = (out / "qualification.html").read_text()
    report = json.loads((out / "qualification.json").read_text())
    for c in report["cases"]:
        assert f'id="case-{c["id"]}"' in html
    assert report["package_digest"]["sha256"] in html
    text = "".join(page.extract_text() for page in PdfReader(out / "qualification.pdf").pages)
    assert "Installation qualification" in text
    assert "strd-anova-smls09" in text


def _perturbed(tmp_path, old, new):
    text = CASES_FILE.read_text(encoding="utf-8")
    assert text.count(old) == 1
    path = tmp_path / "cases.toml"
    path.write_text(text.replace(old, new), encoding="utf-8")
    return path


def test_perturbed_reference_value_fails_naming_the_case(tmp_path_factory, capsys):
    inputs = tmp_path_factory.mktemp("cases")
    # the Norris slope certified as 1.00211681802045; perturbed in the 9th digit
    cases = _perturbed(inputs, "expected = 1.00211681802045\n", "expected = 1.00211682802045\n")
    out = tmp_path_factory.mktemp("perturbed") / "report"
    assert main(["qualify", "--out", str(out), "--cases", str(cases), "--format", "json"]) == 1
    text = capsys.readouterr().out
    assert "qualification case strd-norris FAILED: analytes.0.calibration.coefficients.slope.estimate" in text
    assert "qualification FAIL: 20 of 21 case(s) passed" in text
    report = json.loads((out / "qualification.json").read_text())
    assert report["verdict"] == "fail" and report["failed_cases"] == ["strd-norris"]


def test_case_with_a_missing_column_fails_naming_the_case(tmp_path_factory, capsys):
    inputs = tmp_path_factory.mktemp("cases")
    cases = _perturbed(inputs, 'columns = { reference = "x", test = "y" }\n',
                       'columns = { reference = "x", test = "z" }\n')
    out = tmp_path_factory.mktemp("missing") / "report"
    assert main(["qualify", "--out", str(out), "--cases", str(cases), "--format", "json"]) == 1
    assert ("qualification case passing-bablok-noise-small FAILED: the case cannot be laid out as a study: "
            "validator/reference_data/method-comparison/pb_noise_small.csv: has no column 'z'"
            in capsys.readouterr().out)


def test_case_that_cannot_run_fails_naming_the_case(tmp_path_factory, capsys):
    inputs = tmp_path_factory.mktemp("cases")
    cases = _perturbed(inputs, 'calibration = { model = "quadratic" }\n',
                       'calibration = { model = "cubic" }\n')
    out = tmp_path_factory.mktemp("broken") / "report"
    assert main(["qualify", "--out", str(out), "--cases", str(cases), "--format", "json"]) == 1
    text = capsys.readouterr().out
    assert "qualification case strd-pontius FAILED: validator run exited 2" in text


@pytest.mark.parametrize("old, new, message", [
    ('id = "strd-norris"\n', 'id = "strd-pontius"\n', 'case "strd-pontius": is defined twice'),
    ('data = "nist-strd/Norris.dat"\n', 'data = "../../etc/passwd"\n',
     '"data" must name a file in validator/reference_data/'),
    ("expected = 0.884796396144373\nrtol = 1e-9\n", "expected = 0.884796396144373\n",
     "rtol and atol must be >= 0, and not both 0"),
    ('columns = { reference = "x", test = "y" }\n', 'columns = { reference = 0, test = 1 }\n',
     'case "passing-bablok-noise-small": "columns" must give reference and test, as header names'),
])
def test_bad_case_file_is_refused(tmp_path_factory, capsys, old, new, message):
    inputs = tmp_path_factory.mktemp("cases")
    cases = _perturbed(inputs, old, new)
    out = tmp_path_factory.mktemp("bad") / "report"
    assert main(["qualify", "--out", str(out), "--cases", str(cases)]) == 2
    assert message in capsys.readouterr().err
    assert not out.exists()


def test_qualify_follows_the_output_rules(qualified, capsys):
    _, out = qualified
    assert main(["qualify", "--out", str(out), "--format", "json"]) == 2     # exists, no --force
    assert "output folder exists; choose another --out or add --force" in capsys.readouterr().err


def test_qualify_refuses_out_inside_the_case_file_folder(tmp_path, capsys):
    cases = _perturbed(tmp_path, 'id = "strd-norris"\n', 'id = "strd-norris-copy"\n')
    assert main(["qualify", "--out", str(tmp_path / "report"), "--cases", str(cases)]) == 2
    assert capsys.readouterr().err.startswith("validator: error: ")
    assert not (tmp_path / "report").exists()


@pytest.mark.parametrize("text", ["Norris \U0001F9EA straight line", 'a "quoted" \\ back', "bell \x07 tab \t",
                                  "µS·cm⁻¹", "line\u2028separator", "\U0010FFFF"])
def test_case_text_is_written_as_valid_toml(text):
    """Titles reach the generated study file as TOML basic strings; TOML 1.0 allows \\uXXXX and
    \\UXXXXXXXX escapes of Unicode scalar values only (no surrogate pairs)."""
    import tomllib

    from validator.qualification import _toml_value

    assert tomllib.loads(f"k = {_toml_value(text)}")["k"] == text


def test_own_cases_file_says_the_shipped_kit_was_not_run(tmp_path_factory, capsys):
    inputs = tmp_path_factory.mktemp("cases")
    cases = _perturbed(inputs, 'title = "Straight line, NIST StRD Norris (36 points)"',
                       'title = "Norris \U0001F9EA straight line"')
    out = tmp_path_factory.mktemp("own") / "report"
    assert main(["qualify", "--out", str(out), "--cases", str(cases), "--format", "json"]) == 0
    assert f"(the cases of {cases} only; the shipped kit was not run)" in capsys.readouterr().out
