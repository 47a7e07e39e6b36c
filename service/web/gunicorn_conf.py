"""A gunicorn configuration file for running plugfit without the `plugfit` command:

    gunicorn -c python:service.web.gunicorn_conf 'service.web:create_app()'

gunicorn reads this module's top-level names as its settings, so, unlike the rest of
the package, it computes them on import (only gunicorn imports it). The values and the
worker model are documented in `service.web.serving`; `plugfit serve` uses the same function.
"""
from __future__ import annotations

from service.web.serving import gunicorn_settings

globals().update(gunicorn_settings())
