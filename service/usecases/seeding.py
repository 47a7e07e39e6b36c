"""`plugfit seed`: the standard sizes, and with `--demo` the invented demo shop.

The standard sizes live in seed_catalog/*.csv and are served from the loaded catalogue
(`service.catalog_loader`), not copied into the database: they are reference data
versioned with the code. Seeding them therefore means loading and checking the files,
which changes nothing and is idempotent by construction.

The demo shop (seed_catalog/demo/, invented data, clearly marked as such) is upserted
into the plugs and heads tables through the same schemas as the API, so a demo record
that the API would refuse is refused here too. Running it twice changes nothing: a
record whose values are unchanged is not written (its version and ETag stay).

Demo files are `plugs.<ext>` and `heads.<ext>`; DEMO_READERS maps an extension to a
reader yielding (line number, raw document) pairs. JSON lines are built in; another
format (the import/export CSV) is added by registering its reader there.
"""
from __future__ import annotations

import json
from collections.abc import Callable, Iterator
from dataclasses import dataclass, field
from pathlib import Path

from marshmallow import Schema, ValidationError
from sqlalchemy.orm import Session

from schemas.specs import StoredHeadSchema, StoredPlugSchema
from service.catalog_loader import load_catalog
from service.store import repository

DEMO_DIRECTORY = Path(__file__).resolve().parents[2] / "seed_catalog" / "demo"

RawRecords = Iterator[tuple[int, object]]


class SeedError(ValueError):
    """A demo record that cannot be loaded; names the file and line."""


def read_json_lines(path: Path) -> RawRecords:
    """One JSON object per line; blank lines are skipped."""
    with path.open(encoding="utf-8") as lines:
        for number, line in enumerate(lines, start=1):
            if not line.strip():
                continue
            try:
                yield number, json.loads(line)
            except ValueError as error:
                raise SeedError(f"{path.name} line {number}: not JSON ({error})") from None


def read_exchange_csv(path: Path) -> RawRecords:
    """The inventory exchange CSV (`service.formats.stock_file`); the file's stem names the resource."""
    from service.formats import stock_file

    try:
        yield from stock_file.read_csv(stock_file.decode(path.read_bytes()), stock_file.format_for(path.stem))
    except stock_file.FileUnusable as error:
        raise SeedError(f"{path.name}: {error}") from None


DEMO_READERS: dict[str, Callable[[Path], RawRecords]] = {".jsonl": read_json_lines, ".csv": read_exchange_csv}


@dataclass
class CatalogSummary:
    version: str
    threads: int
    reaches: int
    hexes: int
    torques: int


@dataclass
class DemoReport:
    files: list[str] = field(default_factory=list)
    added: int = 0
    changed: int = 0
    unchanged: int = 0


def seed_standard_sizes() -> CatalogSummary:
    """Load and check the standard-sizes files (raises ValueError naming a bad row)."""
    catalog = load_catalog()
    return CatalogSummary(catalog.version, len(catalog.threads), len(catalog.reaches),
                          len(catalog.hexes), len(catalog.torques))


def demo_files(directory: Path | None = None) -> list[tuple[str, Path]]:
    """(resource, path) of every demo file present, plugs before heads."""
    directory = directory or DEMO_DIRECTORY
    found = []
    for resource in ("plugs", "heads"):
        for extension in DEMO_READERS:
            path = directory / f"{resource}{extension}"
            if path.is_file():
                found.append((resource, path))
    return found


def seed_demo(session: Session, directory: Path | None = None) -> DemoReport:
    """Upsert the demo shop; the caller commits (nothing is written if any line fails)."""
    report = DemoReport()
    schemas: dict[str, Schema] = {"plugs": StoredPlugSchema(), "heads": StoredHeadSchema()}
    repos = {"plugs": repository.plugs(session), "heads": repository.heads(session)}
    for resource, path in demo_files(directory):
        report.files.append(path.name)
        for number, raw in DEMO_READERS[path.suffix](path):
            try:
                document = schemas[resource].load(raw)
            except ValidationError as error:
                raise SeedError(f"{path.name} line {number}: {error.messages}") from None
            _row, outcome = repos[resource].upsert(document)
            setattr(report, outcome, getattr(report, outcome) + 1)
    return report
