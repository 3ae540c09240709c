"""Integrity of an output folder: the manifest and ``validator verify``.

``manifest.json`` lists the SHA-256 and size of every other file in the output
folder and says it was written by validator (``"written_by": "validator"``);
manifests of older versions, without that field, are still read.
``results.json`` lists the SHA-256 of every input (study file first).
:func:`verify` recomputes both and reports every difference.

verify stays inside the folder it is given: a manifest entry must be the plain
name of a regular file in that folder (no ``/``, no ``..``, no absolute path,
no symbolic link), and no file is read beyond the size its record states (and
never beyond :data:`MAX_FILE_BYTES`). With ``--study``, a recorded input is
read only if the study file itself names that path, and it is located exactly
as the study's own reading locates it. A manifest or results.json that cannot
be read as such is an :class:`~validator.errors.OutputError` (exit code 2)
naming the file.
"""

from __future__ import annotations

import hashlib
import json
import os
import re
import stat
import tomllib
from dataclasses import dataclass
from pathlib import Path

from ..errors import OutputError, show

__all__ = ["write_manifest", "start_manifest", "read_manifest", "verify", "sha256_file",
           "Manifest", "WRITTEN_BY", "MANIFEST"]

MANIFEST = "manifest.json"
SIGNATURE = "signature.json"        # the one file a manifest does not list (validator.signing checks it)
WRITTEN_BY = "validator"            # the value of "written_by" in every manifest we write
MAX_FILE_BYTES = 1 << 30            # hard cap on any file verify reads (1 GiB)
MAX_JSON_BYTES = 64 << 20           # manifest.json, results.json and the study file (64 MiB)
_SHA256 = re.compile(r"[0-9a-f]{64}")
_ENTRY_KEYS = {"file", "sha256", "bytes"}
_INPUT_KEYS = {"role", "path", "sha256", "bytes"}


def sha256_file(path: Path) -> str:
    h = hashlib.sha256()
    with open(path, "rb") as fh:
        for chunk in iter(lambda: fh.read(1 << 20), b""):
            h.update(chunk)
    return h.hexdigest()


def _manifest_text(entries: list) -> str:
    return json.dumps({"written_by": WRITTEN_BY, "files": entries}, indent=2) + "\n"


def start_manifest(folder: Path) -> None:
    """Mark a folder being written as ours: a manifest that lists no file yet."""
    (folder / MANIFEST).write_text(_manifest_text([]), encoding="utf-8")


def write_manifest(folder: Path) -> None:
    files = sorted(p for p in folder.iterdir()
                   if p.is_file() and not p.is_symlink() and p.name not in (MANIFEST, SIGNATURE))
    entries = [{"file": p.name, "sha256": sha256_file(p), "bytes": p.stat().st_size} for p in files]
    (folder / MANIFEST).write_text(_manifest_text(entries), encoding="utf-8")


@dataclass(frozen=True)
class ManifestEntry:
    file: str
    sha256: str
    bytes: int


@dataclass(frozen=True)
class Manifest:
    """A manifest read and checked; ``written_by`` is ``None`` for older manifests."""

    entries: tuple
    written_by: str | None
    legacy_shape: bool       # exactly the older layout: {"files": [{file, sha256, bytes}, ...]}


def _read_small(path: Path, limit: int, shown: str) -> bytes:
    """Bytes of a regular file that is not a symbolic link, refusing more than ``limit``."""
    try:
        fd = os.open(path, os.O_RDONLY | os.O_NOFOLLOW | os.O_NONBLOCK | os.O_CLOEXEC)
    except FileNotFoundError:
        raise OutputError(f"{shown}: not found", path=path) from None
    except OSError as exc:
        reason = "is a symbolic link" if os.path.islink(path) else f"cannot be read ({exc.strerror})"
        raise OutputError(f"{shown}: {reason}", path=path) from None
    if not stat.S_ISREG(os.fstat(fd).st_mode):
        os.close(fd)
        raise OutputError(f"{shown}: is not a regular file", path=path)
    with os.fdopen(fd, "rb") as fh:
        data = fh.read(limit + 1)
    if len(data) > limit:
        raise OutputError(f"{shown}: is larger than {limit} bytes; not read", path=path)
    return data


def _load_json(path: Path, shown: str):
    data = _read_small(path, MAX_JSON_BYTES, shown)
    try:
        return json.loads(data.decode("utf-8"))
    except UnicodeDecodeError:
        raise OutputError(f"{shown}: is not UTF-8 text", path=path) from None
    except RecursionError:
        raise OutputError(f"{shown}: is nested too deeply to be read", path=path) from None
    except ValueError as exc:
        raise OutputError(f"{shown}: is not valid JSON ({exc})", path=path) from None


def _is_count(value) -> bool:
    return isinstance(value, int) and not isinstance(value, bool) and 0 <= value <= MAX_FILE_BYTES


