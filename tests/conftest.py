"""Shared helpers: paths to the reference data and a builder for small studies."""

from __future__ import annotations

import os
import textwrap
from pathlib import Path

import numpy as np
import pytest

REPO = Path(__file__).resolve().parents[1]
# the published reference data ship inside the package (validator/reference_data/,
# sources in its README.md); VALIDATOR_REFERENCE_DATA may point elsewhere
REFERENCE = Path(os.environ.get("VALIDATOR_REFERENCE_DATA", REPO / "validator" / "reference_data"))
ARTEFACTS = REPO / "tests" / "artefacts"


def reference_file(*parts) -> Path:
    path = REFERENCE.joinpath(*parts)
    if not path.is_file():
        pytest.fail(f"reference data file missing: {path} (see validator/reference_data/README.md)")
    return path


def load_strd(name: str) -> np.ndarray:
    """NIST StRD data block (starts on line 61 in every file here, per SOURCES.md)."""
    return np.loadtxt(reference_file("nist-strd", name), skiprows=60)


def load_dataplot(name: str, skip: int = 25) -> np.ndarray:
    return np.loadtxt(reference_file("nist-ehandbook", name), skiprows=skip)


STUDY_HEAD = """\
[study]
id = "T-1"
title = "Test study"
concentration_unit = "mg/L"
response_unit = "area"
"""

CALIBRATION = "concentration,response\n" + "".join(
    f"{x},{0.01 + 2.0 * x + d}\n" for x, d in
    [(1, 0.01), (1, -0.02), (2, 0.015), (2, -0.01), (4, 0.02), (4, -0.005), (8, -0.01), (8, 0.02),
     (16, 0.03), (16, -0.02)])


@pytest.fixture
def make_study(tmp_path):
    """Write a study file and data files; returns the study path."""

    def make(body: str | None = None, files: dict | None = None, head: str = STUDY_HEAD) -> Path:
        files = {"calibration.csv": CALIBRATION} if files is None else files
        for name, content in files.items():
            target = tmp_path / name
            if isinstance(content, bytes):
                target.write_bytes(content)
            else:
                target.write_text(content, encoding="utf-8")
        if body is None:
            body = '[calibration]\ndata = "calibration.csv"\n'
        study = tmp_path / "study.toml"
        study.write_text(head + textwrap.dedent(body), encoding="utf-8")
        return study

    return make


@pytest.fixture
def outside(tmp_path_factory) -> Path:
    """A fresh folder apart from ``tmp_path`` (where make_study puts the inputs), for outputs:
    validator refuses an --out that is, contains or lies inside an input's folder."""
    return tmp_path_factory.mktemp("out")


@pytest.fixture
def artefacts() -> Path:
    ARTEFACTS.mkdir(parents=True, exist_ok=True)
    return ARTEFACTS


def in_ci() -> bool:
    return os.environ.get("CI", "").lower() in {"1", "true", "yes"}
