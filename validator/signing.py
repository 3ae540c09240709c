"""Signed output folders: ``validator keygen``, ``validator sign`` and the signature check of ``verify``.

An output folder is covered in two steps. ``manifest.json`` lists the SHA-256
of every other file in the folder (:mod:`validator.inputs.integrity`); the signature
file ``signature.json`` holds an Ed25519 signature (RFC 8032, through the
``cryptography`` library) over a small statement that names the manifest's
SHA-256, the signing key's fingerprint, who signed (operator and host) and
when (UTC). Any change to a listed file changes its hash, hence the manifest
or its agreement with the folder; any change to the manifest changes its hash,
hence the signed statement. ``signature.json`` is the one file a manifest
does not list.

The key fingerprint is the SHA-256 (hex) of the 32-byte raw public key.

Design choices (each refusal is an :class:`~validator.errors.OutputError`, exit 2):

- keygen writes the private key (PKCS#8 PEM, not encrypted: protect it as a
  password file, mode 0600) and ``KEYFILE.pub`` (SubjectPublicKeyInfo PEM);
  it refuses if either file exists.
- sign refuses a folder that does not verify, and a folder that already holds
  ``signature.json``: one signature per folder, never replaced. A second
  signer signs a copy, or the output is run again.
- the signature file is written to a temporary name inside the folder and
  hard-linked into place (``os.link`` fails if the name exists, so nothing is
  ever overwritten), then the temporary name is removed. Nothing else in the
  folder is touched.

What a check proves is stated by :func:`what_it_proves`.
"""

from __future__ import annotations

import base64
import getpass
import hashlib
import json
import os
import secrets
import socket
import stat
from dataclasses import dataclass
from pathlib import Path

from .errors import OutputError
from .inputs.integrity import SIGNATURE

__all__ = ["SIGNATURE", "keygen", "sign", "check_signature", "SignatureCheck", "fingerprint",
           "operator_and_host", "what_it_proves"]

FORMAT = "validator-signature-1"
MAX_KEY_BYTES = 16 << 10


def operator_and_host() -> dict:
    """Who runs validator, and where: the login name (``getpass.getuser``) and the host name.

    ``VALIDATOR_OPERATOR`` overrides the login name (for a shared service account,
    set it to the person's name). ``None`` when the system cannot tell.
    """
    operator = os.environ.get("VALIDATOR_OPERATOR")
    if not operator:
        try:
            operator = getpass.getuser()
        except (OSError, KeyError, ImportError):
            operator = None
    try:
        host = socket.gethostname() or None
    except OSError:
        host = None
    return {"operator": operator, "host": host}


def _raw_public(public_key) -> bytes:
    from cryptography.hazmat.primitives import serialization

    return public_key.public_bytes(serialization.Encoding.Raw, serialization.PublicFormat.Raw)


def fingerprint(public_key) -> str:
    """SHA-256 (hex) of the raw 32-byte Ed25519 public key."""
    return hashlib.sha256(_raw_public(public_key)).hexdigest()


def _create_exclusive(path: Path, data: bytes, mode: int) -> None:
    fd = os.open(path, os.O_WRONLY | os.O_CREAT | os.O_EXCL | os.O_NOFOLLOW | os.O_CLOEXEC, mode)
    try:
        os.fchmod(fd, mode)                 # the umask may have removed bits; never added any
        with os.fdopen(fd, "wb") as fh:
            fd = None
            fh.write(data)
            fh.flush()
            os.fsync(fh.fileno())
    finally:
        if fd is not None:
            os.close(fd)


def keygen(keyfile: str) -> str:
    """Write a new Ed25519 key pair: ``keyfile`` (private, mode 0600) and ``keyfile.pub``; its fingerprint."""
    from cryptography.hazmat.primitives import serialization
    from cryptography.hazmat.primitives.asymmetric.ed25519 import Ed25519PrivateKey

    private_path, public_path = Path(keyfile), Path(keyfile + ".pub")
    for p in (private_path, public_path):
        if os.path.lexists(p):
            raise OutputError(f"{p}: already exists; keygen never overwrites a file", path=p)
    if not private_path.parent.is_dir():
        raise OutputError(f"{private_path.parent}: no such folder", path=private_path.parent)
    key = Ed25519PrivateKey.generate()
    private_pem = key.private_bytes(serialization.Encoding.PEM, serialization.PrivateFormat.PKCS8,
                                    serialization.NoEncryption())
    public_pem = key.public_key().public_bytes(serialization.Encoding.PEM,
                                               serialization.PublicFormat.SubjectPublicKeyInfo)
    try:
        _create_exclusive(private_path, private_pem, 0o600)
        try:
            _create_exclusive(public_path, public_pem, 0o644)
        except BaseException:
            os.unlink(private_path)
            raise
    except FileExistsError as exc:
        raise OutputError(f"{exc.filename}: already exists; keygen never overwrites a file",
                          path=exc.filename) from None
    except OSError as exc:
        raise OutputError(f"{exc.filename or keyfile}: cannot be written ({exc.strerror})",
                          path=exc.filename or keyfile) from None
    return fingerprint(key.public_key())


