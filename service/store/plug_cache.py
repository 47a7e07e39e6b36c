"""What a process derived from the plugs table, reused until a plug changes.

The parts counter ranks the candidate designs of a head once (the grouping query over
100,000 plugs and the engine's checks cost tens of milliseconds) and answers every later
page from that ranking. `cached(session, key, build)` keeps such values, one cache per
database in each process (`db.Database` hands it to its sessions), under the caller's
key and the plugs table's generation.

Why a reused value is never older than the plugs it answers for, with any number of
worker processes and on SQLite or PostgreSQL:

1. The database counts every change to plugs itself: triggers raise the `plugs` row of
   `table_generations` in the same transaction as the change (migration 0004), whatever
   made it: a request to another worker, an import, a script. A committed change is
   visible together with its new generation, or not at all.
2. `cached` reads the generation first, and only then (if it has to build) the plugs.
   Each statement sees every transaction committed before it starts (SQLite outside a
   write transaction, PostgreSQL in READ COMMITTED or stricter), so what the build reads
   is at least as new as the generation it is filed under. If a change commits in
   between, the value is newer than its generation says; the next request reads the
   new generation, finds nothing filed under it and builds again.
3. A value is filed under the generation its request read, and is returned only to a
   request that read the same generation. Every change moves the number, so a value
   built before a change is never returned after it. Values of other generations are
   dropped when a request reads a generation other than the last one seen.

The only extra cost is one primary-key read per request. Entries are bounded
(CAPACITY, least recently used first out), and safe to share between the threads of a
gthread worker.
"""
from __future__ import annotations

import threading
from collections import OrderedDict
from collections.abc import Callable, Hashable
from typing import Any, TypeVar

from sqlalchemy.orm import Session

from service.store import repository

T = TypeVar("T")

# Entries per process: one per (head, options, filters) asked for since the last change
# to plugs. A ranking of one thread and seat over 100,000 plugs in 5,000 designs holds
# about 1,000 designs (some 1.5 MB with their results), so 32 entries stay far below
# the memory of a worker.
CAPACITY = 32
SESSION_INFO_KEY = "plugfit.plug_cache"


class Memo:
    """At most `capacity` values by key, the least recently used out first. Safe to share
    between threads: a value is built outside the lock, so two threads may build the
    same value at once; both are equal and either is kept."""

    def __init__(self, capacity: int) -> None:
        self.capacity = capacity
        self._lock = threading.Lock()
        self._entries: OrderedDict[Hashable, Any] = OrderedDict()

    def get_or_build(self, key: Hashable, build: Callable[[], T]) -> T:
        with self._lock:
            value = self._entries.get(key)
            if value is not None:
                self._entries.move_to_end(key)
                return value
        value = build()
        with self._lock:
            self._entries[key] = value
            while len(self._entries) > self.capacity:
                self._entries.popitem(last=False)
        return value

    def clear(self) -> None:
        with self._lock:
            self._entries.clear()

    def __len__(self) -> int:
        return len(self._entries)


class PlugCache:
    """Values filed under the caller's key and the plugs table's generation."""

    def __init__(self, capacity: int = CAPACITY) -> None:
        self._memo = Memo(capacity)
        self._generation: int | None = None

    def get_or_build(self, generation: int | None, key: Hashable, build: Callable[[], T]) -> T:
        """The value filed under `key` at `generation`, else `build()`, filed there.
        `generation` None: never reused."""
        if generation is None:
            return build()
        if generation != self._generation:  # plugs changed: nothing kept is of use any more
            self._generation = generation
            self._memo.clear()
        return self._memo.get_or_build((generation, key), build)

    def __len__(self) -> int:
        return len(self._memo)


def cached(session: Session, key: Hashable, build: Callable[[], T]) -> T:
    """`build()`, or what it returned before for `key` if no plug has changed since.

    Sessions of `db.Database` carry its cache; any other session (a command that made
    its own) builds every time."""
    cache: PlugCache | None = session.info.get(SESSION_INFO_KEY)
    if cache is None:
        return build()
    generation = repository.plugs_generation(session)  # before the build reads any plug
    return cache.get_or_build(generation, key, build)
