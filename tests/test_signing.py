"""Signed output folders: keygen, sign, verify (--public-key); see validator/signing.py.

Expected outcomes are the documented behaviour (validator/signing.py,
README "Signing and verifying an output folder"); the signature algorithm is
Ed25519 from the ``cryptography`` library, checked here only through
validator's own commands plus one cross-check against that library.
"""

import base64
import hashlib
import json
import shutil
import stat

import pytest

from validator.cli import main


@pytest.fixture(scope="module")
def keys(tmp_path_factory):
    folder = tmp_path_factory.mktemp("keys")
    assert main(["keygen", str(folder / "lab.key")]) == 0
    assert main(["keygen", str(folder / "other.key")]) == 0
    return folder


@pytest.fixture(scope="module")
def signed(tmp_path_factory, keys):
    """An output folder of a small study, signed with lab.key."""
    folder = tmp_path_factory.mktemp("signed")
    inputs = folder / "inputs"
    inputs.mkdir()
    (inputs / "calibration.csv").write_text(
        "concentration,response\n" + "".join(f"{x},{0.01 + 2 * x + d}\n" for x, d in
                                             [(1, 0.01), (1, -0.02), (2, 0.015), (2, -0.01), (4, 0.02),
                                              (4, -0.005), (8, -0.01), (8, 0.02)]), encoding="utf-8")
    (inputs / "study.toml").write_text('[study]\nid = "S-1"\ntitle = "t"\nconcentration_unit = "mg/L"\n'
                                       'response_unit = "area"\n[calibration]\ndata = "calibration.csv"\n',
                                       encoding="utf-8")
    out = folder / "out"
    assert main(["run", str(inputs / "study.toml"), "--out", str(out), "--format", "json,html"]) in (0, 1)
    assert main(["sign", str(out), "--key", str(keys / "lab.key")]) == 0
    return inputs, out


def _copy(signed, tmp_path):
    copy = tmp_path / "copy"
    shutil.copytree(signed[1], copy)
    return copy


def _fingerprint(keys, name):
    from cryptography.hazmat.primitives import serialization

    pub = serialization.load_pem_public_key((keys / f"{name}.pub").read_bytes())
    raw = pub.public_bytes(serialization.Encoding.Raw, serialization.PublicFormat.Raw)
    return hashlib.sha256(raw).hexdigest()       # documented rule: SHA-256 of the raw public key


def test_keygen_private_key_mode_0600(keys):
    assert stat.S_IMODE((keys / "lab.key").stat().st_mode) == 0o600
    assert (keys / "lab.key.pub").read_text().startswith("-----BEGIN PUBLIC KEY-----")


def test_keygen_refuses_to_overwrite(keys, capsys):
    before = (keys / "lab.key").read_bytes()
    assert main(["keygen", str(keys / "lab.key")]) == 2
    assert "already exists" in capsys.readouterr().err
    assert (keys / "lab.key").read_bytes() == before


def test_keygen_refuses_when_only_the_public_file_exists(tmp_path, capsys):
    (tmp_path / "k.pub").write_text("mine")
    assert main(["keygen", str(tmp_path / "k")]) == 2
    assert "k.pub: already exists" in capsys.readouterr().err
    assert not (tmp_path / "k").exists() and (tmp_path / "k.pub").read_text() == "mine"


def test_signing_adds_only_the_signature_file(signed):
    _, out = signed
    names = sorted(p.name for p in out.iterdir())
    assert names == ["dossier.html", "manifest.json", "results.json", "signature.json"]
    doc = json.loads((out / "signature.json").read_text())
    assert doc["signed"]["manifest_sha256"] == hashlib.sha256((out / "manifest.json").read_bytes()).hexdigest()


def test_signature_checks_with_the_library(signed, keys):
    # cross-check: cryptography's Ed25519 verify over the documented canonical JSON statement
    from cryptography.hazmat.primitives import serialization

    doc = json.loads((signed[1] / "signature.json").read_text())
    statement = json.dumps(doc["signed"], sort_keys=True, separators=(",", ":"), ensure_ascii=False).encode()
    pub = serialization.load_pem_public_key((keys / "lab.key.pub").read_bytes())
    pub.verify(base64.b64decode(doc["signature"]), statement)       # raises if invalid
    assert doc["signed"]["key_fingerprint"] == _fingerprint(keys, "lab.key")


def test_intact_signed_folder_verifies(signed, keys, capsys):
    inputs, out = signed
    assert main(["verify", str(out), "--study", str(inputs / "study.toml"),
                 "--public-key", str(keys / "lab.key.pub")]) == 0
    text = capsys.readouterr().out
    assert f"signature by key {_fingerprint(keys, 'lab.key')}: valid" in text
    assert "is intact" in text
    assert "signed by the holder of the public key given" in text