def _read_key_file(path: str, what: str) -> bytes:
    from .inputs.integrity import _read_small

    return _read_small(Path(path), MAX_KEY_BYTES, f"{path} ({what})")


def load_private_key(path: str):
    from cryptography.hazmat.primitives import serialization
    from cryptography.hazmat.primitives.asymmetric.ed25519 import Ed25519PrivateKey

    data = _read_key_file(path, "private key")
    mode = os.stat(path).st_mode
    if mode & 0o077:
        raise OutputError(f"{path}: the private key can be read or changed by other users (mode "
                          f"{stat.S_IMODE(mode):04o}); restrict it with `chmod 600 {path}` and, if others may have "
                          "copied it, make a new key pair", path=path)
    try:
        key = serialization.load_pem_private_key(data, password=None)
    except (ValueError, TypeError) as exc:
        raise OutputError(f"{path}: is not an unencrypted PEM private key ({exc})", path=path) from None
    if not isinstance(key, Ed25519PrivateKey):
        raise OutputError(f"{path}: is a {type(key).__name__}, not an Ed25519 private key", path=path)
    return key


def load_public_key(path: str):
    from cryptography.hazmat.primitives import serialization
    from cryptography.hazmat.primitives.asymmetric.ed25519 import Ed25519PublicKey

    data = _read_key_file(path, "public key")
    try:
        key = serialization.load_pem_public_key(data)
    except (ValueError, TypeError) as exc:
        raise OutputError(f"{path}: is not a PEM public key ({exc})", path=path) from None
    if not isinstance(key, Ed25519PublicKey):
        raise OutputError(f"{path}: is a {type(key).__name__}, not an Ed25519 public key", path=path)
    return key


def _statement_bytes(statement: dict) -> bytes:
    """The exact bytes signed: canonical JSON (sorted keys, no spaces, UTF-8)."""
    return json.dumps(statement, sort_keys=True, separators=(",", ":"), ensure_ascii=False).encode("utf-8")


def sign(folder: str, keyfile: str, *, signed_at: str) -> dict:
    """Sign an intact output folder; returns the statement signed. Refuses a changed or signed folder."""
    from .inputs.integrity import MANIFEST, sha256_file, verify

    path = Path(folder)
    key = load_private_key(keyfile)
    if os.path.lexists(path / SIGNATURE):
        raise OutputError(f"{path / SIGNATURE}: the folder is already signed; a signature is never "
                          "replaced (sign a copy of the folder to add another)", path=path / SIGNATURE)
    problems = verify(path)
    if problems:
        raise OutputError(f"{folder}: does not verify, not signed: {problems[0]}"
                          + (f" (and {len(problems) - 1} more)" if len(problems) > 1 else ""), path=path)
    public = key.public_key()
    statement = {
        "format": FORMAT,
        "algorithm": "Ed25519",
        "manifest_sha256": sha256_file(path / MANIFEST),
        "public_key": base64.b64encode(_raw_public(public)).decode("ascii"),
        "key_fingerprint": fingerprint(public),
        "signed_at": signed_at,
        "signed_by": operator_and_host(),
    }
    doc = {"written_by": "validator", "signed": statement,
           "signature": base64.b64encode(key.sign(_statement_bytes(statement))).decode("ascii")}
    text = (json.dumps(doc, indent=2, ensure_ascii=False) + "\n").encode("utf-8")
    temporary = path / f".{SIGNATURE}.tmp-{secrets.token_hex(6)}"
    try:
        _create_exclusive(temporary, text, 0o644)
        try:
            os.link(temporary, path / SIGNATURE)    # fails if the name exists: never overwrites
        finally:
            os.unlink(temporary)
    except FileExistsError:
        raise OutputError(f"{path / SIGNATURE}: appeared while signing; not replaced",
                          path=path / SIGNATURE) from None
    except OSError as exc:
        raise OutputError(f"{exc.filename or path}: cannot be written ({exc.strerror})",
                          path=exc.filename or path) from None
    return statement


