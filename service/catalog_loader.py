"""Load the neutral standards catalogue from `seed_catalog/*.csv` into a `Catalog`.

Why strict: the catalogue is reference data that every verdict leans on, and every value
must carry its source. A typo that silently became 0, a row without a source or a seat
nobody knows would turn into wrong answers far away from the file, so any such row stops
the load with a ValueError that names the file, the line and the column.

Why a content hash: results report `catalog_version`, so two answers can be compared
only if they were computed from the same data; the hash changes whenever a file does.

Pure standard library (csv, hashlib): pint and the database are not needed to read it.
"""
from __future__ import annotations

import csv
import functools
import hashlib
import io
import math
import pathlib
from collections.abc import Callable, Iterator
from typing import Any

from service.fitment.catalog import (
    HEX_FORMS,
    MATERIALS,
    SEATS,
    TURN_ANGLE_NOTES,
    Catalog,
    HexSize,
    StandardReach,
    StatedRange,
    ThreadSize,
    TorqueGuide,
)
from service.fitment.defaults import ANTI_SEIZE_CAUTION
from service.fitment.model import GRADES
from service.fitment.threads import (
    EXTERNAL_CLASSES,
    basic_minor_diameter,
    basic_pitch_diameter,
    external_root_diameter,
    limits_6g_6H,
    thread_limits,
)

CATALOG_FILES = ("threads.csv", "reaches.csv", "hexes.csv", "torques.csv")

THREAD_COLUMNS = ("designation", "nominal_diameter_mm", "pitch_mm", "seats", "standard_gasket_mm",
                  "plug_thread_class", "source")
REACH_COLUMNS = ("thread", "seat", "reach_mm", "tolerance_mm", "label", "source")
HEX_COLUMNS = ("across_flats_mm", "family", "label", "form", "socket_od_mm", "source")
TORQUE_COLUMNS = (
    "thread", "seat", "material", "min", "max", "unit", "turn_angle_deg",
    "reused_gasket_turn_angle_deg", "source",
)

# The units a torque range may be stated in, in N·m per unit: exact from the definitions
# of the pound-force (0.45359237 kg x 9.80665 m/s^2) and the foot (0.3048 m), as NIST SP
# 811 (2008, appendix B) gives them: 1 lbf·ft = 1.355 818 N·m, 1 lbf·in = 0.112 984 8 N·m.
_LBF_N = 0.45359237 * 9.80665
NEWTON_METRES_PER_TORQUE_UNIT = {"N*m": 1.0, "lbf*ft": _LBF_N * 0.3048, "lbf*in": _LBF_N * 0.0254}

# Thin-wall plug sockets run walls of roughly 1.5–2.5 mm (common practice, from memory);
# the catalogue uses the middle of that range for every hex.
THIN_WALL_SOCKET_WALL_MM = 2.0

# Sources of the values the catalogue derives rather than lists.
DERIVED_SOURCES = {
    "thread_basic_profile": "ISO 68-1 basic profile: d2 = d - 0.649519 P, d1 = d - 1.082532 P (published); "
    "ISO 965-1, the external thread's root: d3 = d - 1.226869 P (published); computed, not typed in",
    "thread_limits_6g_6H": "ISO 965-1 tolerance formulas for 6g/6H (published); the size-range means, R40 "
    "rounding and tabulated deviations the code applies are from memory, and reproduce the reference "
    "table of 6g/6H limits (derived from the published formulas) to 0.001 mm",
    "plug_thread_limits": "ISO 965-1: the plug's class differs from 6g only in its fundamental deviation, "
    "es(e) = -(50 + 11 P) um (published) as tabulated (-60, -63, -67 um for P = 1, 1.25, 1.5: from memory; "
    "-63 um agrees with the reference's derived M14x1.25 6e limits, d max 13.937 mm, d min 13.725 mm)",
    "hex_across_corners": "six-point: across flats / cos 30 deg; twelve-point: across flats / cos 15 deg "
    "(exact geometry)",
    "socket_od": f"across corners + 2 x {THIN_WALL_SOCKET_WALL_MM:g} mm thin wall "
    "(wall: common practice, from memory)",
    "inch_conversion": "1 in = 25.4 mm exactly (NIST SP 811, 2008, appendix B)",
    "torque_conversion": "1 lbf*ft = 1.355818 N*m, 1 lbf*in = 0.1129848 N*m (NIST SP 811, 2008, appendix B)",
}
# Sizes whose computed 6g/6H limits the test suite checks against the reference table
# (derived from ISO 965-1's published formulas): M8x1 shares M10x1's pitch and ISO 965-1
# size range, hence its tolerances and deviations, so it is pinned by the same check.
LIMITS_CHECKED_AGAINST_TABLE = frozenset({"M8x1", "M10x1", "M12x1.25", "M14x1.25", "M18x1.5"})
# Plug classes and pitches whose fundamental deviation the reference values pin: 6e at
# P = 1.25 (es = -63 um, from the reference's derived M14x1.25 6e limits).
PLUG_LIMITS_CHECKED = frozenset({("6e", 1.25)})
_PLUG_LIMITS_PINNED_SOURCE = ("derived: ISO 965-1's published formulas with es(e) = -63 um for P = 1.25, which the "
                              "reference's derived M14x1.25 6e limits (d max 13.937 mm, d min 13.725 mm) confirm")
