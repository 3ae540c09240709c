"""Issue #14, item 8: the synthetic multi-residue study renders to a navigable dossier.

The study is made by ``example_studies/make_multiresidue.py`` (invented data, fixed seed) into a
temporary folder. These tests check structure only (links, anchors, PDF outline), never time:
the timings are in ``benchmarks/bench_scale.py`` and docs/performance.md.
"""

from __future__ import annotations

import importlib.util
import json
import os
import re
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


@pytest.fixture(scope="module")
def multiresidue_20_pdf(tmp_path_factory):
    """20 analytes: the PDF is laid out in parts (validator.report.PARTS_FROM), its figures as PNG."""
    return _run(tmp_path_factory.mktemp("mr20"), 20, "json,pdf")


def _outline(reader):
    def walk(items):
        for item in items:
            if isinstance(item, list):
                yield from walk(item)
            else:
                yield item.title, reader.get_destination_page_number(item) + 1
    return list(walk(reader.outline))


@pytest.mark.slow
def test_pdf_outline_has_an_entry_per_analyte_at_20_analytes(multiresidue_20_pdf):
    from pypdf import PdfReader

    from validator.report import PARTS_FROM

    out = multiresidue_20_pdf
    assert PARTS_FROM <= 20                     # this test covers the PDF laid out in parts
    names = [a["name"] for a in json.loads((out / "results.json").read_text(encoding="utf-8"))["analytes"]]
    reader = PdfReader(str(out / "dossier.pdf"))
    texts = [page.extract_text() for page in reader.pages]
    outline = _outline(reader)
    assert outline[0][1] == 1 and [t for t, _ in outline[1:3]] == ["Summary", "Contents"]
    for name in names:
        entries = [(t, page) for t, page in outline if t.startswith(f"{name}: calibration")]
        assert len(entries) == 1, name
        # the entry opens the page where the analyte's section begins
        assert texts[entries[0][1] - 1].lstrip().startswith(f"{name}: calibration"), name


@pytest.mark.slow
def test_pdf_in_parts_numbers_pages_contents_and_links_as_one_document(multiresidue_20_pdf):
    from pypdf import PdfReader

    out = multiresidue_20_pdf
    names = [a["name"] for a in json.loads((out / "results.json").read_text(encoding="utf-8"))["analytes"]]
    reader = PdfReader(str(out / "dossier.pdf"))
    texts = [page.extract_text() for page in reader.pages]
    total = len(texts)
    for number, text in enumerate(texts, start=1):            # one page count for the whole document
        assert f"page {number} of {total}" in text, number
        assert number == 1 or "MR-GRAIN-20 · document VR-MR-20" in text   # the running header
    starts = {name: next(i for i, t in enumerate(texts, 1) if t.lstrip().startswith(f"{name}: calibration"))
              for name in names}
    first = next(i for i, t in enumerate(texts) if t.startswith("Contents\n") or "\nContents\n" in t)
    contents = "".join(texts[first:starts[names[0]] - 1])
    shown = {m[1]: int(m[2]) for m in re.finditer(r"(residue-\d+): calibration[ .]*?\.+\s*(\d+)", contents)}
    assert shown == starts                                      # the contents' page numbers
    destinations = reader.named_destinations
    for i, name in enumerate(names):                            # the summary's links, across parts
        assert reader.get_destination_page_number(destinations[f"analyte-{i}"]) + 1 == starts[name]
    summary = next(i for i, t in enumerate(texts) if t.lstrip().startswith("Summary"))
    linked = {a.get_object()["/Dest"] for a in reader.pages[summary].get("/Annots", [])}
    assert {f"analyte-{i}" for i in range(len(names))} <= linked
    assert all(str(name) in destinations for name in linked)


def test_back_matter_is_cut_between_analytes_with_each_part_whole_html():
    from validator.report.pdf import SPLIT, _back_parts

    back = ('<section id="met">m</section>' + SPLIT + '<section id="app" class="x"><h2>A</h2>'
            + SPLIT.join(f"<div>a{i}</div>" for i in range(5)) + "</section>" + SPLIT + '<section id="audit">t</section>')
    parts = _back_parts(back, 2)
    for part in parts:                                          # every part opens and closes its sections
        assert part.count("<section") == part.count("</section>"), part
    assert "".join(parts).count("<div>") == 5                  # nothing lost, nothing repeated
    assert parts[1].startswith('<section id="app" class="x">') and "<h2>A</h2>" not in parts[1]
    assert _back_parts(back, 100) == [back.replace(SPLIT, "")]


def test_appendices_of_20_analytes_are_laid_out_in_several_parts(multiresidue_20_pdf):
    # the appendices are cut between analytes (issue #14: one document of all appendices took
    # 2.8 GB in one layout worker at 300 analytes); each analyte's appendix block is still present
    from pypdf import PdfReader

    out = multiresidue_20_pdf
    names = [a["name"] for a in json.loads((out / "results.json").read_text(encoding="utf-8"))["analytes"]]
    reader = PdfReader(str(out / "dossier.pdf"))
    destinations = reader.named_destinations
    for i in range(len(names)):
        assert f"calibration-data-{i}" in destinations and f"raw-data-{i}" in destinations


def test_screen_version_carries_no_part_markers(tmp_path):
    out = _run(tmp_path, 12, "json,html,pdf")                 # PARTS_FROM analytes: the print path
    html = (out / "dossier.html").read_text(encoding="utf-8")
    assert "validator:split" not in html and "validator:part" not in html
