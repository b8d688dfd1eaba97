"""Serialised pages of the parts list, reused while the team's parts of that kind are unchanged.

The parts list is the API's hottest read (procurement scripts poll it). Building a page loads every matching row
through the ORM, sorts names naturally and serialises the page; with many concurrent readers that Python work is
what limits throughput. A page is a pure function of the query and the stored rows, so it is kept here as bytes
under the query and a **stamp**: the team's ``part_revision`` token of that kind (``server.models.PartRevision``),
which database triggers set to a fresh random value in the same transaction as every insert, update and delete of
such a row, whoever writes it (this process, another server process, a script). So a changed library never matches
an old stamp, here or after another process wrote it, and no page is ever stale.

Reading the stamp is one primary-key lookup on a pooled connection (no ORM session: that would cost ten times the
lookup), whatever the size of the library. A page is stored under a stamp only when the stamp read after building it
is the same, so a stored page always holds the rows of its stamp. Bounded in bytes (least recently used first out);
one cache per app (``app.state.parts_pages``, so one database), nothing shared between processes.
"""

from __future__ import annotations

import threading
from collections import OrderedDict
from collections.abc import Callable, Hashable
from functools import lru_cache
from typing import Any

from sqlalchemy import Dialect, Engine, bindparam, select

from server.models import PartRevision

MAX_BYTES = 32 * 1024 * 1024
"""Total size of the cached pages of one process. [bytes]"""


@lru_cache(maxsize=8)
def _stamp_sql(dialect: Dialect) -> tuple[str, tuple[str, ...] | None]:
    """The stamp query in ``dialect``'s SQL and the order of its parameters (None: named parameters)."""
    table = PartRevision.__table__
    compiled = select(table.c.revision).where(table.c.team_id == bindparam("team_id"),
                                              table.c.kind == bindparam("kind")).compile(dialect=dialect)
    return compiled.string, tuple(compiled.positiontup) if compiled.positiontup else None


def stamp(engine: Engine, kind: str, team_id: int) -> tuple[Any, ...]:
    """The stamp of a team's parts of one kind (changes with every create, update and delete)."""
    sql, order = _stamp_sql(engine.dialect)
    named = {"team_id": team_id, "kind": kind}
    connection = engine.raw_connection()
    try:
        cursor = connection.cursor()
        try:
            cursor.execute(sql, tuple(named[name] for name in order) if order else named)
            row = cursor.fetchone()
        finally:
            cursor.close()
    finally:
        connection.close()  # back to the pool, its transaction ended
    return (row[0] if row else None,)  # no row yet: nothing was ever written since the triggers exist


class PageCache:
    """Pages as bytes under (query key, stamp); thread-safe."""

    def __init__(self, max_bytes: int = MAX_BYTES) -> None:
        self.max_bytes = max_bytes
        self._pages: OrderedDict[Hashable, tuple[tuple[Any, ...], bytes]] = OrderedDict()
        self._bytes = 0
        self._lock = threading.Lock()
        self.hits = 0
        self.misses = 0

    def get_or_build(self, key: Hashable, current: tuple[Any, ...], build: Callable[[], bytes],
                     after: Callable[[], tuple[Any, ...]] | None = None) -> bytes:
        """The cached page of ``key`` when its stamp is ``current``, else ``build()``, stored for next time unless
        ``after()`` (the stamp read again once built) differs: then rows changed while it was built."""
        with self._lock:
            found = self._pages.get(key)
            if found is not None and found[0] == current:
                self._pages.move_to_end(key)
                self.hits += 1
                return found[1]
        body = build()
        with self._lock:
            self.misses += 1
        if after is not None and after() != current:
            return body  # at least as new as ``current``, but perhaps not its rows: not stored
        with self._lock:
            old = self._pages.pop(key, None)
            if old is not None:
                self._bytes -= len(old[1])
            if len(body) <= self.max_bytes:
                self._pages[key] = (current, body)
                self._bytes += len(body)
            while self._bytes > self.max_bytes and self._pages:
                _, (_, dropped) = self._pages.popitem(last=False)
                self._bytes -= len(dropped)
        return body

    def clear(self) -> None:
        with self._lock:
            self._pages.clear()
            self._bytes = 0