_LIMITS_PINNED_SOURCE = ("derived: ISO 965-1's published formulas; for this size the result equals the "
                         "reference table of 6g/6H limits (derived from the same formulas) to 0.001 mm")

CAUTIONS = (
    ("Torque values and turn angles are guidance for clean, dry threads: the engine maker's "
    "service data, local regulations and licensed practice come first. Turn angles are after "
    "finger-tight, with a new gasket unless marked re-used."),
    ANTI_SEIZE_CAUTION,
    ("Reaches, gasket thicknesses and socket sizes marked 'common practice' or 'from memory' "
    "have no citable published source: confirm them against the part and the head."),
)

# cos of half the angle between neighbouring corners: a hexagon's corners are 60° apart,
# a twelve-point's 30°, so across corners = across flats / cos 30° or / cos 15°.
_CORNER_HALF_ANGLE_DEG = {"six-point": 30.0, "twelve-point": 15.0}


def across_corners_mm(across_flats_mm: float, form: str = "six-point") -> float:
    """Across corners of a hex: across flats / cos 30° (six-point) or / cos 15° (twelve-point,
    bi-hex), exact geometry. A twelve-point socket on a six-point hex reaches the six-point's
    corners (its recess is two hexagons turned 30°); a twelve-point shell is slimmer."""
    return across_flats_mm / math.cos(math.radians(_CORNER_HALF_ANGLE_DEG[form]))


def thin_wall_socket_od_mm(across_flats_mm: float, form: str = "six-point",
                           wall_mm: float = THIN_WALL_SOCKET_WALL_MM) -> float:
    """Outside diameter of a thin-wall socket for this hex: across corners + 2 × wall."""
    return across_corners_mm(across_flats_mm, form) + 2.0 * wall_mm


def default_catalog_directory() -> pathlib.Path:
    """The installed `seed_catalog` package directory (works from a checkout or a pip install)."""
    import seed_catalog

    return pathlib.Path(seed_catalog.__file__).resolve().parent


def load_catalog(directory: pathlib.Path | None = None) -> Catalog:
    """The catalogue in `directory` (default: the installed seed catalogue), cached.

    The cache key is the directory plus each file's size and modification time, so a
    changed file is read again and everything else costs four stat calls.
    """
    if directory is None:
        return _default_catalog()
    root = directory.resolve()
    return _load_cached(root, _fingerprint(root))


@functools.lru_cache(maxsize=1)
def _default_catalog() -> Catalog:
    """The installed catalogue, read once per process: it is looked up on every request
    and every loaded thread field, where even four stat calls would show."""
    root = default_catalog_directory()
    return _load_cached(root, _fingerprint(root))


def _fingerprint(root: pathlib.Path) -> tuple[tuple[str, int, int], ...]:
    stamps = []
    for name in CATALOG_FILES:
        try:
            stat = (root / name).stat()
        except FileNotFoundError:
            raise ValueError(f"{root / name}: catalogue file is missing") from None
        stamps.append((name, stat.st_size, stat.st_mtime_ns))
    return tuple(stamps)


@functools.lru_cache(maxsize=16)
def _load_cached(root: pathlib.Path, _fingerprint: tuple[tuple[str, int, int], ...]) -> Catalog:
    contents = {name: (root / name).read_bytes() for name in CATALOG_FILES}
    threads = _read_threads(root / "threads.csv", contents["threads.csv"])
    reaches = _read_reaches(root / "reaches.csv", contents["reaches.csv"], threads)
    hexes = _read_hexes(root / "hexes.csv", contents["hexes.csv"])
    torques = _read_torques(root / "torques.csv", contents["torques.csv"], threads)
    return Catalog(
        version=catalog_version(contents),
        threads=threads,
        reaches=reaches,
        hexes=hexes,
        torques=torques,
        sources=dict(DERIVED_SOURCES),
    )


