"""Signed approval of a sheet document: who approved which sheet, with which bound, and when (Ed25519).

A fingerprint shows that a document changed, not who approved it: anyone who edits a sheet can recompute its
SHA-256. An approval is an Ed25519 signature, made with the approver's private key, over

    "scorecard sheet approval 1\n" + canonical JSON of {sheet, bound, name, approved_at, public_key}

where `sheet` is the SHA-256 of the canonical sheet without its `fingerprint` and `approval` blocks and `bound`
is the bound block the approver approved. It is stored in the sheet as `approval`; the sheet's `fingerprint`
then covers it too. Only someone holding the private key can make an approval that the matching public key
accepts, so `--approved-by approver.pub` on check, verify and score proves the sheet is the one that key
approved, unchanged (docs/audit.md says what it does not prove).
"""

from __future__ import annotations

import base64
import binascii
import hashlib
import os
import re
from datetime import datetime, timezone
from pathlib import Path

from cryptography.exceptions import InvalidSignature, UnsupportedAlgorithm
from cryptography.hazmat.primitives import serialization
from cryptography.hazmat.primitives.asymmetric.ed25519 import Ed25519PrivateKey, Ed25519PublicKey

from scorecard.errors import CheckFailed, UserError
from scorecard.jsondoc import canonical_bytes, fingerprint, read_input_bytes

SIGNED_PREFIX = b"scorecard sheet approval 1\n"
KEY_FINGERPRINT_LENGTH = 16
SIGNATURE_SHORT_LENGTH = 12
_NAME = re.compile(r"^[^\x00-\x1f\x7f]{1,120}$")


def content_fingerprint(sheet: dict) -> str:
    """SHA-256 of the canonical sheet without its `fingerprint` and `approval`: what an approval is of."""
    return fingerprint(sheet, exclude=("fingerprint", "approval"))


def key_fingerprint(public_raw: bytes) -> str:
    """The short name of a public key: the first 16 hex of SHA-256 of its 32 raw bytes."""
    return hashlib.sha256(public_raw).hexdigest()[:KEY_FINGERPRINT_LENGTH]


def signature_short(approval: dict) -> str:
    """What the printed sheet shows of a signature: the first 12 hex of SHA-256 of its 64 bytes."""
    return hashlib.sha256(_b64(approval.get("signature", ""), "approval.signature")).hexdigest()[:SIGNATURE_SHORT_LENGTH]


def _message(sheet: dict, approval: dict) -> bytes:
    body = {"sheet": content_fingerprint(sheet), "bound": approval["bound"], "name": approval["name"],
            "approved_at": approval["approved_at"], "public_key": approval["public_key"]}
    return SIGNED_PREFIX + canonical_bytes(body)


def sign_sheet(sheet: dict, private_key: Ed25519PrivateKey, name: str, now: datetime | None = None) -> dict:
    """The sheet with an `approval` block signed by `private_key` (any earlier approval replaced)."""
    name = " ".join(str(name).split())
    if not _NAME.match(name):
        raise UserError("--name: give the approver's name as printed on the sheet (1-120 characters, no control characters)")
    stamp = (now or datetime.now(timezone.utc)).astimezone(timezone.utc).replace(microsecond=0)
    public_raw = private_key.public_key().public_bytes(serialization.Encoding.Raw, serialization.PublicFormat.Raw)
    signed = {k: v for k, v in sheet.items() if k not in ("fingerprint", "approval")}
    approval = {
        "name": name,
        "approved_at": stamp.strftime("%Y-%m-%dT%H:%M:%SZ"),
        "public_key": base64.b64encode(public_raw).decode("ascii"),
        "key_fingerprint": key_fingerprint(public_raw),
        "bound": signed["bound"],
        "algorithm": "Ed25519",
    }
    approval["signature"] = base64.b64encode(private_key.sign(_message(signed, approval))).decode("ascii")
    return {**signed, "approval": approval}


def check_approval(sheet: dict, public_key: Ed25519PublicKey, sheet_source: str, key_source: str) -> dict:
    """The sheet's approval when `public_key` made it over this very sheet and bound; CheckFailed (exit 3)
    naming what is wrong otherwise."""
    approval = sheet.get("approval")
    if not approval:
        raise CheckFailed(f"{sheet_source}: the sheet carries no approval; it was not approved with `scorecard approve` "
                          f"(the key {key_source} approves only sheets it signed)")
    given_raw = public_key.public_bytes(serialization.Encoding.Raw, serialization.PublicFormat.Raw)
    try:
        stated_raw = _b64(approval["public_key"], "approval.public_key")
        signature = _b64(approval["signature"], "approval.signature")
    except UserError as exc:
        raise CheckFailed(f"{sheet_source}: {exc}; the approval is damaged") from None
    if stated_raw != given_raw:
        raise CheckFailed(f"{sheet_source}: approved by key {approval.get('key_fingerprint', '?')} ({approval.get('name', '?')}), "
                          f"not by {key_source} (key {key_fingerprint(given_raw)})")
    if approval.get("bound") != sheet.get("bound"):
        raise CheckFailed(f"{sheet_source}: the sheet's bound differs from the bound its approval signed; do not use this sheet")
    try:
        public_key.verify(signature, _message(sheet, approval))
    except InvalidSignature:
        raise CheckFailed(f"{sheet_source}: the approval's signature does not match this sheet (the sheet, its bound, "
                          f"the approver's name or the date changed after approval); do not use this sheet") from None
    return approval