def plain_name(name) -> bool:
    """A file name with no folder part: no ``/``, ``\\``, NUL, ``.`` or ``..``."""
    return (isinstance(name, str) and name not in ("", ".", "..")
            and not any(c in name for c in "/\\\0"))


def read_manifest(folder: Path) -> Manifest:
    """Read ``folder/manifest.json`` and check every field; :class:`OutputError` if unusable."""
    path = folder / MANIFEST
    shown = str(path)
    if not os.path.lexists(path):
        raise OutputError(f"{folder}: no {MANIFEST}; is this a validator output folder?", path=path)
    doc = _load_json(path, shown)
    if not isinstance(doc, dict) or not isinstance(doc.get("files"), list):
        raise OutputError(f'{shown}: expected an object with a "files" list', path=path)
    written_by = doc.get("written_by")
    if written_by is not None and not isinstance(written_by, str):
        raise OutputError(f'{shown}: "written_by" must be text, not {written_by!r:.60}', path=path)
    entries, seen, legacy_entries = [], set(), True
    for i, e in enumerate(doc["files"]):
        where = f'{shown}, files[{i}]'
        if not isinstance(e, dict):
            raise OutputError(f"{where}: expected an object, not {e!r:.60}", path=path)
        legacy_entries &= set(e) == _ENTRY_KEYS
        name, digest, size = e.get("file"), e.get("sha256"), e.get("bytes")
        if not plain_name(name) or name == MANIFEST:
            raise OutputError(f'{where}: "file" must be the plain name of a file in the folder, '
                              f"not {name!r:.80}", path=path)
        if name in seen:
            raise OutputError(f'{where}: "{name}" is listed twice', path=path)
        if not isinstance(digest, str) or not _SHA256.fullmatch(digest):
            raise OutputError(f'{where}: "sha256" must be 64 lower-case hex digits, not {digest!r:.80}',
                              path=path)
        if not _is_count(size):
            raise OutputError(f'{where}: "bytes" must be a whole number from 0 to {MAX_FILE_BYTES}, '
                              f"not {size!r:.60}", path=path)
        seen.add(name)
        entries.append(ManifestEntry(name, digest, size))
    legacy = written_by is None and set(doc) == {"files"} and legacy_entries
    return Manifest(tuple(entries), written_by, legacy)


def _hash_bounded(path: Path, size: int, *, follow: bool) -> tuple:
    """(problem, None) or (None, sha256): a regular file of exactly ``size`` bytes, read no further."""
    flags = os.O_RDONLY | os.O_NONBLOCK | os.O_CLOEXEC | (0 if follow else os.O_NOFOLLOW)
    try:
        fd = os.open(path, flags)
    except FileNotFoundError:
        return "is missing", None
    except OSError as exc:
        if not follow and os.path.islink(path):
            return "is a symbolic link (not followed)", None
        return f"cannot be read ({exc.strerror})", None
    st = os.fstat(fd)
    if not stat.S_ISREG(st.st_mode):
        os.close(fd)
        return "is not a regular file", None
    with os.fdopen(fd, "rb") as fh:
        if st.st_size != size:
            return f"has {st.st_size} bytes, {size} recorded", None
        h, left = hashlib.sha256(), size
        while left > 0:
            chunk = fh.read(min(left, 1 << 20))
            if not chunk:
                break
            h.update(chunk)
            left -= len(chunk)
        if left or fh.read(1):
            return "changed size while being read", None
    return None, h.hexdigest()


def _check_outputs(folder: Path, manifest: Manifest) -> list:
    problems = []
    listed = {e.file for e in manifest.entries}
    for e in manifest.entries:
        problem, digest = _hash_bounded(folder / e.file, e.bytes, follow=False)
        if problem == "is missing":
            problems.append(f"output {show(e.file)} is missing")
        elif problem is not None:
            problems.append(f"output {show(e.file)} {problem}")
        elif digest != e.sha256:
            problems.append(f"output {show(e.file)} differs from the manifest")
    with os.scandir(folder) as it:
        found = sorted(it, key=lambda d: d.name)
    for d in found:
        if d.name in (MANIFEST, SIGNATURE) or d.name in listed:
            continue
        if d.is_symlink():
            problems.append(f"output {show(d.name)} is a symbolic link not in the manifest")
        elif d.is_dir(follow_symlinks=False):
            problems.append(f"output folder {show(d.name)}/ is not in the manifest")
        else:
            problems.append(f"output {show(d.name)} is not in the manifest")
    return problems


def _named_paths(study_text: str) -> set:
    """Every text value of the study file: the paths it names are among them (whatever the key:
    data, previous, blanks, solvent_data, a run's data, a protocol file ...)."""
    try:
        doc = tomllib.loads(study_text)
    except (tomllib.TOMLDecodeError, RecursionError):
        return set()
    names, stack = set(), [doc]
    while stack:
        node = stack.pop()
        if isinstance(node, dict):
            for key, value in node.items():
                if isinstance(value, str):
                    names.add(value)
                else:
                    stack.append(value)
        elif isinstance(node, list):
            stack.extend(node)
    return names


