"""The `plugfit` command.

`main` is a click group. Each command lives in its own module under `service/commands/`
and exposes `command` (a click.Command or click.Group); list the module in
COMMAND_MODULES to register it. Commands that need the database or settings use
`service.commands.common.with_app`, which builds the app from PLUGFIT_* environment
variables when the command runs, never at import.
"""
from __future__ import annotations

import sys
from importlib import import_module

import click

COMMAND_MODULES: tuple[str, ...] = (
    "service.commands.database",
    "service.commands.seed",
    "service.commands.serve",
    "service.commands.keys",
    "service.commands.check",
    "service.commands.validate",
    "service.commands.imports",
    "service.commands.exports",
)


@click.group(context_settings={"help_option_names": ["-h", "--help"]})
@click.version_option(package_name="plugfit")
def main() -> None:
    """plugfit: does this spark plug fit this cylinder-head port?

    Settings come from PLUGFIT_* environment variables (see README.md); the database
    defaults to SQLite under instance/.
    """


for _module_name in COMMAND_MODULES:
    main.add_command(import_module(_module_name).command)


if __name__ == "__main__":  # pragma: no cover - `python -m service.cli`
    sys.exit(main())
