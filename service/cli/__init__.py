"""The `plugfit` command.

`main` is a click group. Each command lives in its own module in this package
and exposes `command` (a click.Command or click.Group); add its name and module to
`_COMMAND_NAMES` to register it (it is imported only when used). Commands that need the database or settings use
`service.cli.common.with_app`, which builds the app from PLUGFIT_* environment
variables when the command runs, never at import.
"""
from __future__ import annotations

from importlib import import_module

import click


class LazyGroup(click.Group):
    """Imports a command's module only when that command runs (or help lists it), so
    `plugfit validate` in a CI job does not import Flask and SQLAlchemy first."""

    def list_commands(self, ctx: click.Context) -> list[str]:
        return sorted(set(super().list_commands(ctx)) | set(_COMMAND_NAMES))

    def get_command(self, ctx: click.Context, name: str) -> click.Command | None:
        if name not in self.commands and name in _COMMAND_NAMES:
            self.add_command(import_module(_COMMAND_NAMES[name]).command, name)
        return super().get_command(ctx, name)


# The command name each module registers (the module's `command` may be a group).
_COMMAND_NAMES: dict[str, str] = {
    "db": "service.cli.database",
    "seed": "service.cli.seed",
    "serve": "service.cli.serve",
    "keys": "service.cli.keys",
    "check": "service.cli.check",
    "validate": "service.cli.validate",
    "import": "service.cli.imports",
    "export": "service.cli.exports",
}


@click.group(cls=LazyGroup, context_settings={"help_option_names": ["-h", "--help"]})
@click.version_option(package_name="plugfit")
def main() -> None:
    """plugfit: does this spark plug fit this cylinder-head port?

    Settings come from PLUGFIT_* environment variables (see README.md); the database
    defaults to SQLite under instance/.
    """