def _recorded_inputs(folder: Path) -> list:
    path = folder / "results.json"
    shown = str(path)
    if not os.path.lexists(path):
        raise OutputError(f"{folder}: no results.json to compare the inputs with", path=path)
    doc = _load_json(path, shown)
    recorded = doc.get("inputs") if isinstance(doc, dict) else None
    if not isinstance(recorded, list) or not recorded:
        raise OutputError(f'{shown}: expected an object with a non-empty "inputs" list', path=path)
    for i, e in enumerate(recorded):
        where = f"{shown}, inputs[{i}]"
        if not isinstance(e, dict) or not _INPUT_KEYS <= set(e):
            raise OutputError(f"{where}: expected an object with role, path, sha256 and bytes",
                              path=path)
        if not isinstance(e["role"], str) or not isinstance(e["path"], str) or "\0" in e["path"]:
            raise OutputError(f'{where}: "role" and "path" must be text', path=path)
        if not isinstance(e["sha256"], str) or not _SHA256.fullmatch(e["sha256"]):
            raise OutputError(f'{where}: "sha256" must be 64 lower-case hex digits, '
                              f'not {e["sha256"]!r:.80}', path=path)
        if not _is_count(e["bytes"]):
            raise OutputError(f'{where}: "bytes" must be a whole number from 0 to {MAX_FILE_BYTES}, '
                              f'not {e["bytes"]!r:.60}', path=path)
    if recorded[0]["role"] != "study":
        raise OutputError(f'{shown}, inputs[0]: the first input must be the study file', path=path)
    return recorded


def _check_inputs(folder: Path, study: str) -> list:
    recorded = _recorded_inputs(folder)
    study_path = Path(study)
    named = _named_paths(_study_text(study_path))
    problems = []
    for i, e in enumerate(recorded):
        if i == 0:
            p, follow = study_path, True
        else:
            if e["path"] not in named:
                problems.append(f"input {show(e['path'])} is not named by {show(str(study))}; not read")
                continue
            q = Path(e["path"])              # the same rule as StudyFile.resolve
            p, follow = (q if q.is_absolute() else study_path.parent / q), True
        problem, digest = _hash_bounded(p, e["bytes"], follow=follow)
        shown = show(str(study) if i == 0 else e["path"])
        if problem == "is missing":
            problems.append(f"input {shown} is missing")
        elif problem is not None:
            problems.append(f"input {shown} {problem}")
        elif digest != e["sha256"]:
            problems.append(f"input {shown} differs from the SHA-256 recorded in results.json")
    return problems + _check_protocol(folder, study_path)


def _check_protocol(folder: Path, study_path: Path) -> list:
    """The approved protocol.json a run was held to, hashed again (results.json ``protocol``).

    Its recorded path is the one the run used (as given to --protocol, or resolved from the study's
    [protocol] file), so it is read as recorded: absolute, or relative to the current folder.
    """
    doc = _load_json(folder / "results.json", str(folder / "results.json"))
    entry = doc.get("protocol") if isinstance(doc, dict) else None
    if not isinstance(entry, dict):
        return []
    path, recorded = entry.get("path"), entry.get("sha256")
    if not isinstance(path, str) or "\0" in path or not isinstance(recorded, str) or not _SHA256.fullmatch(recorded):
        return ['results.json "protocol" has no valid path and sha256 to check the protocol against']
    shown = show(path)
    p = Path(path)
    try:
        data = _read_small(p, MAX_JSON_BYTES, shown)
    except OutputError as exc:
        return [f"protocol {exc}".replace(f"protocol {shown}: not found", f"protocol {shown} is missing")]
    if hashlib.sha256(data).hexdigest() != recorded:
        return [f"protocol {shown} differs from the SHA-256 recorded in results.json"]
    return []


def _study_text(path: Path) -> str:
    try:
        return _read_small(path, MAX_JSON_BYTES, str(path)).decode("utf-8-sig")
    except (OutputError, UnicodeDecodeError):
        return ""


def verify(folder: Path, study: str | None = None) -> list:
    """Differences between an output folder and what it recorded; empty if intact."""
    folder = Path(folder)
    try:
        if not folder.is_dir():
            raise OutputError(f"{folder}: is not a folder", path=folder)
        problems = _check_outputs(folder, read_manifest(folder))
        if study is not None:
            problems += _check_inputs(folder, study)
    except OSError as exc:
        if isinstance(exc, OutputError):
            raise
        where = exc.filename or folder
        raise OutputError(f"{where}: cannot be read ({exc.strerror or exc})", path=where) from None
    return problems
