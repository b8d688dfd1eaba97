"""When each API key was last used, recorded off the request path.

A read must not write: before, every API-key request updated ``api_key.last_used_at`` inside the request, so 50
concurrent readers queued on SQLite's single write lock. Now a request only notes the time in memory; a background
thread writes the newest time of each key at most every ``interval_s`` seconds (and once more at shutdown), all
keys in one short transaction.
"""

from __future__ import annotations

import logging
import threading
from datetime import UTC, datetime

from sqlalchemy import or_, update
from sqlalchemy.orm import Session, sessionmaker

from server.models import ApiKey

log = logging.getLogger("liftmatch.usage")


class KeyUsage:
    def __init__(self, factory: sessionmaker[Session], interval_s: float = 30.0) -> None:
        self._factory = factory
        self._interval_s = interval_s
        self._pending: dict[int, datetime] = {}
        self._lock = threading.Lock()
        self._stop = threading.Event()
        self._thread: threading.Thread | None = None

    def note(self, key_id: int) -> None:
        """The key was used now (memory only; cheap and lock-short)."""
        with self._lock:
            self._pending[key_id] = datetime.now(UTC)

    def flush(self) -> int:
        """Write the pending times; returns how many keys were updated."""
        with self._lock:
            pending, self._pending = self._pending, {}
        if not pending:
            return 0
        try:
            with self._factory() as session, session.begin():
                for key_id, moment in pending.items():
                    session.execute(update(ApiKey).where(
                        ApiKey.id == key_id, or_(ApiKey.last_used_at.is_(None), ApiKey.last_used_at < moment)
                    ).values(last_used_at=moment))
        except Exception:  # never take the server down for a bookkeeping write; try again next time
            log.exception("could not record API key use")
            with self._lock:
                for key_id, moment in pending.items():
                    self._pending.setdefault(key_id, moment)
            return 0
        return len(pending)

    def start(self) -> None:
        def loop() -> None:
            while not self._stop.wait(self._interval_s):
                self.flush()

        self._thread = threading.Thread(target=loop, name="key-usage", daemon=True)
        self._thread.start()

    def stop(self) -> None:
        self._stop.set()
        if self._thread is not None:
            self._thread.join(timeout=5)
        self.flush()
