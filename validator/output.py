"""Where ``validator run`` may write, and how its output folder is put in place.

Rules (each refusal is an :class:`~validator.errors.OutputError`, exit code 2):

- ``--out`` must not be a symbolic link; it must not be, contain or lie inside
  the folder of any input (the study file and every file it names); it must
  not be or contain the current folder, the home folder, ``/`` or another
  system folder, and must not lie inside a folder of the operating system
  (``/usr``, ``/etc``, ...). Its parent folder must already exist: nothing is
  created outside the output folder except the transient files below.
- An existing ``--out`` is replaced only with ``--force``, and only when it is
  a previous validator output: a folder holding a ``manifest.json`` written by
  validator and nothing but the regular files that manifest lists.
- A run holds an exclusive lock (``fcntl.flock`` on ``.NAME.lock`` beside the
  output) while it writes; a second run into the same place exits 2. The
  existence rules are checked again under the lock just before the swap.
- The new output is written into ``.NAME.partial-XXXX`` beside the output
  (marked as ours by a manifest from the start), then swapped in: with
  ``renameat2(RENAME_EXCHANGE)`` where the kernel offers it, so that the path
  always holds the complete old or the complete new output; otherwise by
  renaming the old output aside (``.NAME.old-XXXX``) and the new one into
  place. The replaced output is then deleted.
- Partial and aside folders left by a killed run are removed by the next run
  into the same place (only folders with our name pattern and our manifest);
  an aside folder whose output is missing is renamed back into place.

Test hook: if the environment variable ``VALIDATOR_TEST_PAUSE_IN_SWAP`` holds a
number of seconds (``SECONDS``, or ``STEP:SECONDS`` for one step only; steps
``before-swap``, ``aside``, ``after-swap``), the swap prints
``validator-test-hook: pause STEP`` on stderr and sleeps that long there, so
that tests can kill the process at that point. It is read nowhere else and has
no other effect.
"""

from __future__ import annotations

import ctypes
import errno
import fcntl
import os
import re
import secrets
import shutil
import sys
import tempfile
import time
from contextlib import contextmanager
from pathlib import Path

from .errors import OutputError, show
from .inputs.integrity import MANIFEST, SIGNATURE, WRITTEN_BY, read_manifest, sha256_file, start_manifest

__all__ = ["check_target", "check_existing", "write_output_folder", "remove_own_folder"]

# folders of the operating system: --out may be neither one of them nor inside one
SYSTEM_TREES = ("/bin", "/boot", "/dev", "/etc", "/lib", "/lib32", "/lib64", "/libx32", "/proc",
                "/sbin", "/sys", "/usr")
# folders --out may be inside, but may neither be nor contain
SYSTEM_FOLDERS = ("/", "/home", "/media", "/mnt", "/opt", "/root", "/run", "/srv", "/tmp", "/var",
                  "/var/tmp")
_OWN_FOLDER = re.compile(r"\.(?P<name>.+)\.(?P<kind>partial|old)-[A-Za-z0-9_]+")


def _inside(path: Path, folder: Path) -> bool:
    """``path`` lies strictly inside ``folder`` (both absolute and resolved)."""
    return path != folder and folder in path.parents


def _variants(folder: str) -> set:
    p = Path(folder)
    return {p, p.resolve()}


def _home() -> Path | None:
    try:
        return Path.home().resolve()
    except (RuntimeError, KeyError):
        return None


def check_target(out: str, input_files, *, cwd: Path | None = None) -> Path:
    """The absolute output folder for ``--out``, or :class:`OutputError` if it may not be used.

    ``input_files`` are the paths of every input (study file and data files), as given or
    resolved; the folder holding each (and, for a link, the folder of its target) is protected.
    """
    if not str(out).strip():
        raise OutputError("--out is empty; name the output folder", path=str(out))
    if str(out).startswith("~"):
        raise OutputError(f'{show(str(out))}: "~" is not expanded by validator (it would make a folder named "~"); '
                          "give the folder's full path", path=str(out))
    try:
        return _check_target(str(out), input_files, cwd)
    except (OSError, RuntimeError) as exc:      # a link loop, a name too long, no permission ...
        if isinstance(exc, OutputError):
            raise
        reason = exc.strerror if isinstance(exc, OSError) and exc.strerror else str(exc)
        raise OutputError(f"{out}: cannot be used as the output folder ({reason})", path=out) from None


