"""Structured logs: one JSON object per line on standard error.

Each request produces exactly one `request` line (method, path, status, duration_ms),
so a log shipper can count, time and alert without parsing prose.
"""
from __future__ import annotations

import json
import logging
import sys
import time
from datetime import UTC, datetime

from flask import Flask, Response, g, request

REQUEST_LOGGER = "plugfit.request"
_HANDLER_NAME = "plugfit-json"


class JsonLineFormatter(logging.Formatter):
    """Renders a record as one JSON object; fields passed as `extra={"fields": {...}}`
    become top-level members."""

    def format(self, record: logging.LogRecord) -> str:
        document = {
            "time": datetime.fromtimestamp(record.created, UTC).isoformat(timespec="milliseconds"),
            "level": record.levelname.lower(),
            "logger": record.name,
            "event": record.getMessage(),
        }
        document.update(getattr(record, "fields", {}))
        if record.exc_info:
            document["exception"] = self.formatException(record.exc_info)
        return json.dumps(document, default=str)


def configure(level: str = "INFO") -> None:
    """Give the `plugfit` logger one JSON handler on stderr (idempotent)."""
    logger = logging.getLogger("plugfit")
    logger.setLevel(level.upper())
    if not any(h.get_name() == _HANDLER_NAME for h in logger.handlers):
        handler = logging.StreamHandler(sys.stderr)
        handler.set_name(_HANDLER_NAME)
        handler.setFormatter(JsonLineFormatter())
        logger.addHandler(handler)


def _start_timer() -> None:
    g.request_started = time.perf_counter()


def _log_request(response: Response) -> Response:
    started = g.get("request_started")
    duration_ms = (time.perf_counter() - started) * 1000 if started is not None else None
    logging.getLogger(REQUEST_LOGGER).info(
        "request",
        extra={"fields": {
            "method": request.method,
            "path": request.path,
            "status": response.status_code,
            "duration_ms": round(duration_ms, 3) if duration_ms is not None else None,
        }},
    )
    return response


def init_app(app: Flask) -> None:
    configure(app.config["LOG_LEVEL"])
    # Registered first so the timer starts before authentication runs.
    app.before_request(_start_timer)
    app.after_request(_log_request)