def test_signed_by_unknown_key_says_what_it_proves(signed, keys, capsys):
    assert main(["verify", str(signed[1])]) == 0
    text = capsys.readouterr().out
    assert _fingerprint(keys, "lab.key") in text
    assert "proves only that whoever holds that key signed exactly this content" in text


@pytest.mark.parametrize("name", ["results.json", "dossier.html", "manifest.json"])
def test_one_byte_change_is_detected(signed, tmp_path, capsys, name):
    copy = _copy(signed, tmp_path)
    data = bytearray((copy / name).read_bytes())
    # in manifest.json: one hex digit of a recorded hash (a manifest that is no longer JSON is an
    # unreadable record, exit 2: test_unreadable_manifest_exits_2); elsewhere the middle byte
    i = data.index(b'"sha256": "') + 11 if name == "manifest.json" else len(data) // 2
    data[i] = ord("0") if data[i] != ord("0") else ord("1")
    (copy / name).write_bytes(bytes(data))
    assert main(["verify", str(copy)]) == 1
    text = capsys.readouterr().out
    assert name in text or "manifest.json differs from the manifest that was signed" in text
    assert "do not rely on this record" in text


def test_unreadable_manifest_exits_2(signed, tmp_path, capsys):
    copy = _copy(signed, tmp_path)
    (copy / "manifest.json").write_bytes(b"{" + (copy / "manifest.json").read_bytes())
    assert main(["verify", str(copy)]) == 2
    assert "manifest.json: is not valid JSON" in capsys.readouterr().err


def test_one_byte_change_in_signature_file_is_detected(signed, tmp_path, capsys):
    copy = _copy(signed, tmp_path)
    doc = json.loads((copy / "signature.json").read_text())
    doc["signed"]["signed_at"] = "2000-01-01T00:00:00Z"
    (copy / "signature.json").write_text(json.dumps(doc))
    assert main(["verify", str(copy)]) == 1
    assert "signature: does not match the signed statement" in capsys.readouterr().out


def test_added_file_is_detected(signed, tmp_path, capsys):
    copy = _copy(signed, tmp_path)
    (copy / "extra.txt").write_text("x")
    assert main(["verify", str(copy)]) == 1
    assert "output extra.txt is not in the manifest" in capsys.readouterr().out


def test_removed_file_is_detected(signed, tmp_path, capsys):
    copy = _copy(signed, tmp_path)
    (copy / "dossier.html").unlink()
    assert main(["verify", str(copy)]) == 1
    assert "output dossier.html is missing" in capsys.readouterr().out


def test_rewritten_manifest_is_detected(signed, tmp_path, capsys):
    # edit results.json and rewrite the manifest with correct hashes: the folder is internally
    # consistent again, but the manifest is not the one that was signed
    from validator.inputs.integrity import write_manifest

    copy = _copy(signed, tmp_path)
    doc = json.loads((copy / "results.json").read_text())
    doc["verdict"] = "pass" if doc["verdict"] == "fail" else "fail"
    (copy / "results.json").write_text(json.dumps(doc))
    write_manifest(copy)
    assert "signature.json" not in (copy / "manifest.json").read_text()
    assert main(["verify", str(copy)]) == 1
    text = capsys.readouterr().out
    assert "CHANGED" not in text                    # hashes agree with the rewritten manifest
    assert "SIGNATURE: signature: manifest.json differs from the manifest that was signed" in text


def test_signature_from_another_key_is_detected(signed, keys, tmp_path, capsys):
    # re-signed by someone else after tampering: valid signature, wrong key
    from validator.inputs.integrity import write_manifest

    copy = _copy(signed, tmp_path)
    (copy / "signature.json").unlink()
    (copy / "results.json").write_text((copy / "results.json").read_text().replace('"S-1"', '"S-2"'))
    write_manifest(copy)
    assert main(["sign", str(copy), "--key", str(keys / "other.key")]) == 0
    capsys.readouterr()
    assert main(["verify", str(copy), "--public-key", str(keys / "lab.key.pub")]) == 1
    text = capsys.readouterr().out
    assert f"made by key {_fingerprint(keys, 'other.key')}, not by the public key given" in text


def test_unsigned_folder_states_what_it_proves(signed, tmp_path, capsys):
    copy = _copy(signed, tmp_path)
    (copy / "signature.json").unlink()
    assert main(["verify", str(copy)]) == 0
    text = capsys.readouterr().out
    assert "is intact" in text
    assert "unsigned: this shows only that the files agree with manifest.json" in text