def catalog_version(contents: dict[str, bytes]) -> str:
    """First 12 hex digits of SHA-256 over each file's name and bytes, in sorted order."""
    digest = hashlib.sha256()
    for name in sorted(contents):
        digest.update(name.encode() + b"\0" + contents[name] + b"\0")
    return digest.hexdigest()[:12]


# --- reading rows -----------------------------------------------------------------------


class _Row:
    """One CSV row with its position, so every error can say where it is."""

    def __init__(self, path: pathlib.Path, line: int, values: dict[str, str]) -> None:
        self.path, self.line, self.values = path, line, values

    def error(self, column: str, problem: str) -> ValueError:
        return ValueError(f"{self.path.name}: line {self.line}, column {column!r}: {problem}")

    def text(self, column: str) -> str:
        value = self.values[column].strip()
        if not value:
            raise self.error(column, "is empty")
        return value

    def number(self, column: str, *, positive: bool = True) -> float:
        raw = self.text(column)
        try:
            value = float(raw)
        except ValueError:
            raise self.error(column, f"{raw!r} is not a number") from None
        if not math.isfinite(value) or (positive and value <= 0) or value < 0:
            raise self.error(column, f"{raw!r} must be a finite {'positive' if positive else 'non-negative'} number")
        return value

    def optional_number(self, column: str) -> float | None:
        return self.number(column) if self.values[column].strip() else None

    def choice(self, column: str, allowed: tuple[str, ...]) -> str:
        value = self.text(column)
        if value not in allowed:
            raise self.error(column, f"{value!r} is not one of {', '.join(allowed)}")
        return value


def _rows(path: pathlib.Path, content: bytes, columns: tuple[str, ...]) -> Iterator[_Row]:
    try:
        text = content.decode("utf-8")
    except UnicodeDecodeError as exc:
        raise ValueError(f"{path.name}: line 1, column '*': not UTF-8 ({exc.reason})") from None
    reader = csv.reader(io.StringIO(text, newline=""))
    header = next(reader, None)
    if header is None:
        raise ValueError(f"{path.name}: line 1, column '*': the file is empty")
    if tuple(h.strip() for h in header) != columns:
        missing = [c for c in columns if c not in header]
        extra = [h for h in header if h not in columns]
        column = (missing or extra or ["*"])[0]
        raise ValueError(
            f"{path.name}: line 1, column {column!r}: the header must be {','.join(columns)} "
            f"(missing {missing or 'none'}, unexpected {extra or 'none'})"
        )
    for cells in reader:
        line = reader.line_num
        if not any(cell.strip() for cell in cells):
            continue
        if len(cells) != len(columns):
            column = columns[len(cells)] if len(cells) < len(columns) else f"#{len(cells)}"
            raise ValueError(
                f"{path.name}: line {line}, column {column!r}: expected {len(columns)} cells, found {len(cells)}"
            )
        row = _Row(path, line, dict(zip(columns, cells, strict=False)))
        source = row.text("source")  # every value names where it comes from, and how sure it is
        if not any(grade in source for grade in GRADES):
            raise row.error("source", f"names no grade ({', '.join(GRADES)})")
        yield row


def _unique(seen: dict[Any, int], key: Any, row: _Row, column: str) -> None:
    if key in seen:
        raise row.error(column, f"duplicate of line {seen[key]} ({key})")
    seen[key] = row.line


def _known_thread(threads: dict[str, ThreadSize], row: _Row) -> ThreadSize:
    name = row.text("thread")
    if name not in threads:
        raise row.error("thread", f"{name!r} is not in threads.csv")
    size = threads[name]
    seat = row.choice("seat", SEATS)
    if seat not in size.seats:
        raise row.error("seat", f"{name} has no {seat} seat in threads.csv")
    return size