def _input_folders(input_files) -> dict:
    folders = {}
    for f in input_files:
        for folder in (Path(os.path.abspath(f)).parent.resolve(), Path(f).resolve().parent):
            folders.setdefault(folder, f)
    return folders


def _check_target(shown: str, input_files, cwd: Path | None) -> Path:
    given = Path(shown)
    if given.is_symlink():
        raise OutputError(f"{shown}: is a symbolic link; give the real folder as --out", path=shown)
    target = given.resolve()
    cwd = Path.cwd().resolve() if cwd is None else cwd.resolve()
    home = _home()
    for folder in SYSTEM_FOLDERS + SYSTEM_TREES + ((str(home),) if home else ()):
        for s in _variants(folder):
            if target == s or _inside(s, target):
                what = "the home folder" if home and s == home else f"the system folder {folder}"
                raise OutputError(f"{shown}: {target} is or contains {what}; choose another --out",
                                  path=shown)
    for tree in SYSTEM_TREES:
        for s in _variants(tree):
            if _inside(target, s):
                raise OutputError(f"{shown}: {target} lies inside the system folder {tree}; "
                                  "choose another --out", path=shown)
    if target == cwd or _inside(cwd, target):
        raise OutputError(f"{shown}: {target} is or contains the current folder; "
                          "choose another --out", path=shown)
    for folder, f in _input_folders(input_files).items():
        if target == folder or _inside(folder, target) or _inside(target, folder):
            relation = ("is" if target == folder else "contains" if _inside(folder, target)
                        else "lies inside")
            raise OutputError(f"{shown}: {target} {relation} the folder of the input {f}; "
                              "outputs and inputs are kept apart, choose another --out", path=shown)
    if not target.parent.is_dir():
        raise OutputError(f"{shown}: the folder {target.parent} does not exist; create it first",
                          path=shown)
    return target


# the only files validator itself writes into an output folder
OUTPUT_NAMES = frozenset({"results.json", "dossier.html", "dossier.pdf", "qualification.json",
                          "qualification.html", "qualification.pdf", "protocol.json", "protocol.html",
                          "protocol.pdf", MANIFEST})


def _foreign_file(folder: Path, listed=OUTPUT_NAMES) -> str | None:
    """The first entry of ``folder`` that is not a regular file named in ``listed``, if any."""
    with os.scandir(folder) as it:
        for d in sorted(it, key=lambda d: d.name):
            if d.name not in listed or not d.is_file(follow_symlinks=False):
                return d.name
    return None


def _not_previous_output(folder: Path) -> str | None:
    """Why ``folder`` is not an unchanged previous validator output, or ``None`` if it is one.

    Every file must be one validator writes, listed in the manifest with the
    size and SHA-256 it has now: a folder whose files were edited, or whose
    manifest only looks like ours, is never replaced.
    """
    try:
        manifest = read_manifest(folder)
    except OutputError:
        return f"holds no readable {MANIFEST} written by validator"
    if manifest.written_by != WRITTEN_BY and not manifest.legacy_shape:
        return f"its {MANIFEST} was not written by validator"
    listed = {e.file for e in manifest.entries if e.file in OUTPUT_NAMES} | {MANIFEST}
    foreign = _foreign_file(folder, listed)
    if foreign is not None:
        return f'holds "{show(foreign)}", which validator did not write'
    for e in manifest.entries:
        p = folder / e.file
        if not p.is_file():
            return f'its file "{show(e.file)}" is missing'
        if p.stat().st_size != e.bytes or sha256_file(p) != e.sha256:
            return f'its file "{show(e.file)}" has changed since validator wrote it'
    return None