def test_unsigned_folder_with_public_key_fails(signed, keys, tmp_path, capsys):
    copy = _copy(signed, tmp_path)
    (copy / "signature.json").unlink()
    assert main(["verify", str(copy), "--public-key", str(keys / "lab.key.pub")]) == 1
    assert "the folder is not signed" in capsys.readouterr().out


def test_second_signature_is_refused(signed, keys, capsys):
    _, out = signed
    before = (out / "signature.json").read_bytes()
    assert main(["sign", str(out), "--key", str(keys / "other.key")]) == 2
    assert "already signed" in capsys.readouterr().err
    assert (out / "signature.json").read_bytes() == before
    assert sorted(p.name for p in out.iterdir()) == ["dossier.html", "manifest.json", "results.json",
                                                     "signature.json"]


def test_signing_a_changed_folder_is_refused(signed, keys, tmp_path, capsys):
    copy = _copy(signed, tmp_path)
    (copy / "signature.json").unlink()
    (copy / "extra.txt").write_text("x")
    assert main(["sign", str(copy), "--key", str(keys / "lab.key")]) == 2
    assert "does not verify, not signed: output extra.txt is not in the manifest" in capsys.readouterr().err
    assert not (copy / "signature.json").exists()


def test_signature_records_who_and_when(signed, tmp_path, keys, monkeypatch):
    monkeypatch.setenv("SOURCE_DATE_EPOCH", "1780000000")
    monkeypatch.setenv("VALIDATOR_OPERATOR", "A. Analyst")
    copy = _copy(signed, tmp_path)
    (copy / "signature.json").unlink()
    assert main(["sign", str(copy), "--key", str(keys / "lab.key")]) == 0
    signed_statement = json.loads((copy / "signature.json").read_text())["signed"]
    assert signed_statement["signed_at"] == "2026-05-28T20:26:40Z"   # hand computation: 1780000000 s after 1970
    assert signed_statement["signed_by"]["operator"] == "A. Analyst"
    assert signed_statement["signed_by"]["host"]


def test_results_record_operator_and_host(signed):
    run = json.loads((signed[1] / "results.json").read_text())["run"]
    assert set(run) == {"operator", "host"} and run["host"]


def test_run_force_does_not_replace_a_signed_output(signed, tmp_path, capsys):
    # a signed record is never replaced, not even with --force (common practice for electronic records,
    # no published source); the message says so
    inputs, _ = signed
    copy = _copy(signed, tmp_path)
    before = {p.name: p.read_bytes() for p in copy.iterdir()}
    assert main(["run", str(inputs / "study.toml"), "--out", str(copy), "--format", "json", "--force"]) == 2
    assert capsys.readouterr().err == (
        f"validator: error: {copy}: holds a signed output (signature.json); a signed record is never replaced, "
        "not even with --force; choose another --out\n")
    assert {p.name: p.read_bytes() for p in copy.iterdir()} == before


@pytest.mark.parametrize("spoil", ["not json", "link", '{"signed": {}, "signature": "x"}'])
def test_a_broken_signature_file_is_reported_as_a_changed_record(signed, tmp_path, capsys, spoil):
    # second hostile pass: a signature.json that is not ours gave exit 2 and no report; it is a broken
    # record: exit 1, named, with the rest of the report
    copy = _copy(signed, tmp_path)
    sig = copy / "signature.json"
    sig.unlink()
    if spoil == "link":
        sig.symlink_to(copy / "results.json")
    else:
        sig.write_text(spoil)
    code = main(["verify", str(copy)])
    out = capsys.readouterr().out
    assert code == 1
    assert "validator: SIGNATURE: signature.json is not a readable validator signature" in out
    assert "do not rely on this record" in out


@pytest.mark.parametrize("mode", [0o640, 0o604, 0o660])
def test_a_private_key_others_can_read_is_refused(signed, keys, tmp_path, capsys, mode):
    """A signature means "the holder of this key"; a key others can read means nothing.
    # common practice, no published source: OpenSSH refuses private keys with group/other access
    """
    copy = _copy(signed, tmp_path)
    (copy / "signature.json").unlink()
    key = tmp_path / "loose.key"
    shutil.copyfile(keys / "lab.key", key)
    key.chmod(mode)
    assert main(["sign", str(copy), "--key", str(key)]) == 2
    err = capsys.readouterr().err
    assert f"mode {mode:04o}" in err and "chmod 600" in err
    assert not (copy / "signature.json").exists()
