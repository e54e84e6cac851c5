"""Idempotency keys: a POST the phone sends again is answered once more, never applied twice.

The phone sends ``Idempotency-Key: "<id>"`` (a quoted string as in the IETF HTTPAPI draft
"The Idempotency-Key HTTP Header Field", from memory); a bare token is accepted too. A key seen
before with the same method, path and body means "already applied"; with another body it is
refused (422), as that draft asks. Keys are forgotten after ``KEEP_DAYS``.
"""

from __future__ import annotations

import hashlib
import json
import re

from .errors import FieldErrors

__all__ = ["HEADER", "KEEP_DAYS", "read_key", "fingerprint", "replayed", "remember"]

HEADER = "Idempotency-Key"
KEEP_DAYS = 30  # far longer than a phone stays away from the laptop (common practice, no source)
_KEY = re.compile(r"[A-Za-z0-9._:-]{8,100}")


def read_key(headers) -> str | None:
    """The request's key, None without one; a malformed key is a 400 naming the header."""
    raw = headers.get(HEADER)
    if raw is None:
        return None
    text = raw.strip()
    if len(text) >= 2 and text[0] == text[-1] == '"':
        text = text[1:-1]
    if not _KEY.fullmatch(text):
        shown = raw[:120]
        raise FieldErrors.one(HEADER, f"{HEADER} {shown!r} must be 8 to 100 letters, digits or "
                              "'.', '_', ':', '-', optionally in double quotes", shown,
                              status=400)
    return text


def fingerprint(body) -> str:
    """SHA-256 of ``body`` as canonical JSON (sorted keys, no spaces)."""
    text = json.dumps(body, sort_keys=True, separators=(",", ":"), ensure_ascii=False)
    return hashlib.sha256(text.encode("utf-8")).hexdigest()


def replayed(conn, key: str, target: str, body) -> bool:
    """True when ``key`` was already applied to this target with this body."""
    row = conn.execute("SELECT target, body_sha256 FROM request_keys WHERE key = ?",
                       (key,)).fetchone()
    if row is None:
        return False
    if row["target"] != target or row["body_sha256"] != fingerprint(body):
        raise FieldErrors.one(HEADER, f"{HEADER} {key!r} was already used for another "
                              "request; send this one with a new key", key)
    return True


def remember(conn, key: str, target: str, body) -> None:
    """Record ``key`` as applied (inside the transaction that applied it); drop old keys."""
    conn.execute("DELETE FROM request_keys WHERE created_at < "
                 "strftime('%Y-%m-%dT%H:%M:%SZ', 'now', ?)", (f"-{KEEP_DAYS} days",))
    conn.execute("INSERT INTO request_keys (key, target, body_sha256) VALUES (?, ?, ?)",
                 (key, target, fingerprint(body)))