def check_existing(target: Path, shown: str, force: bool) -> None:
    """Refuse an existing ``--out`` unless ``force`` and it is a previous validator output."""
    if target.is_symlink():
        raise OutputError(f"{shown}: is a symbolic link; give the real folder as --out", path=shown)
    if not os.path.lexists(target):
        return
    if not target.is_dir():
        raise OutputError(f"{shown}: exists and is not a folder", path=shown)
    if not force:
        raise OutputError(f"{shown}: output folder exists; choose another --out or add --force",
                          path=shown)
    if os.path.lexists(target / SIGNATURE):
        raise OutputError(f"{shown}: holds a signed output ({SIGNATURE}); a signed record is never replaced, "
                          "not even with --force; choose another --out", path=shown)
    if os.path.lexists(target / "protocol.json"):
        raise OutputError(f"{shown}: holds a protocol (protocol.json); a protocol is never replaced, not even "
                          "with --force; choose another --out", path=shown)
    why = _not_previous_output(target)
    if why:
        raise OutputError(f"{shown}: {why}; --force replaces only a previous validator output",
                          path=shown)


def _ours(folder: Path) -> bool:
    """An empty folder, or one whose manifest validator wrote (older manifests included) and
    that holds nothing but files validator writes: a partial or aside folder is deleted only then."""
    try:
        if not any(folder.iterdir()):
            return True
        manifest = read_manifest(folder)
        if _foreign_file(folder) is not None:
            return False
    except (OSError, OutputError):
        return False
    return manifest.written_by == WRITTEN_BY or manifest.legacy_shape


def remove_own_folder(path: Path) -> None:
    """Delete a partial or aside folder this module made; anything else is refused (a bug)."""
    path = Path(path)
    if (not _OWN_FOLDER.fullmatch(path.name) or path.is_symlink() or not path.is_dir()
            or not _ours(path)):
        raise RuntimeError(f"refusing to delete {path}: not a partial or aside folder of validator")
    shutil.rmtree(path)


# --- renameat2 ------------------------------------------------------------------------------

_RENAME_NOREPLACE, _RENAME_EXCHANGE, _AT_FDCWD = 1, 2, -100


def _renameat2_function():
    try:
        fn = ctypes.CDLL(None, use_errno=True).renameat2
    except (OSError, AttributeError):
        return None
    fn.argtypes = [ctypes.c_int, ctypes.c_char_p, ctypes.c_int, ctypes.c_char_p, ctypes.c_uint]
    fn.restype = ctypes.c_int
    return fn


def _renameat2(src: Path, dst: Path, flags: int) -> bool:
    """True if done; False if this system cannot do it (the caller falls back)."""
    fn = _renameat2_function() if sys.platform.startswith("linux") else None
    if fn is None:
        return False
    if fn(_AT_FDCWD, os.fsencode(src), _AT_FDCWD, os.fsencode(dst), flags) == 0:
        return True
    err = ctypes.get_errno()
    if err in (errno.ENOSYS, errno.EINVAL, errno.ENOTSUP, errno.EOPNOTSUPP):
        return False
    raise OSError(err, os.strerror(err), str(dst))


def _pause(step: str) -> None:
    hook = os.environ.get("VALIDATOR_TEST_PAUSE_IN_SWAP")          # test hook, see module docstring
    if hook:
        only, _, seconds = hook.rpartition(":")
        if only in ("", step):
            print(f"validator-test-hook: pause {step}", file=sys.stderr, flush=True)
            time.sleep(float(seconds))


