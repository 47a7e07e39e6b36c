"""What a process derived from the plugs and heads, reused until one of them changes.

The parts counter ranks the candidate designs of a head once (the grouping query over
100,000 plugs and the engine's checks cost tens of milliseconds) and answers every later
page from that ranking; it keeps the heads' ports it read and the pages it cut the same
way. A request opens a `View` (`view(session)`) at its start and asks it for such values
by key; one cache per database in each process (`db.Database` hands it to its sessions)
files them under the key and the tables' generations the view read.

Why a reused value is never older than the records it answers for, with any number of
worker processes and on SQLite or PostgreSQL:

1. The database counts every change to plugs and heads itself: triggers raise the
   table's row of `table_generations` in the same transaction as the change (migration
   0004), whatever made it: a request to another worker, an import, a script. A
   committed change is visible together with its new generation, or not at all.
2. A view reads the generations first, before anything it builds reads a record. Each
   statement sees every transaction committed before it starts (SQLite outside a write
   transaction, PostgreSQL in READ COMMITTED or stricter), so what a build reads is at
   least as new as the generations it is filed under. If a change commits in between,
   the value is newer than its generations say; the next request reads the new
   generations, finds nothing filed under them and builds again.
3. A value is filed under the generations its request read, and is returned only to a
   request that read the same ones. Every change moves a number, so a value built
   before a change is never returned after it. Values of other generations are dropped
   when a request reads generations other than the last ones seen.

The only extra cost is one read of two rows per request. Entries are bounded (CAPACITY,
least recently used first out), and safe to share between the threads of a gthread worker.
"""
from __future__ import annotations

import threading
from collections import OrderedDict
from collections.abc import Callable, Hashable
from dataclasses import dataclass
from typing import Any, TypeVar

from sqlalchemy.orm import Session

from service.store import repository

T = TypeVar("T")

# Entries per process: one per head port, per (head, options, filters) ranking, and per
# thread and seat asked for since the last change. Over 100,000 plugs in 5,000 designs a
# ranking holds about 1,000 designs: 21 entries, ten of them rankings, took 16 MB
# (measured with tracemalloc), so a full cache stays under about 50 MB per worker.
CAPACITY = 32
SESSION_INFO_KEY = "plugfit.records_cache"

Generation = tuple[int, ...]


class Memo:
    """At most `capacity` values by key, the least recently used out first. Safe to share
    between threads: a value is built outside the lock, so two threads may build the
    same value at once; both are equal and either is kept. A build that returns None is
    not kept."""

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
        if value is not None:
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


class RecordsCache:
    """Values filed under the caller's key and the generations of plugs and heads."""

    def __init__(self, capacity: int = CAPACITY) -> None:
        self._memo = Memo(capacity)
        self._generation: Generation | None = None

    def get_or_build(self, generation: Generation | None, key: Hashable, build: Callable[[], T]) -> T:
        """The value filed under `key` at `generation`, else `build()`, filed there.
        `generation` None: never reused."""
        if generation is None:
            return build()
        if generation != self._generation:  # a record changed: nothing kept is of use any more
            self._generation = generation
            self._memo.clear()
        return self._memo.get_or_build((generation, key), build)

    def __len__(self) -> int:
        return len(self._memo)


@dataclass(frozen=True)
class View:
    """The cache as one request sees it: the generations it read at its start."""

    cache: RecordsCache | None
    generation: Generation | None

    def get_or_build(self, key: Hashable, build: Callable[[], T]) -> T:
        """`build()`, or what it returned before for `key` if no plug or head has changed."""
        if self.cache is None:
            return build()
        return self.cache.get_or_build(self.generation, key, build)


def view(session: Session) -> View:
    """A view for a request (call it before reading any plug or head). Sessions of
    `db.Database` carry its cache; with any other session (a command that made its own)
    every value is built afresh."""
    cache: RecordsCache | None = session.info.get(SESSION_INFO_KEY)
    if cache is None:
        return View(None, None)
    return View(cache, repository.records_generation(session))
