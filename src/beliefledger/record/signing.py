"""Reviewer sign-off: an entry covering the root digest and the sign-offs before it,
optionally Ed25519-signed.

A sign-off (version 2) names the record's root digest, the digest of the
sign-off before it (``previous``; none for the first) and its own digest
(``entry_sha256``), with the reviewer's decision, ticked checklist and
comments. Removing, reordering or editing an earlier sign-off therefore
breaks the chain at the next one; editing a signed one breaks its signature.
Deleting the *last* sign-off leaves a shorter, valid chain: quote the chain
head (``chain_head``) outside the file as you quote the fingerprint.
Version-1 sign-offs (before chaining) are still checked, and said to be
unchained.

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
"""The fields a version-1 (unchained) sign-off signed."""
SIGNOFF_VERSION = 2
DECISIONS = ("accept", "conditions", "reject")
"""accept; accept with conditions (stated in the comments); reject."""
V2_FIELDS = frozenset({"signoff_version", "reviewer", "comment", "signed_at", "root",
                       "record_format", "fingerprint", "previous", "decision", "checklist",
                       "comments", "entry_sha256", "public_key", "key_id", "algorithm",
                       "signature"})
KEY_FIELDS = ("public_key", "key_id", "algorithm", "signature")


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


def entry_digest(entry: Any) -> str:
    """SHA-256 of a whole sign-off entry (signature included): what the next one names."""
    return hashlib.sha256(canonical_bytes(entry)).hexdigest()


def chain_head(signoffs: list[Any]) -> str | None:
    """A short form of the last sign-off's digest, to quote outside the file."""
    if not signoffs:
        return None
    return fingerprint(entry_digest(signoffs[-1]))


def _own_digest(entry: dict[str, Any]) -> str:
    return hashlib.sha256(canonical_bytes({k: v for k, v in entry.items()
                                           if k not in ("entry_sha256", *KEY_FIELDS)})).hexdigest()


def make_signoff(root: str, reviewer: str, comment: str = "", *, key_path: str | Path | None = None,
                 signed_at: str | None = None, decision: str | None = None,
                 checklist: Any = None, comments: list[dict[str, Any]] | None = None,
                 previous: list[Any] | None = None) -> dict[str, Any]:
    """A sign-off entry covering ``root`` and the sign-offs ``previous`` (the list already
    in the record); signed when ``key_path`` is given."""
    reviewer = (reviewer or "").strip()
    if not reviewer:
        raise RecordError("a sign-off needs the reviewer's name: --reviewer NAME")
    if len(reviewer) > 200 or len(comment or "") > 20_000:
        raise RecordError("reviewer name (200) or comment (20,000 characters) is too long")
    if decision not in DECISIONS:
        raise RecordError(f"decision {decision!r:.40} is not one of {', '.join(DECISIONS)}: "
                          "--decision accept (the record stands), conditions (it stands if the "
                          "comments are met) or reject")
    comments = list(comments or [])
    if decision != "accept" and not comments and not (comment or "").strip():
        raise RecordError(f"a '{decision}' decision needs the reasons: give --comments FILE "
                          "(comments on particular numbers) or --comment TEXT")
    prev = list(previous or [])
    entry: dict[str, Any] = {
        "signoff_version": SIGNOFF_VERSION,
        "reviewer": reviewer, "comment": comment or "", "decision": decision,
        "signed_at": signed_at or datetime.now(UTC).strftime("%Y-%m-%dT%H:%M:%SZ"),
        "root": root, "record_format": "beliefledger-record",
        "fingerprint": fingerprint(root),
        "previous": entry_digest(prev[-1]) if prev else None,
        "checklist": checklist if checklist is not None else {},
        "comments": comments,
    }
    entry["entry_sha256"] = _own_digest(entry)
    if key_path is not None:
        _, serialization, _ = _crypto()
        key = load_private_key(key_path)
        raw = key.public_key().public_bytes(serialization.Encoding.Raw,
                                            serialization.PublicFormat.Raw)
        entry["public_key"] = base64.b64encode(raw).decode("ascii")
        entry["key_id"] = key_id(raw)
        entry["algorithm"] = "ed25519"
        entry["signature"] = base64.b64encode(key.sign(signed_bytes(entry))).decode("ascii")
    return entry