def _read_threads(path: pathlib.Path, content: bytes) -> dict[str, ThreadSize]:
    threads: dict[str, ThreadSize] = {}
    seen: dict[Any, int] = {}
    for row in _rows(path, content, THREAD_COLUMNS):
        designation = row.text("designation")
        _unique(seen, designation, row, "designation")
        diameter, pitch = row.number("nominal_diameter_mm"), row.number("pitch_mm")
        if designation != f"M{diameter:g}x{pitch:g}":
            raise row.error("designation", f"{designation!r} does not match M{diameter:g}x{pitch:g}")
        seats = [s.strip() for s in row.text("seats").split(";")]
        for seat in seats:
            if seat not in SEATS:
                raise row.error("seats", f"{seat!r} is not one of {', '.join(SEATS)}")
        if len(set(seats)) != len(seats):
            raise row.error("seats", "lists a seat twice")
        gasket = row.optional_number("standard_gasket_mm")
        if ("flat" in seats) != (gasket is not None):
            raise row.error("standard_gasket_mm", "is required exactly when the size has a flat seat")
        threads[designation] = ThreadSize(
            designation, diameter, pitch, frozenset(seats), gasket, row.text("source"),
            row.choice("plug_thread_class", EXTERNAL_CLASSES),
        )
    return threads


def _read_reaches(path: pathlib.Path, content: bytes, threads: dict[str, ThreadSize]) -> tuple[StandardReach, ...]:
    reaches = []
    seen: dict[Any, int] = {}
    for row in _rows(path, content, REACH_COLUMNS):
        size = _known_thread(threads, row)
        seat, reach = row.text("seat"), row.number("reach_mm")
        _unique(seen, (size.designation, seat, reach), row, "reach_mm")
        reaches.append(StandardReach(
            size.designation, seat, reach, row.optional_number("tolerance_mm"), row.text("label"), row.text("source")
        ))
    return tuple(reaches)


def _read_hexes(path: pathlib.Path, content: bytes) -> tuple[HexSize, ...]:
    hexes = []
    seen: dict[Any, int] = {}
    for row in _rows(path, content, HEX_COLUMNS):
        across_flats = row.number("across_flats_mm")
        _unique(seen, across_flats, row, "across_flats_mm")
        form = row.choice("form", HEX_FORMS)
        socket_od = row.number("socket_od_mm")
        if socket_od <= across_corners_mm(across_flats, form):
            raise row.error("socket_od_mm", f"{socket_od:g} mm is not wider than the {form} hex's corners "
                                            f"({across_corners_mm(across_flats, form):.3f} mm)")
        hexes.append(HexSize(across_flats, row.text("family"), row.text("label"), socket_od, row.text("source"),
                             form))
    return tuple(sorted(hexes, key=lambda h: h.across_flats_mm))


def _read_torques(
    path: pathlib.Path, content: bytes, threads: dict[str, ThreadSize]
) -> dict[tuple[str, str, str], TorqueGuide]:
    torques: dict[tuple[str, str, str], TorqueGuide] = {}
    seen: dict[Any, int] = {}
    for row in _rows(path, content, TORQUE_COLUMNS):
        size = _known_thread(threads, row)
        seat, material = row.text("seat"), row.choice("material", MATERIALS)
        key = (size.designation, seat, material)
        _unique(seen, key, row, "material")
        low, high = row.number("min"), row.number("max")
        if low > high:
            raise row.error("max", f"{high:g} is below min {low:g}")
        unit = row.choice("unit", tuple(NEWTON_METRES_PER_TORQUE_UNIT))
        reused = row.optional_number("reused_gasket_turn_angle_deg")
        if reused is not None and seat != "flat":
            raise row.error("reused_gasket_turn_angle_deg", "only a flat seat has a gasket to re-use")
        factor = NEWTON_METRES_PER_TORQUE_UNIT[unit]
        stated = StatedRange(low, high, unit, min(_step(row.text("min")), _step(row.text("max"))), factor)
        torques[key] = TorqueGuide(
            size.designation, seat, material, low * factor, high * factor,
            row.optional_number("turn_angle_deg"), row.text("source"), reused, stated,
        )
    return torques


def _step(number: str) -> float:
    """The step of a number's last printed digit: "35" -> 1, "12.5" -> 0.1."""
    decimals = len(number.partition(".")[2])
    return 10.0 ** -decimals


# --- the JSON view ----------------------------------------------------------------------


