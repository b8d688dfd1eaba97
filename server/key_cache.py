"""Resolved API keys kept for a moment, so that a burst of API reads does not look up the same key every time.

Every API request authenticates; looking the key up is a database round trip on a worker thread, which under
50 concurrent readers costs as much as the read itself. A key that resolved to a live key of a team is kept here
(under its SHA-256, never the key itself) for ``ttl_s`` seconds (setting ``api_key_cache_s``, default 2 s; 0 turns
the cache off). Unknown and revoked keys are never kept.

Revocation: a commit that revoked a key (``revoke_api_key``, removing a member) empties this process's cache when
it commits, so the revocation holds at once here; another server process may accept the revoked key for up to
``ttl_s`` seconds more (documented in docs/deployment.md; set 0 where that matters).
"""

from __future__ import annotations

import threading
import time
from typing import Any

from sqlalchemy import event
from sqlalchemy.orm import Session

from server.security import api_key_hash

MAX_ENTRIES = 10_000
_FLAG = "liftmatch.revoked_keys"


class KeyCache:
    """Live keys' callers under the key's hash, each for ``ttl_s`` seconds (thread-safe)."""

    def __init__(self, ttl_s: float = 2.0) -> None:
        self.ttl_s = ttl_s
        self._entries: dict[str, tuple[float, Any]] = {}
        self._lock = threading.Lock()

    def get(self, key: str) -> Any | None:
        """The caller this key resolved to, if it did so less than ``ttl_s`` ago."""
        if self.ttl_s <= 0:
            return None
        digest = api_key_hash(key)
        with self._lock:
            found = self._entries.get(digest)
        if found is None or time.monotonic() - found[0] >= self.ttl_s:
            return None
        return found[1]

    def put(self, key: str, caller: Any) -> None:
        if self.ttl_s <= 0:
            return
        digest = api_key_hash(key)
        now = time.monotonic()
        with self._lock:
            if len(self._entries) >= MAX_ENTRIES:  # drop what has expired; if still full, start over
                self._entries = {k: v for k, v in self._entries.items() if now - v[0] < self.ttl_s}
                if len(self._entries) >= MAX_ENTRIES:
                    self._entries.clear()
            self._entries[digest] = (now, caller)

    def forget_all(self) -> None:
        with self._lock:
            self._entries.clear()


KEYS = KeyCache()
"""This process's cache (its ``ttl_s`` is set from the settings when the app starts)."""


def revoking(session: Session) -> None:
    """Mark ``session``'s transaction as revoking keys: the cache is emptied when it commits."""
    session.info[_FLAG] = True


@event.listens_for(Session, "after_commit")
def _forget_after_revocation(session: Session) -> None:
    if session.info.pop(_FLAG, False):
        KEYS.forget_all()


@event.listens_for(Session, "after_rollback")
def _drop_flag(session: Session) -> None:
    session.info.pop(_FLAG, None)