@dataclass(frozen=True)
class SignatureCheck:
    """The outcome of checking ``signature.json``.

    ``present`` False: the folder is unsigned. ``valid``: the signature checks
    against the key it names and covers the manifest now in the folder.
    ``trusted``: ``None`` when no public key was given, else whether the
    signing key is that key. ``problems`` lists what failed, in words.
    """

    present: bool
    valid: bool
    trusted: bool | None
    key_fingerprint: str | None
    signed_at: str | None
    operator: str | None
    host: str | None
    problems: tuple


def _unsigned(trusted) -> SignatureCheck:
    return SignatureCheck(False, False, trusted, None, None, None, None, ())


def check_signature(folder: str, public_key_file: str | None = None) -> SignatureCheck:
    """Check ``folder/signature.json`` against the manifest in the folder (and a trusted public key)."""
    from cryptography.exceptions import InvalidSignature
    from cryptography.hazmat.primitives.asymmetric.ed25519 import Ed25519PublicKey

    from .inputs.integrity import MANIFEST, _load_json, sha256_file

    path = Path(folder)
    trusted_key = None if public_key_file is None else load_public_key(public_key_file)
    sig_path = path / SIGNATURE
    if not os.path.lexists(sig_path):
        return _unsigned(None if trusted_key is None else False)
    shown = str(sig_path)
    doc = _load_json(sig_path, shown)
    statement = doc.get("signed") if isinstance(doc, dict) else None
    if (not isinstance(statement, dict) or not isinstance(doc.get("signature"), str)
            or statement.get("format") != FORMAT or statement.get("algorithm") != "Ed25519"):
        raise OutputError(f'{shown}: expected a validator signature ("signed" with format {FORMAT} '
                          'and algorithm Ed25519, and "signature")', path=sig_path)
    by = statement.get("signed_by") if isinstance(statement.get("signed_by"), dict) else {}
    claimed = statement.get("key_fingerprint")
    problems = []
    try:
        raw = base64.b64decode(statement.get("public_key", ""), validate=True)
        key = Ed25519PublicKey.from_public_bytes(raw)
        signature = base64.b64decode(doc["signature"], validate=True)
    except (ValueError, TypeError):
        raise OutputError(f'{shown}: "public_key" or "signature" is not base64 of an Ed25519 key '
                          "or signature", path=sig_path) from None
    actual = fingerprint(key)
    if claimed != actual:
        problems.append(f"signature: the key fingerprint recorded ({str(claimed)[:64]}) is not that "
                        f"of the key recorded ({actual})")
    try:
        key.verify(signature, _statement_bytes(statement))
        signature_ok = True
    except InvalidSignature:
        signature_ok = False
        problems.append("signature: does not match the signed statement (signature.json was altered "
                        "or not made by that key)")
    manifest_now = sha256_file(path / MANIFEST) if os.path.isfile(path / MANIFEST) else None
    if manifest_now != statement.get("manifest_sha256"):
        problems.append("signature: manifest.json differs from the manifest that was signed")
    trusted = None
    if trusted_key is not None:
        trusted = fingerprint(trusted_key) == actual
        if not trusted:
            problems.append(f"signature: made by key {actual}, not by the public key given "
                            f"({fingerprint(trusted_key)})")
    valid = signature_ok and claimed == actual and manifest_now == statement.get("manifest_sha256")
    return SignatureCheck(True, valid, trusted, actual, statement.get("signed_at"),
                          by.get("operator"), by.get("host"), tuple(problems))


def what_it_proves(check: SignatureCheck, intact: bool) -> str:
    """One plain sentence on what this verification does and does not prove."""
    if not intact and not check.present:
        return ("the folder no longer matches its own manifest; being unsigned, it carries no evidence "
                "of who wrote it")
    if not check.present:
        return ("unsigned: this shows only that the files agree with manifest.json; anyone able to edit "
                "the folder could have rewritten both, so it proves neither who produced it nor that it "
                "is unchanged since it was written")
    if not check.valid or not intact:
        return "the signed content has been changed or the signature is broken: do not rely on this record"
    if check.trusted is None:
        return (f"signed by key {check.key_fingerprint}: this proves only that whoever holds that key "
                "signed exactly this content; it does not prove who that is (give --public-key with a "
                "key you know to prove more)")
    if check.trusted:
        return (f"signed by the holder of the public key given (fingerprint {check.key_fingerprint}), "
                "and nothing in the folder has changed since it was signed")
    return "signed by a key other than the public key given: this record was not signed by that key's holder"