def catalog_as_document(catalog: Catalog) -> dict[str, Any]:
    """A JSON-ready view of the whole catalogue, every value beside its source.

    Served at GET /v1/standard-sizes. Derived numbers (ISO 68-1 basic diameters, ISO 965-1
    limits, hex across-corners) are computed here so the document and the engine agree.
    """
    threads = []
    for size in sorted(catalog.threads.values(), key=lambda t: t.nominal_diameter_mm):
        d, p = size.nominal_diameter_mm, size.pitch_mm
        limits = limits_6g_6H(d, p)
        plug_limits = thread_limits(d, p, size.plug_thread_class)
        threads.append({
            "designation": size.designation,
            "nominal_diameter_mm": d,
            "pitch_mm": p,
            "seats": sorted(size.seats),
            "standard_gasket_mm": size.standard_gasket_mm,
            "plug_thread_class": size.plug_thread_class,
            "source": size.source,
            "basic_diameters": {
                "pitch_diameter_mm": _r(basic_pitch_diameter(d, p)),
                "minor_diameter_mm": _r(basic_minor_diameter(d, p)),
                "external_root_diameter_mm": _r(external_root_diameter(d, p)),
                "source": DERIVED_SOURCES["thread_basic_profile"],
            },
            "limits_6g_6H": {
                "external_major_mm": [_r(limits.external_major_min_mm), _r(limits.external_major_max_mm)],
                "external_pitch_mm": [_r(limits.external_pitch_min_mm), _r(limits.external_pitch_max_mm)],
                "internal_pitch_mm": [_r(limits.internal_pitch_min_mm), _r(limits.internal_pitch_max_mm)],
                "internal_minor_mm": [_r(limits.internal_minor_min_mm), _r(limits.internal_minor_max_mm)],
                "source": _LIMITS_PINNED_SOURCE if size.designation in LIMITS_CHECKED_AGAINST_TABLE
                else DERIVED_SOURCES["thread_limits_6g_6H"],
            },
            "plug_thread_limits": {
                "thread_class": size.plug_thread_class,
                "external_major_mm": [_r(plug_limits.external_major_min_mm), _r(plug_limits.external_major_max_mm)],
                "external_pitch_mm": [_r(plug_limits.external_pitch_min_mm), _r(plug_limits.external_pitch_max_mm)],
                "source": _PLUG_LIMITS_PINNED_SOURCE if (size.plug_thread_class, p) in PLUG_LIMITS_CHECKED
                else DERIVED_SOURCES["plug_thread_limits"],
            },
            "reaches": [
                {"seat": r.seat, "reach_mm": r.reach_mm, "tolerance_mm": r.tolerance_mm,
                 "label": r.label, "source": r.source}
                for r in sorted(catalog.reaches, key=lambda r: (r.seat, r.reach_mm))
                if r.thread == size.designation
            ],
        })
    hexes = [
        {"across_flats_mm": h.across_flats_mm, "family": h.family, "label": h.label, "form": h.form,
         "across_corners_mm": _r(across_corners_mm(h.across_flats_mm, h.form)),
         "socket_od_mm": h.socket_od_mm, "source": h.source}
        for h in catalog.hexes
    ]
    families: dict[str, list[str]] = {}
    for h in catalog.hexes:
        families.setdefault(h.family, []).append(h.label)
    torque = [
        {"thread": t.thread, "seat": t.seat, "material": t.material,
         "min_nm": t.min_nm, "max_nm": t.max_nm, "unit": "N*m",
         "as_stated": None if t.stated is None else {"min": t.stated.min, "max": t.stated.max,
                                                      "unit": t.stated.unit},
         "turn_angle_deg": t.turn_angle_deg, "turn_angle_note": TURN_ANGLE_NOTES[t.seat],
         "reused_gasket_turn_angle_deg": t.reused_gasket_turn_angle_deg, "source": t.source}
        for t in sorted(catalog.torques.values(), key=_torque_order(catalog))
    ]
    return {
        "catalog_version": catalog.version,
        "threads": threads,
        "hexes": hexes,
        "hex_families": [{"family": name, "members": labels} for name, labels in families.items()],
        "torque": torque,
        "sources": dict(catalog.sources),
        "cautions": list(CAUTIONS),
    }


def _r(value: float) -> float:
    # Three decimals: the precision ISO 724 and ISO 965-1 tabulate in.
    return round(value, 3)


def _torque_order(catalog: Catalog) -> Callable[[TorqueGuide], tuple[float, str, str]]:
    def key(t: TorqueGuide) -> tuple[float, str, str]:
        size = catalog.threads.get(t.thread)
        return (size.nominal_diameter_mm if size else math.inf, t.seat, t.material)
    return key
