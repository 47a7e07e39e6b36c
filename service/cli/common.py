"""What every `plugfit` command shares: the app, built once per invocation, on use."""
from __future__ import annotations

from collections.abc import Callable
from functools import update_wrapper
from typing import Any

import click
from flask import Flask


class CliState:
    """Per-invocation state: the app is built on first use, from PLUGFIT_* variables."""

    def __init__(self) -> None:
        self._app: Flask | None = None

    @property
    def app(self) -> Flask:
        if self._app is None:
            from service.web import create_app

            self._app = create_app()
        return self._app


pass_state = click.make_pass_decorator(CliState, ensure=True)


def with_app(func: Callable[..., Any]) -> Callable[..., Any]:
    """Pass the app as first argument and run the command inside its app context."""

    @pass_state
    def wrapper(state: CliState, *args: Any, **kwargs: Any) -> Any:
        app = state.app
        with app.app_context():
            return func(app, *args, **kwargs)

    return update_wrapper(wrapper, func)
