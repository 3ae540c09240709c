"""Integrity of an output folder: the manifest and ``validator verify``.

``manifest.json`` lists the SHA-256 of every other file in the output
folder. ``results.json`` lists the SHA-256 of every input (study file first).
:func:`verify` recomputes both and reports every difference.
"""

from __future__ import annotations

import hashlib
import json
from pathlib import Path

from .errors import OutputError

__all__ = ["write_manifest", "verify", "sha256_file"]

MANIFEST = "manifest.json"


def sha256_file(path: Path) -> str:
    h = hashlib.sha256()
    with open(path, "rb") as fh:
        for chunk in iter(lambda: fh.read(1 << 20), b""):
            h.update(chunk)
    return h.hexdigest()


def write_manifest(folder: Path) -> None:
    files = sorted(p for p in folder.iterdir() if p.is_file() and p.name != MANIFEST)
    entries = [{"file": p.name, "sha256": sha256_file(p), "bytes": p.stat().st_size} for p in files]
    (folder / MANIFEST).write_text(json.dumps({"files": entries}, indent=2) + "\n", encoding="utf-8")


def verify(folder: Path, study: str | None = None) -> list:
    """Differences between an output folder and what it recorded; empty if intact."""
    manifest = folder / MANIFEST
    if not manifest.is_file():
        raise OutputError(f"{folder}: no {MANIFEST}; is this a validator output folder?")
    try:
        entries = json.loads(manifest.read_text(encoding="utf-8"))["files"]
    except (ValueError, KeyError, TypeError):
        raise OutputError(f"{manifest}: not a readable manifest") from None
    problems = []
    listed = set()
    for e in entries:
        listed.add(e["file"])
        p = folder / e["file"]
        if not p.is_file():
            problems.append(f"output {e['file']} is missing")
        elif sha256_file(p) != e["sha256"]:
            problems.append(f"output {e['file']} differs from the manifest")
    for p in sorted(folder.iterdir()):
        if p.is_file() and p.name != MANIFEST and p.name not in listed:
            problems.append(f"output {p.name} is not in the manifest")
    if study is not None:
        results = folder / "results.json"
        if not results.is_file():
            raise OutputError(f"{folder}: no results.json to compare the inputs with")
        recorded = json.loads(results.read_text(encoding="utf-8"))["inputs"]
        base = Path(study).parent
        for e in recorded:
            p = Path(study) if e["role"] == "study" else (
                Path(e["path"]) if Path(e["path"]).is_absolute() else base / e["path"])
            if not p.is_file():
                problems.append(f"input {e['path']} is missing")
            elif sha256_file(p) != e["sha256"]:
                problems.append(f"input {e['path']} differs from the SHA-256 recorded in results.json")
    return problems
