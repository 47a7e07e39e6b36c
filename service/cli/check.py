"""`plugfit check`: one plug against one head port, from options or a JSON file.

The options are the build list's CSV columns written as options (`plug_reach` is
`--plug-reach`, `head_id` is `--head-id`, `torque` is `--torque`), and their values are
read exactly like CSV cells: `--plug-reach "0.75 in"`, `--head-port-depth "17.5 ± 0.2"`.
Both lists come from the schemas, so a field added there is an option here.

Exit codes: 0 nothing failed (pass, or warn: a warning may still need a look; with
--fail-on warn a warning exits 1), 1 a check failed, 2 the request cannot be used (a
field that cannot be read, an unknown sku or head_id, a wrong option).
"""
from __future__ import annotations

import sys
from collections.abc import Callable
from pathlib import Path
from typing import Any

import click

from service.cli.common import EXIT_UNUSABLE, fail, parse_checks
from service.formats.build_list import FieldSpec, field_specs


def option_name(column: str) -> str:
    return "--" + column.replace("_", "-")


def _help(spec: FieldSpec) -> str:
    """The schema field's own description (the OpenAPI document shows the same words)."""
    from marshmallow import fields

    from schemas.batch import BatchItemSchema

    schema: Any = BatchItemSchema()
    field: Any = None
    for part in spec.path:
        field = schema.fields[part]
        schema = field.schema if isinstance(field, fields.Nested) else None
    description = (field.metadata.get("description") or "") if field is not None else ""
    # The schemas append how units are written; options say it once, by example.
    description = description.split("A number")[0].strip().rstrip(".")
    owner = {"plug": "plug", "head": "head", "options": "option"}[spec.path[0]]
    text = f"{owner}: {description}" if description else f"{owner} {' '.join(map(str, spec.path[1:]))}"
    example = _EXAMPLES.get(spec.reader)
    return f"{text} ({example})" if example else text


_EXAMPLES = {"length": "e.g. 19, '0.75 in', '19 ± 0.2'", "quantity": "a number or a value with its unit",
             "temperature": "e.g. '45 degC'", "list": "comma-separated"}


def _field_options(func: Callable[..., Any]) -> Callable[..., Any]:
    for column, spec in reversed(list(field_specs().items())):
        func = click.option(option_name(column), column, metavar="VALUE", help=_help(spec))(func)
    return func


def _cells(values: dict[str, Any]) -> dict[str, str]:
    return {column: value for column, value in values.items() if column in field_specs() and value is not None}


@click.command("check", context_settings={"max_content_width": 100})
@click.option("--file", "request_file", type=click.Path(exists=True, dir_okay=False), metavar="REQUEST.json",
              help='A fit-check request document: {"plug": ..., "head": ..., "options": ...}.')
@click.option("--format", "output_format", type=click.Choice(["text", "json"]), default="text", show_default=True,
              help="json: the result document.")
@click.option("--units", type=click.Choice(["metric", "imperial"]), default="metric", show_default=True)
@click.option("--fail-on", type=click.Choice(["fail", "warn"]), default="fail", show_default=True,
              help="warn: a warning exits 1 too.")
@click.option("--svg", "svg_file", type=click.Path(dir_okay=False, writable=True), metavar="FILE",
              help="Also write the fit as a to-scale SVG drawing (the same as POST /v1/fit-checks/diagram).")
@click.option("--inventory", multiple=True, type=click.Path(exists=True, dir_okay=False), metavar="FILE",
              help="Plugs/heads for --sku and --head-id (inventory CSV export or JSON lines). "
              "Default: the local database, if migrated.")
@_field_options
def command(request_file: str | None, output_format: str, units: str, fail_on: str, svg_file: str | None,
            inventory: tuple[str, ...], **values: Any) -> None:
    """Check one plug in one head port and print the verdict, findings and geometry.

    Give the plug inline (--plug-thread, --plug-seat, --plug-reach, ...) or as --sku, and
    the head inline (--head-thread, --head-seat, --head-port-depth, ...) or as --head-id.
    Exit 0 when nothing failed (a warning may still need a look; --fail-on warn makes
    warnings exit 1, for strict pipelines), 1 when a check failed, 2 when the request
    cannot be used.
    """
    from service.catalog_loader import load_catalog
    from service.cli.lookup import UnusableInput, load_request_file, references_from
    from service.formats.build_list import BuildListError, RawItem, item_from_cells
    from service.formats.reports import error_lines, failing_verdicts, result_text
    from service.usecases.batch import check_items, load_items, resolve_references

    cells = _cells(values)
    if "require" in cells:
        cells["require"] = ",".join(parse_checks(None, None, cells["require"]))
    try:
        if request_file and cells:
            raise click.UsageError("give --file or the field options, not both")
        if request_file:
            raw = RawItem(1, load_request_file(Path(request_file)))
        elif cells:
            raw = item_from_cells(cells)
        else:
            raise click.UsageError("describe the plug and the head: see plugfit check --help")
        plugs, heads = resolve_references([raw], references_from(inventory))
        items = load_items([raw])
    except (UnusableInput, BuildListError) as error:
        fail(str(error), EXIT_UNUSABLE)
    result = check_items(items, load_catalog(), plugs, heads, units).results[0]
    if result["verdict"] == "invalid":
        lines = [line if request_file else _as_option(line) for line in error_lines(result["errors"])]
        fail("the request cannot be used:\n  " + "\n  ".join(lines), EXIT_UNUSABLE)
    if svg_file:
        from service.usecases.fit_check import draw_check

        drawing = draw_check(items[0].request, load_catalog(), plugs.get, heads.get, units)
        Path(svg_file).write_text(drawing, encoding="utf-8")
    document = {key: value for key, value in result.items() if key not in ("ref", "line", "waivers")}
    if output_format == "json":
        from service.formats.result_json import to_json

        click.echo(to_json(document, indented=True))
    else:
        click.echo(result_text(document, style=click.style), nl=False)
    sys.exit(1 if document["verdict"] in failing_verdicts(fail_on) else 0)


def _as_option(line: str) -> str:
    """`plug_reach: ...` (a column name) as `--plug-reach: ...` (the option the user typed)."""
    column, sep, message = line.partition(": ")
    return f"{option_name(column)}: {message}" if sep and " " not in column else line
