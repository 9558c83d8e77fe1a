"""Session cookies for the reviewer pages: signed, short-lived, and never holding a key.

The cookie's value is ``<key id>.<expiry>.<nonce>.<signature>``: the public id of the API
key the browser signed in with, the Unix time the session ends, a random nonce (so each
sign-in is a session of its own, which signing out ends on the server without ending the
others), and an HMAC-SHA256 of the three under the
server's session secret (``FOLDLINE_SESSION_SECRET``; unset, a random secret made once per
process, so sessions end when the server restarts). The key's secret is never in it. A valid
signature only says who signed in: each request still checks that the key exists and is not
revoked (:mod:`service.views.pages.reviewer`).
"""

from __future__ import annotations

import base64
import hashlib
import hmac
import re
import secrets
import threading

COOKIE = "foldline_session"
COOKIE_PATH = "/pages"
_VALUE = re.compile(r"([a-z2-7]{12})\.([0-9]{1,12})\.([A-Za-z0-9_-]{16})\.([A-Za-z0-9_-]{43})")
_PROCESS_SECRET: list[bytes] = []
_PROCESS_SECRET_LOCK = threading.Lock()


def session_secret(configured: str | None) -> bytes:
    """The signing secret: the configured one, else this process's random one."""
    if configured:
        return configured.encode()
    with _PROCESS_SECRET_LOCK:
        if not _PROCESS_SECRET:
            _PROCESS_SECRET.append(secrets.token_bytes(32))
        return _PROCESS_SECRET[0]


def session_value(key_id: str, expires: int, secret: bytes) -> str:
    """The cookie value for a new session of ``key_id`` ending at Unix time ``expires``."""
    nonce = secrets.token_urlsafe(12)
    return f"{key_id}.{expires}.{nonce}.{_signature(key_id, expires, nonce, secret)}"


def session_key_id(value: str, secret: bytes, now: float) -> str | None:
    """The key id of a well-formed, correctly signed, unexpired session; else ``None``."""
    match = _VALUE.fullmatch(value)
    if match is None:
        return None
    key_id, expires, nonce, signature = match[1], int(match[2]), match[3], match[4]
    if not hmac.compare_digest(signature, _signature(key_id, expires, nonce, secret)):
        return None
    return key_id if now < expires else None


def _signature(key_id: str, expires: int, nonce: str, secret: bytes) -> str:
    mac = hmac.new(secret, f"foldline-session:{key_id}:{expires}:{nonce}".encode(),
                   hashlib.sha256)
    return base64.urlsafe_b64encode(mac.digest()).decode().rstrip("=")
