"""Reviewer sign-off: an entry covering the root digest, optionally Ed25519-signed.

Levels of protection, plainly:

- **digests** (the manifest): show any accidental or careless change; a
  deliberate forger who edits the file can recompute them.
- **fingerprint** quoted outside the file (an e-mail, a register): a forged
  record must match 80 bits of the root digest; a recomputed record does not.
- **signature** (``sign --key``): the reviewer's Ed25519 signature over the
  sign-off entry, which names the root digest. A record whose digests were
  recomputed no longer matches the signed root; a forger cannot sign again
  without the private key. Check against the reviewer's public key
  (``verify --public-key``) to rule out a forger's own key pair.

References
----------
Bernstein, D. J. et al. (2012). High-speed high-security signatures.
Journal of Cryptographic Engineering 2, 77-89 (Ed25519). RFC 8032 (2017).
"""

from __future__ import annotations

import base64
import hashlib
import os
from dataclasses import dataclass
from datetime import UTC, datetime
from pathlib import Path
from typing import Any

from ..errors import RecordError
from .canonical import canonical_bytes, fingerprint

SIGNED_FIELDS = ("reviewer", "comment", "signed_at", "root", "record_format")


def _crypto():
    try:
        from cryptography.exceptions import InvalidSignature
        from cryptography.hazmat.primitives import serialization
        from cryptography.hazmat.primitives.asymmetric import ed25519
    except ImportError as exc:  # pragma: no cover - cryptography is in the notebook extra
        raise ImportError("signing needs the 'cryptography' package; install it with "
                          "pip install 'beliefledger[notebook]'") from exc
    return ed25519, serialization, InvalidSignature


def key_id(public_raw: bytes) -> str:
    """A short identifier of a public key (first 64 bits of its SHA-256, grouped)."""
    h = hashlib.sha256(public_raw).hexdigest()[:16].upper()
    return "-".join(h[i:i + 4] for i in range(0, 16, 4))


def keygen(prefix: str | Path, *, force: bool = False) -> tuple[Path, Path, str]:
    """Write an Ed25519 key pair: ``PREFIX.key`` (private, PEM, mode 0600) and
    ``PREFIX.pub`` (public, PEM). Returns (private path, public path, key id)."""
    ed25519, serialization, _ = _crypto()
    prefix = Path(prefix)
    priv_path = prefix.with_name(prefix.name + ".key")
    pub_path = prefix.with_name(prefix.name + ".pub")
    if not prefix.parent.is_dir():
        raise RecordError(f"folder {str(prefix.parent)!r} does not exist; create it first")
    for p in (priv_path, pub_path):
        if p.exists() and not force:
            raise RecordError(f"{str(p)!r} already exists; pass --force to replace the key pair "
                              "(records signed with the old key stay checkable only with the "
                              "old public key)")
    key = ed25519.Ed25519PrivateKey.generate()
    priv = key.private_bytes(serialization.Encoding.PEM, serialization.PrivateFormat.PKCS8,
                             serialization.NoEncryption())
    pub = key.public_key().public_bytes(serialization.Encoding.PEM,
                                        serialization.PublicFormat.SubjectPublicKeyInfo)
    tmp = priv_path.with_name(f".{priv_path.name}.tmp")
    fd = os.open(tmp, os.O_WRONLY | os.O_CREAT | os.O_TRUNC, 0o600)
    try:
        with os.fdopen(fd, "wb") as fh:
            fh.write(priv)
            fh.flush()
            os.fsync(fh.fileno())
        os.chmod(tmp, 0o600)
        os.replace(tmp, priv_path)
    except BaseException:
        tmp.unlink(missing_ok=True)
        raise
    from .nbio import write_text

    write_text(pub_path, pub.decode("ascii"))
    raw = key.public_key().public_bytes(serialization.Encoding.Raw, serialization.PublicFormat.Raw)
    return priv_path, pub_path, key_id(raw)


def load_private_key(path: str | Path):
    ed25519, serialization, _ = _crypto()
    p = Path(path)
    try:
        data = p.read_bytes()
    except OSError as exc:
        raise RecordError(f"cannot read key file {str(p)!r}: {exc.strerror}") from None
    try:
        key = serialization.load_pem_private_key(data, password=None)
    except (ValueError, TypeError) as exc:
        raise RecordError(f"key file {p.name!r} is not an unencrypted PEM private key ({exc}); "
                          "make one with `beliefledger keygen`") from None
    if not isinstance(key, ed25519.Ed25519PrivateKey):
        raise RecordError(f"key file {p.name!r} holds a {type(key).__name__}, not an Ed25519 "
                          "key; make one with `beliefledger keygen`")
    return key