def _b64(text, field: str) -> bytes:
    if not isinstance(text, str):
        raise UserError(f"{field}: expected base64 text")
    try:
        return base64.b64decode(text, validate=True)
    except (binascii.Error, ValueError):
        raise UserError(f"{field}: is not valid base64") from None


# -- key files -------------------------------------------------------------------------------------------


def new_private_key() -> Ed25519PrivateKey:
    return Ed25519PrivateKey.generate()


def private_key_bytes(key: Ed25519PrivateKey) -> bytes:
    return key.private_bytes(serialization.Encoding.PEM, serialization.PrivateFormat.PKCS8, serialization.NoEncryption())


def public_key_bytes(key: Ed25519PublicKey) -> bytes:
    return key.public_bytes(serialization.Encoding.PEM, serialization.PublicFormat.SubjectPublicKeyInfo)


def write_private_key(path: Path, key: Ed25519PrivateKey) -> None:
    """Create `path` readable by its owner only (0600) and never replace an existing file: a key is not
    overwritten by accident."""
    try:
        fd = os.open(path, os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o600)
    except FileExistsError:
        raise UserError(f"{path}: already exists; a key file is never overwritten (choose another -o name)") from None
    except OSError as exc:
        raise UserError(f"{path}: cannot create ({exc.strerror}); check the folder") from None
    try:
        os.fchmod(fd, 0o600)
        with os.fdopen(fd, "wb") as handle:
            handle.write(private_key_bytes(key))
    except BaseException:
        path.unlink(missing_ok=True)
        raise


def _read_key_file(path: str | Path, what: str) -> bytes:
    p = Path(path)
    data = read_input_bytes(p, what)
    if len(data) > 64 * 1024 or not data.strip():
        raise UserError(f"{p}: is not a key file ({'empty' if not data.strip() else 'too large'}); give the {what}")
    return data


def load_private_key(path: str | Path) -> Ed25519PrivateKey:
    """The approver's private key (PEM, as `scorecard keygen` writes it), or one UserError line."""
    data = _read_key_file(path, "approver's private key (.pem from `scorecard keygen`)")
    if b"PUBLIC KEY" in data and b"PRIVATE KEY" not in data:
        raise UserError(f"{path}: is a public key; approving needs the private key (the .pem beside it from `scorecard keygen`)")
    try:
        key = serialization.load_pem_private_key(data, password=None)
    except TypeError:
        raise UserError(f"{path}: the private key is protected by a passphrase; give an unencrypted key from `scorecard keygen`") from None
    except (ValueError, UnsupportedAlgorithm):
        raise UserError(f"{path}: is not a PEM private key; give the .pem written by `scorecard keygen`") from None
    if not isinstance(key, Ed25519PrivateKey):
        raise UserError(f"{path}: is a {type(key).__name__.replace('PrivateKey', '').lstrip('_')} key, not Ed25519; "
                        "make an approver key with `scorecard keygen`")
    return key


def load_public_key(path: str | Path) -> Ed25519PublicKey:
    """An approver's public key (PEM, as `scorecard keygen` writes it), or one UserError line."""
    data = _read_key_file(path, "approver's public key (.pub from `scorecard keygen`)")
    if b"PRIVATE KEY" in data:
        raise UserError(f"{path}: is a private key; give the approver's public key (the .pub file) and keep the private key secret")
    try:
        key = serialization.load_pem_public_key(data)
    except (ValueError, UnsupportedAlgorithm):
        raise UserError(f"{path}: is not a PEM public key; give the .pub written by `scorecard keygen`") from None
    if not isinstance(key, Ed25519PublicKey):
        raise UserError(f"{path}: is a {type(key).__name__.replace('PublicKey', '').lstrip('_')} key, not Ed25519; "
                        "give the approver's .pub from `scorecard keygen`")
    return key


def public_fingerprint_of(key: Ed25519PublicKey) -> str:
    return key_fingerprint(key.public_bytes(serialization.Encoding.Raw, serialization.PublicFormat.Raw))


def approval_line(approval: dict) -> str:
    """What every printed page says of the approval (render prints it, verify reads it back)."""
    return (f"approved by {' '.join(str(approval['name']).split())} on {approval['approved_at'][:10]} "
            f"(signature {signature_short(approval)}, key {approval['key_fingerprint']})")
