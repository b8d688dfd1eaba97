"""Serialised pages of the parts list, reused while the team's parts of that kind are unchanged.

The parts list is the API's hottest read (procurement scripts poll it). Building a page loads every matching row
through the ORM, sorts names naturally and serialises the page; with many concurrent readers that Python work is
what limits throughput. A page is a pure function of the query and the stored rows, so it is kept here as bytes
under the query and a **stamp** of the team's rows of that kind: one aggregate query (row count, highest id, sum of
versions, latest ``updated_at``). Every create adds a row (count and highest id change), every update goes through
the ORM's version counter (the sum changes) and sets ``updated_at``, every delete removes a row; so a changed
library never matches an old stamp, in this process or after another process wrote it. Bounded in bytes (least
recently used first out); per process, nothing shared.
"""

from __future__ import annotations

import threading
from collections import OrderedDict
from collections.abc import Callable, Hashable
from typing import Any

from sqlalchemy import func, select
from sqlalchemy.orm import Session

MAX_BYTES = 32 * 1024 * 1024
"""Total size of the cached pages of one process. [bytes]"""


def stamp(session: Session, model: Any, team_id: int) -> tuple[Any, ...]:
    """The stamp of a team's rows of one part table (changes with every create, update and delete)."""
    c = model.__table__.c  # columns, not the ORM entity: a third of the time per request
    row = session.execute(select(func.count(), func.max(c.id), func.coalesce(func.sum(c.version), 0),
                                 func.max(c.updated_at)).where(c.team_id == team_id)).one()
    return tuple(row)


class PageCache:
    """Pages as bytes under (query key, stamp); thread-safe."""

    def __init__(self, max_bytes: int = MAX_BYTES) -> None:
        self.max_bytes = max_bytes
        self._pages: OrderedDict[Hashable, tuple[tuple[Any, ...], bytes]] = OrderedDict()
        self._bytes = 0
        self._lock = threading.Lock()
        self.hits = 0
        self.misses = 0

    def get_or_build(self, key: Hashable, current: tuple[Any, ...], build: Callable[[], bytes]) -> bytes:
        """The cached page of ``key`` when its stamp is ``current``, else ``build()`` (stored for next time)."""
        with self._lock:
            found = self._pages.get(key)
            if found is not None and found[0] == current:
                self._pages.move_to_end(key)
                self.hits += 1
                return found[1]
        body = build()
        with self._lock:
            self.misses += 1
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


PARTS_PAGES = PageCache()
"""The parts list's pages (``server/api/parts.py``)."""
