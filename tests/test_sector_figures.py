"""The figures of the sector characteristics (limit of blank, method detection limit, stability,
dilution integrity): drawn from the results.json entry alone, shown in the dossier, one marker per
plotted value and the limit lines labelled.

The expected counts are the numbers of results in the test studies' files (exact arithmetic); the
studies are those of tests/test_sector_wiring.py.
"""

from __future__ import annotations

import json
import re
import xml.etree.ElementTree as ET

from test_sector_wiring import BIO_BODY, LOB_BODY, LOW, MDL_BODY, MDL_SPIKED, _bio_files, _lob_files, _mdl_files

from validator.cli import main

SVG_NS = "{http://www.w3.org/2000/svg}"


def _dossier(study, outside):
    out = outside / "out"
    assert main(["run", str(study), "--out", str(out), "--format", "json,html"]) in (0, 1)
    return (json.loads((out / "results.json").read_text(encoding="utf-8")),
            (out / "dossier.html").read_text(encoding="utf-8"))


def _figure(html: str, heading: str) -> str:
    """The first inline SVG of the section under ``heading`` (up to the next heading)."""
    section = html.split(heading, 1)[1]
    section = re.split(r"<h[23]", section, maxsplit=1)[0]
    match = re.search(r"<svg.*?</svg>", section, flags=re.S)
    assert match, f"no figure under {heading}"
    return match.group(0)


def _row_figure(html: str, prefix: str) -> str:
    """The inline SVG whose element ids start with ``prefix`` (its presentation module's figure name),
    which must stand in the row of figures at the end of the analyte's characteristics section."""
    row = html.split('<div class="figure-row">', 1)[1]
    svgs = [m.group(0) for m in re.finditer(r"<svg.*?</svg>", row, flags=re.S) if f'id="{prefix}' in m.group(0)]
    assert len(svgs) == 1, f"no figure {prefix} in the row of figures"
    return svgs[0]


def _markers(svg: str, gid: str) -> int:
    """The markers drawn by the series whose matplotlib gid is ``gid`` (its ``<use>`` elements)."""
    root = ET.fromstring(svg)
    groups = [g for g in root.iter(f"{SVG_NS}g") if g.get("id", "").endswith(f"-{gid}")]
    assert len(groups) == 1, f"series {gid} not found once"
    return sum(1 for _ in groups[0].iter(f"{SVG_NS}use"))


def _text(svg: str) -> str:
    return " ".join("".join(t.itertext()) for t in ET.fromstring(svg).iter(f"{SVG_NS}text"))


def test_limit_of_blank_figure(make_study, outside):
    results, html = _dossier(make_study(LOB_BODY, _lob_files()), outside)
    svg = _figure(html, "<h3>Limit of blank, detection and quantitation")
    # exact count: 60 blank results and 2 x 10 low-level results in the study's files
    assert _markers(svg, "blank-results") == 60
    assert _markers(svg, "low-results") == sum(len(v) for v in LOW.values())
    entry = results["analytes"][0]["limit_of_blank"]
    assert len(entry["blank_results"]) == 60 and len(entry["low_results"]) == 20
    text = _text(svg)
    assert "LoB 0.565 mg/L" in text and "LoD " in text and "result (mg/L)" in text
    assert _markers(svg, "lob-line") == 0 and _markers(svg, "lod-line") == 0     # lines, not markers


def test_method_detection_limit_figure(make_study, outside):
    blanks = ["ND", "0.12", "", "0.31", "not detected", "0.05", "0.2"]
    results, html = _dossier(make_study(MDL_BODY, _mdl_files(blanks)), outside)
    svg = _figure(html, "<h3>Method detection limit")
    # exact count: the spiked results, and the 4 of 7 blanks with a numerical result
    assert _markers(svg, "spiked-results") == len(MDL_SPIKED)
    assert _markers(svg, "blank-results") == 4
    e = results["analytes"][0]["method_detection_limit"]
    assert e["blank_numerical_results"] == [0.12, 0.31, 0.05, 0.2]
    text = _text(svg)
    assert "MDL_s " in text and "MDL_b 0.31 mg/L" in text and "result (mg/L)" in text


def test_stability_and_dilution_figures(make_study, outside):
    results, html = _dossier(make_study(BIO_BODY, _bio_files()), outside)
    a = results["analytes"][0]
    # both in the row of figures at the end of the section (issue #14: compact analyte sections)
    svg = _row_figure(html, "stab")
    # one mean per condition and level with a deviation: 3 in the study (the 2-result one has a mean too)
    with_mean = [c for c in a["stability"]["conditions"] if c["result"]["deviation_percent"] is not None]
    assert _markers(svg, "means") == len(with_mean) == 3
    text = _text(svg)
    assert "limits ±15 %" in text and "bench-top 24 h, 3 mg/L" in text
    svg = _row_figure(html, "dil")
    assert _markers(svg, "level-0") == 5                  # the five diluted QCs of the file
    text = _text(svg)
    assert "limits 100 ± 15 % (on the mean)" in text and "×10 of 500 mg/L (5)" in text
