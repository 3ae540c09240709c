"""Issue #14, item 8: the synthetic multi-residue study renders to a navigable dossier.

The study is made by ``example_studies/make_multiresidue.py`` (invented data, fixed seed) into a
temporary folder. These tests check structure only (links, anchors, PDF outline), never time:
the timings are in ``benchmarks/bench_scale.py`` and docs/performance.md.
"""

from __future__ import annotations

import importlib.util
import json
import os
import subprocess
import sys
from pathlib import Path

import pytest
from bs4 import BeautifulSoup

ROOT = Path(__file__).resolve().parents[1]


def _generator():
    spec = importlib.util.spec_from_file_location("make_multiresidue", ROOT / "example_studies" / "make_multiresidue.py")
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


def _run(tmp: Path, analytes: int, formats: str) -> Path:
    study = _generator().write(tmp / "study", analytes)
    out = tmp / "out"
    # a fresh interpreter, as a user runs it (and so with the run's own BLAS thread setting, which an
    # interpreter that has already imported numpy cannot take)
    proc = subprocess.run([sys.executable, "-m", "validator", "run", str(study), "--out", str(out),
                           "--format", formats, "--quiet"], capture_output=True, text=True,
                          env={**os.environ, "PYTHONPATH": str(ROOT)})
    assert proc.returncode in (0, 1), proc.stderr   # 1: some invented compounds miss a criterion, as intended
    assert proc.stderr == ""
    return out


@pytest.fixture(scope="module")
def multiresidue_300(tmp_path_factory):
    return _run(tmp_path_factory.mktemp("mr300"), 300, "json,html")


def test_generator_is_deterministic_and_refuses_foreign_folders(tmp_path):
    gen = _generator()
    assert gen.tables(3) == gen.tables(3)
    (tmp_path / "notes.txt").write_text("not the generator's")
    with pytest.raises(FileExistsError):
        gen.write(tmp_path, 3)
    assert (tmp_path / "notes.txt").read_text() == "not the generator's"


@pytest.mark.slow
def test_300_analytes_summary_links_to_each_analyte_section(multiresidue_300):
    results = json.loads((multiresidue_300 / "results.json").read_text(encoding="utf-8"))
    assert len(results["analytes"]) == 300
    soup = BeautifulSoup((multiresidue_300 / "dossier.html").read_text(encoding="utf-8"), "html.parser")
    ids = {tag["id"] for tag in soup.find_all(id=True)}
    rows = soup.select("#summary table.matrix tbody tr[data-analyte]")
    assert len(rows) == 300
    for i, (row, analyte) in enumerate(zip(rows, results["analytes"])):
        links = [a for a in row.find_all("a", href=True) if a["href"].startswith("#")]
        assert len(links) == 1, row                       # one link per analyte in the matrix
        assert links[0].get_text(strip=True) == analyte["name"]
        target = links[0]["href"][1:]
        assert target == f"analyte-{i}" and target in ids
        section = soup.find(id=target)
        assert section.find("h2").get_text(" ", strip=True).startswith(f"{analyte['name']}: calibration")


@pytest.mark.slow
def test_pdf_outline_has_an_entry_per_analyte_at_20_analytes(tmp_path):
    from pypdf import PdfReader

    out = _run(tmp_path, 20, "json,pdf")
    names = [a["name"] for a in json.loads((out / "results.json").read_text(encoding="utf-8"))["analytes"]]

    def titles(items):
        for item in items:
            if isinstance(item, list):
                yield from titles(item)
            else:
                yield item.title

    outline = list(titles(PdfReader(str(out / "dossier.pdf")).outline))
    for name in names:
        assert sum(t.startswith(f"{name}: calibration") for t in outline) == 1, name
