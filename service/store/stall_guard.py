"""PostgreSQL connections that give up on a database that stops answering.

libpq has no read timeout. Over a link that stops carrying data while the connection
stays open (a frozen proxy, a half-open connection after a network cut, a server
stopped with SIGSTOP) a query waits for ever, and so does the request and its worker.
The server-side `statement_timeout` cannot help: the statement may never reach it.
Keepalives and `tcp_user_timeout` (set in `service.store.db`) find a peer that has
vanished from the network, but not one whose kernel still acknowledges every byte.

So the connection class here watches its own socket: when the database has sent
nothing for `stall_limit_s` while psycopg waits for it, the connection is closed and
`DatabaseStalled` (an OperationalError) raised. It is an inactivity limit, like a
socket timeout: a long import whose answers keep arriving is never cut. SQLAlchemy
sees a closed connection and discards it (a disconnect), the request answers a 503
(`service.web.problems`), and the next request connects afresh: no restart.
"""
from __future__ import annotations

import time
from collections.abc import Generator
from typing import Any

import psycopg
from sqlalchemy import Engine, event


class DatabaseStalled(psycopg.OperationalError):
    """The database sent nothing for the stall limit; the connection is closed."""


class StallGuardedConnection(psycopg.Connection):
    stall_limit_s: float = 5.0

    def wait(self, gen: Any, *args: Any, **kwargs: Any) -> Any:
        # psycopg's own arguments (the polling interval, a timeout) pass through as given.
        return super().wait(self._watched(gen), *args, **kwargs)

    def _watched(self, gen: Generator) -> Generator:
        """Relays `gen` to psycopg's waiting loop, which sends it a readiness value at
        least every `interval` seconds: zero when the socket had nothing."""
        last_heard = time.monotonic()
        try:
            state = next(gen)
            while True:
                ready = yield state
                if ready:
                    last_heard = time.monotonic()
                elif time.monotonic() - last_heard > self.stall_limit_s:
                    self.pgconn.finish()  # mid-protocol: nothing else can be sent on it
                    raise DatabaseStalled(f"the database sent nothing for {self.stall_limit_s:g} s")
                state = gen.send(ready)
        except StopIteration as done:
            return done.value


def install(engine: Engine, stall_limit_s: float) -> None:
    """Make `engine` connect with `StallGuardedConnection`s."""

    @event.listens_for(engine, "do_connect")
    def _connect(_dialect, _record, cargs, cparams):
        connection = StallGuardedConnection.connect(*cargs, **cparams)
        connection.stall_limit_s = stall_limit_s
        return connection

    @event.listens_for(engine, "handle_error")
    def _no_second_try_after_a_stall(context) -> None:
        # A pooled connection whose pre-ping stalled would be replaced by a new one at
        # once, costing a second full wait (the connect timeout) on a database that has
        # just shown it is not answering: give up instead, within one limit.
        if context.is_pre_ping and isinstance(context.original_exception, DatabaseStalled):
            context.is_disconnect = False