def signed_bytes(entry: dict[str, Any]) -> bytes:
    """What a signature covers: a version-2 entry without its signature (so the root, the
    previous sign-off, the decision, checklist and comments); a version-1 entry's fields."""
    if entry.get("signoff_version") == SIGNOFF_VERSION:
        return canonical_bytes({k: v for k, v in entry.items() if k != "signature"})
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


def check_signoff(index: int, entry: Any, root: str, previous: Any = None) -> SignoffStatus:
    """Check a sign-off against the recomputed root digest, the sign-off before it in the
    list (``previous``; None for the first) and its signature. ``status`` is ``valid``,
    ``broken`` or ``missing-from-chain`` (the sign-off it names as its predecessor is not
    the one before it: an earlier one was removed, reordered or replaced)."""
    if not isinstance(entry, dict):
        return SignoffStatus(index, "?", "?", False, None, "broken", "entry is not an object")
    reviewer = str(entry.get("reviewer", "?"))
    when = str(entry.get("signed_at", "?"))
    signed = "signature" in entry
    kid = entry.get("key_id") if signed else None
    v2 = entry.get("signoff_version") == SIGNOFF_VERSION

    def st(status: str, detail: str) -> SignoffStatus:
        return SignoffStatus(index, reviewer, when, signed, kid, status, detail)

    if entry.get("root") != root:
        return st("broken", "the record changed after this sign-off (its root digest "
                            f"{str(entry.get('root'))[:16]}... is not the record's "
                            f"{root[:16]}...)")
    if entry.get("fingerprint") != fingerprint(root):
        return st("broken", "the fingerprint written in the sign-off is not the root's")
    allowed = V2_FIELDS if v2 else {*SIGNED_FIELDS, "fingerprint", *KEY_FIELDS}
    if set(entry) - allowed:
        return st("broken", "the sign-off has fields no signer writes")
    if v2:
        if entry.get("decision") not in DECISIONS:
            return st("broken", f"decision {entry.get('decision')!r:.30} is not one a signer "
                                "writes")
        if entry.get("entry_sha256") != _own_digest(entry):
            return st("broken", "its content (decision, checklist, comments, names or times) "
                                "was edited after signing")
        want = entry_digest(previous) if previous is not None else None
        if entry.get("previous") != want:
            what = ("it names no predecessor, yet sign-offs come before it" if
                    entry.get("previous") is None else
                    "it names a predecessor that is not the sign-off before it" if previous
                    is not None else "it names a predecessor, but it is first in the list")
            return st("missing-from-chain", f"{what}: an earlier sign-off was removed, "
                                            "reordered or edited")
    if not signed:
        if set(KEY_FIELDS) & set(entry):
            return st("broken", "the sign-off carries key fields but no signature")
        text = "covers the current root digest (unsigned: proves no identity)"
        return st("valid", text + ("" if v2 else "; made before sign-offs were chained"))
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
    return st("valid", "Ed25519 signature over the current root digest checks"
              + (", covering the decision, checklist, comments and the sign-offs before it"
                 if v2 else "; made before sign-offs were chained"))


def check_chain(signoffs: list[Any], root: str) -> list[SignoffStatus]:
    """Every sign-off checked in order, each against the one before it."""
    return [check_signoff(i, s, root, signoffs[i - 1] if i else None)
            for i, s in enumerate(signoffs)]


__all__ = ["keygen", "make_signoff", "check_signoff", "check_chain", "chain_head",
           "entry_digest", "DECISIONS", "SignoffStatus", "key_id",
           "load_public_key_raw", "load_private_key", "signed_bytes"]
