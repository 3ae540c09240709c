"""Every confidence-level label of the dossier comes from the interval's own level.

The re-validation example (and the full demo study) are run at alpha = 0.01 and 0.05; every
"NN % CI", "NN % confidence band" and "NN % prediction band" in the HTML (tables, sentences,
criteria and the SVG figures) must then say 100(1 - alpha) %, and the slope-change interval
of the re-validation, a two one-sided tests interval, 100(1 - 2 alpha) % [Schuirmann 1987].
# hand computation: 1 - 0.01 = 0.99, 1 - 2 x 0.01 = 0.98; 1 - 0.05 = 0.95, 1 - 2 x 0.05 = 0.90
"""

import re
import shutil
from pathlib import Path

import pytest
from bs4 import BeautifulSoup

from validator.cli import main

EXAMPLES = Path(__file__).resolve().parents[1] / "example_studies"
LABEL = re.compile(r"(\d+(?:\.\d+)?) %\s+(CI|confidence band|prediction band)")
# the slope-change interval: "98 % CI of the (slope | mean sensitivity ...) change", "... CI of change (%)",
# or the sentence "Slope change +0.75 % with 98 % CI ..."
TOST_AFTER = re.compile(r"^ of (the )?(slope change|mean sensitivity|change)")
TOST_BEFORE = re.compile(r"change [+-]?[0-9.]+ % with $")


def _with_alpha(folder: Path, alpha: float) -> Path:
    study = folder / "study.toml"
    text = study.read_text(encoding="utf-8")
    if re.search(r"(?m)^alpha\s*=", text):
        text = re.sub(r"(?m)^alpha\s*=.*$", f"alpha = {alpha}", text)
    else:
        text = text.replace("[criteria]\n", f"[criteria]\nalpha = {alpha}\n")
    assert f"alpha = {alpha}" in text
    study.write_text(text, encoding="utf-8")
    return study


def labels(html: str):
    """(level, is the slope-change interval, context) of every confidence-level label in the dossier."""
    text = " ".join(BeautifulSoup(html, "html.parser").get_text(" ").split())
    for m in LABEL.finditer(text):
        before, after = text[max(0, m.start() - 60):m.start()], text[m.end():m.end() + 40]
        yield float(m.group(1)), bool(TOST_AFTER.search(after) or TOST_BEFORE.search(before)), before + m.group(0) + after


@pytest.mark.parametrize("example", ["anions-after-maintenance", "anions-drinking-water"])
@pytest.mark.parametrize("alpha, level, tost", [(0.01, 99, 98), (0.05, 95, 90)])
def test_labels_come_from_the_interval_level(example, alpha, level, tost, tmp_path, outside):
    folder = tmp_path / example
    shutil.copytree(EXAMPLES / example, folder)
    study = _with_alpha(folder, alpha)
    out = outside / "out"
    assert main(["run", str(study), "--out", str(out), "--format", "html"]) in (0, 1)
    found = list(labels((out / "dossier.html").read_text(encoding="utf-8")))
    assert len(found) >= 5
    for value, is_tost, context in found:
        assert value == (tost if is_tost else level), context
    if example == "anions-after-maintenance":
        assert any(is_tost for _, is_tost, _ in found)
