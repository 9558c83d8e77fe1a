"""Signed checkpoints of the audit chain: the head an auditor keeps outside the store.

The chain alone proves only that its events hang together: someone with write access to
the database can change a record and recompute every later hash, or drop the latest
events. A checkpoint is the head of the chain (sequence number, hash, time) with an
HMAC-SHA256 under a secret held outside the database (``FOLDLINE_AUDIT_KEY``). Kept
elsewhere, it lets a later audit prove that the store still *extends* it: the event at
the checkpoint's sequence number is still there with the same hash, so nothing up to it
was rewritten and the log was not cut back before it. This is the idea of the signed tree
heads of Certificate Transparency (RFC 6962, section 3.5), on a hash chain instead of a
Merkle tree and with a shared secret instead of a signature.
"""

from __future__ import annotations

import hashlib
import hmac
import json
from dataclasses import asdict, dataclass

from sqlalchemy import select
from sqlalchemy.orm import Session

from storage.audit.digest import canonical_json
from storage.db import AuditEvent, utc_now
from storage.errors import NotFoundError, translates_errors


class CheckpointError(ValueError):
    """A checkpoint file cannot be read, or its MAC does not match under the key."""


@dataclass(frozen=True)
class Checkpoint:
    """The head of the chain at ``time``, with its MAC."""

    seq: int
    hash: str
    time: str
    mac: str

    def to_json(self) -> str:
        return json.dumps(asdict(self), sort_keys=True)


def _mac(key: bytes, seq: int, head: str, time: str) -> str:
    return hmac.new(key, canonical_json([seq, head, time]).encode(), hashlib.sha256).hexdigest()


@translates_errors
def make_checkpoint(session: Session, key: bytes) -> Checkpoint:
    """The signed head of the chain now; an empty log has no head to sign."""
    head = session.execute(select(AuditEvent.seq, AuditEvent.hash)
                           .order_by(AuditEvent.seq.desc()).limit(1)).first()
    if head is None:
        raise NotFoundError("the audit log is empty: there is no head to sign")
    time = utc_now().isoformat()
    return Checkpoint(head.seq, head.hash, time, _mac(key, head.seq, head.hash, time))


def read_checkpoint(text: str, key: bytes) -> Checkpoint:
    """A checkpoint from its JSON text, its MAC checked under ``key``."""
    try:
        body = json.loads(text)
        checkpoint = Checkpoint(int(body["seq"]), str(body["hash"]), str(body["time"]),
                                str(body["mac"]))
    except (ValueError, KeyError, TypeError) as exc:
        raise CheckpointError(f"the checkpoint is not a Foldline checkpoint ({exc})") from None
    expected = _mac(key, checkpoint.seq, checkpoint.hash, checkpoint.time)
    if not hmac.compare_digest(expected, checkpoint.mac):
        raise CheckpointError("the checkpoint's MAC does not match under FOLDLINE_AUDIT_KEY: "
                              "it was altered, or made with another key")
    return checkpoint


@translates_errors
def extends(session: Session, checkpoint: Checkpoint) -> str | None:
    """``None`` if the store still holds the checkpoint's head, else what is wrong."""
    stored = session.scalar(select(AuditEvent.hash).where(AuditEvent.seq == checkpoint.seq))
    if stored is None:
        return (f"event {checkpoint.seq} of the checkpoint of {checkpoint.time} is gone: the "
                "log was cut back")
    if stored != checkpoint.hash:
        return (f"event {checkpoint.seq} no longer has the hash of the checkpoint of "
                f"{checkpoint.time}: the log up to it was rewritten")
    return None