def _swap(new: Path, target: Path, shown: str) -> None:
    """Put ``new`` at ``target``; afterwards ``new`` holds the replaced output, if any."""
    _pause("before-swap")
    if not os.path.lexists(target):
        if not _renameat2(new, target, _RENAME_NOREPLACE):
            if os.path.lexists(target):
                raise FileExistsError(errno.EEXIST, os.strerror(errno.EEXIST), str(target))
            os.rename(new, target)
        _pause("after-swap")
        return
    if _renameat2(new, target, _RENAME_EXCHANGE):
        _pause("after-swap")
        return
    aside = target.parent / f".{target.name}.old-{secrets.token_hex(4)}"
    os.rename(target, aside)
    _pause("aside")
    os.rename(new, target)
    _pause("after-swap")
    os.rename(aside, new)          # the caller deletes the replaced output from ``new``


# --- lock and stale folders -------------------------------------------------------------------

@contextmanager
def _lock(target: Path, shown: str):
    path = target.parent / f".{target.name}.lock"
    busy = OutputError(f"{shown}: another validator run is writing this output folder; "
                       "try again when it has finished", path=shown)
    try:
        fd = os.open(path, os.O_RDWR | os.O_CREAT | os.O_NOFOLLOW | os.O_CLOEXEC, 0o600)
    except OSError as exc:
        raise OutputError(f"{path}: cannot create the lock file ({exc.strerror})", path=path) from None
    try:
        try:
            fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
        except BlockingIOError:
            raise busy from None
        try:   # the lock file we hold must still be the one at the path (not unlinked by its owner)
            now = os.stat(path, follow_symlinks=False)
        except FileNotFoundError:
            raise busy from None
        held = os.fstat(fd)
        if (now.st_dev, now.st_ino) != (held.st_dev, held.st_ino):
            raise busy
        try:
            yield
        finally:
            try:
                os.unlink(path)
            except OSError:
                pass
    finally:
        os.close(fd)


def _clear_stale(target: Path) -> None:
    """Remove our partial and aside folders left by killed runs; restore an orphaned aside."""
    with os.scandir(target.parent) as it:
        stale = sorted((d for d in it if d.is_dir(follow_symlinks=False)), key=lambda d: d.name)
    for d in stale:
        m = _OWN_FOLDER.fullmatch(d.name)
        if not m or m["name"] != target.name or not _ours(Path(d.path)):
            continue
        if m["kind"] == "old" and not os.path.lexists(target) and (Path(d.path) / MANIFEST).is_file():
            os.rename(d.path, target)       # killed between the two renames: put the old one back
            continue
        remove_own_folder(Path(d.path))


def _os_reason(exc: OSError, fallback: Path) -> OutputError:
    where = exc.filename or fallback
    return OutputError(f"{where}: cannot write the output ({exc.strerror or exc})", path=where)


def write_output_folder(target: Path, shown: str, force: bool, write) -> None:
    """Call ``write(folder)`` on a fresh partial folder and put it at ``target``.

    ``target`` comes from :func:`check_target`. On any failure the partial
    folder is removed and ``target`` is as before.
    """
    with _lock(target, shown):
        try:
            _clear_stale(target)
        except OSError as exc:
            raise _os_reason(exc, target.parent) from None
        check_existing(target, shown, force)
        try:
            new = Path(tempfile.mkdtemp(prefix=f".{target.name}.partial-", dir=target.parent))
        except OSError as exc:
            raise OutputError(f"{target.parent}: cannot create the output folder there "
                              f"({exc.strerror})", path=target.parent) from None
        try:
            try:
                umask = os.umask(0)
                os.umask(umask)
                new.chmod(0o777 & ~umask)   # mkdtemp makes 0700; give the usual folder mode
                start_manifest(new)
                write(new)
            except OSError as exc:
                if isinstance(exc, OutputError):
                    raise
                raise _os_reason(exc, new) from None
            check_existing(target, shown, force)      # again, under the lock, just before the swap
            try:
                _swap(new, target, shown)
            except FileExistsError:
                raise OutputError(f"{shown}: appeared while this run was writing; nothing replaced",
                                  path=shown) from None
            except OSError as exc:
                raise _os_reason(exc, target) from None
        finally:
            if os.path.lexists(new):
                try:
                    remove_own_folder(new)
                except OSError:
                    pass          # left for the next run into this place to remove
