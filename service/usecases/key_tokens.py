"""The text of an API key: ``fl_<key id>.<secret>``, made once and checked in constant time.

The key id (12 lowercase base-32 characters) is public: it names the key in listings and
finds its record. The secret (43 URL-safe characters, 256 random bits) is shown once when
the key is made; only its SHA-256 is stored. A plain hash suffices because the secret is
random and long (nothing to guess from a dictionary), and it keeps each request's check cheap.
"""

from __future__ import annotations

import base64
import hashlib
import hmac
import re
import secrets
from dataclasses import dataclass

_TOKEN = re.compile(r"fl_([a-z2-7]{12})\.([A-Za-z0-9_-]{43})")
_UNKNOWN_KEY_HASH = hashlib.sha256(b"no such key").hexdigest()


@dataclass(frozen=True)
class Token:
    """A key's public id and its secret."""

    key_id: str
    secret: str

    @property
    def text(self) -> str:
        """What the client sends as ``Authorization: Bearer <text>``."""
        return f"fl_{self.key_id}.{self.secret}"


def new_token() -> Token:
    """A fresh random key id and secret."""
    key_id = base64.b32encode(secrets.token_bytes(10)).decode().lower()[:12]
    return Token(key_id, secrets.token_urlsafe(32))


def parse_token(text: str) -> Token | None:
    """The token in ``text``, or ``None`` if it is not shaped like one."""
    match = _TOKEN.fullmatch(text)
    return None if match is None else Token(match[1], match[2])


def secret_hash(secret: str) -> str:
    """The stored form of a secret: hex SHA-256."""
    return hashlib.sha256(secret.encode()).hexdigest()


def secret_matches(secret: str, stored_hash: str | None) -> bool:
    """Whether ``secret`` hashes to ``stored_hash``, compared in constant time.

    ``None`` (no such key) is compared against a fixed hash, so an unknown key id takes as
    long to refuse as a wrong secret.
    """
    expected = stored_hash if stored_hash is not None else _UNKNOWN_KEY_HASH
    return hmac.compare_digest(secret_hash(secret), expected) and stored_hash is not None
