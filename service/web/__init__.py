"""The HTTP API: the Flask application factory, one module per resource, all under /v1."""
from __future__ import annotations

from service.web.app import create_app

__all__ = ["create_app"]