def load_public_key_raw(path: str | Path) -> bytes:
    ed25519, serialization, _ = _crypto()
    p = Path(path)
    try:
        data = p.read_bytes()
    except OSError as exc:
        raise RecordError(f"cannot read public key {str(p)!r}: {exc.strerror}") from None
    try:
        key = serialization.load_pem_public_key(data)
    except (ValueError, TypeError) as exc:
        raise RecordError(f"{p.name!r} is not a PEM public key ({exc})") from None
    if not isinstance(key, ed25519.Ed25519PublicKey):
        raise RecordError(f"{p.name!r} is not an Ed25519 public key")
    return key.public_bytes(serialization.Encoding.Raw, serialization.PublicFormat.Raw)


def make_signoff(root: str, reviewer: str, comment: str = "", *, key_path: str | Path | None = None,
                 signed_at: str | None = None) -> dict[str, Any]:
    """A sign-off entry covering ``root``; signed when ``key_path`` is given."""
    reviewer = (reviewer or "").strip()
    if not reviewer:
        raise RecordError("a sign-off needs the reviewer's name: --reviewer NAME")
    if len(reviewer) > 200 or len(comment or "") > 20_000:
        raise RecordError("reviewer name (200) or comment (20,000 characters) is too long")
    entry: dict[str, Any] = {
        "reviewer": reviewer, "comment": comment or "",
        "signed_at": signed_at or datetime.now(UTC).strftime("%Y-%m-%dT%H:%M:%SZ"),
        "root": root, "record_format": "beliefledger-record",
        "fingerprint": fingerprint(root),
    }
    if key_path is not None:
        _, serialization, _ = _crypto()
        key = load_private_key(key_path)
        raw = key.public_key().public_bytes(serialization.Encoding.Raw,
                                            serialization.PublicFormat.Raw)
        entry["public_key"] = base64.b64encode(raw).decode("ascii")
        entry["key_id"] = key_id(raw)
        entry["signature"] = base64.b64encode(key.sign(signed_bytes(entry))).decode("ascii")
        entry["algorithm"] = "ed25519"
    return entry


def signed_bytes(entry: dict[str, Any]) -> bytes:
    return canonical_bytes({k: entry.get(k) for k in SIGNED_FIELDS})


@dataclass(frozen=True)
class SignoffStatus:
    """The check of one sign-off: ``status`` is ``valid`` or ``broken``."""

    index: int
    reviewer: str
    signed_at: str
    signed: bool
    key_id: str | None
    status: str
    detail: str

    def to_dict(self) -> dict[str, Any]:
        return {"index": self.index, "reviewer": self.reviewer, "signed_at": self.signed_at,
                "signed": self.signed, "key_id": self.key_id, "status": self.status,
                "detail": self.detail}

    def __str__(self) -> str:
        kind = f"signed with key {self.key_id}" if self.signed else "unsigned"
        return (f"sign-off {self.index + 1} by {self.reviewer} ({self.signed_at}, {kind}): "
                f"{self.status}: {self.detail}")


def check_signoff(index: int, entry: Any, root: str) -> SignoffStatus:
    """Check a sign-off against the recomputed root digest (and its signature)."""
    if not isinstance(entry, dict):
        return SignoffStatus(index, "?", "?", False, None, "broken", "entry is not an object")
    reviewer = str(entry.get("reviewer", "?"))
    when = str(entry.get("signed_at", "?"))
    signed = "signature" in entry
    kid = entry.get("key_id") if signed else None

    def st(status: str, detail: str) -> SignoffStatus:
        return SignoffStatus(index, reviewer, when, signed, kid, status, detail)

    if entry.get("root") != root:
        return st("broken", "the record changed after this sign-off (its root digest "
                            f"{str(entry.get('root'))[:16]}... is not the record's "
                            f"{root[:16]}...)")
    if entry.get("fingerprint") != fingerprint(root):
        return st("broken", "the fingerprint written in the sign-off is not the root's")
    if set(entry) - {*SIGNED_FIELDS, "fingerprint", "public_key", "key_id", "signature",
                     "algorithm"}:
        return st("broken", "the sign-off has fields no signer writes")
    if not signed:
        if {"public_key", "key_id", "algorithm"} & set(entry):
            return st("broken", "the sign-off carries key fields but no signature")
        return st("valid", "covers the current root digest (unsigned: proves no identity)")
    ed25519, _, invalid = _crypto()
    try:
        raw = base64.b64decode(entry.get("public_key", ""), validate=True)
        sig = base64.b64decode(entry["signature"], validate=True)
        pub = ed25519.Ed25519PublicKey.from_public_bytes(raw)
    except (ValueError, TypeError):
        return st("broken", "the public key or signature is not valid base64 Ed25519 data")
    if entry.get("algorithm") != "ed25519":
        return st("broken", f"unknown signature algorithm {entry.get('algorithm')!r}")
    if key_id(raw) != kid:
        return st("broken", "the key id does not match the embedded public key")
    try:
        pub.verify(sig, signed_bytes(entry))
    except invalid:
        return st("broken", "the Ed25519 signature does not match the entry")
    return st("valid", "Ed25519 signature over the current root digest checks")


__all__ = ["keygen", "make_signoff", "check_signoff", "SignoffStatus", "key_id",
           "load_public_key_raw", "load_private_key", "signed_bytes"]
