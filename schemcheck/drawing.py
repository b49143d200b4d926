"""Drawing vocabulary: what one schematic sheet holds, as plain geometry.

Shared by the reader (:mod:`schemcheck.io.kicad_sch`, which fills it) and connectivity
(:mod:`schemcheck.circuit.connectivity`, which joins it into nets); imports nothing else
of ours.

Coordinates are kept as integers in units of 0.1 µm (KiCad writes at most four decimals
of a millimetre), so coincidence tests are exact.
"""

from __future__ import annotations

import math
import os
from dataclasses import dataclass, field

from schemcheck.errors import SchemcheckError

Point = tuple[int, int]
SCALE = 10_000  # coordinate units per millimetre


@dataclass(slots=True)
class LibPin:
    number: str
    name: str
    electrical_type: str
    x: float  # library coordinates, millimetres, Y up
    y: float
    unit: int
    body_style: int
    hidden: bool


@dataclass(slots=True)
class LibSymbol:
    name: str
    pins: list[LibPin]
    is_power: bool = False
    power_scope: str = "global"
    description: str = ""
    keywords: str = ""
    unit_count: int = 1


@dataclass(slots=True)
class Instance:
    project: str
    path: str
    reference: str
    unit: int | None


@dataclass(slots=True)
class PlacedSymbol:
    lib_id: str
    lib_name: str
    x: float
    y: float
    angle: float
    mirror: str
    unit: int
    body_style: int
    dnp: bool
    exclude_from_sim: bool
    in_bom: bool
    uuid: str
    properties: dict[str, str]
    instances: list[Instance]
    index: int  # position in the file's top-level list, to locate errors


@dataclass(slots=True)
class SheetPin:
    name: str
    point: Point


@dataclass(slots=True)
class SheetSymbol:
    uuid: str
    name: str
    file: str
    pins: list[SheetPin]
    dnp: bool
    exclude_from_sim: bool
    index: int


@dataclass(slots=True)
class Label:
    kind: str  # "label", "global_label", "hierarchical_label"
    name: str
    point: Point


@dataclass(slots=True)
class SheetFile:
    """Everything connectivity needs from one sheet file."""

    path: str
    version: int | None
    generator: str
    generator_version: str
    uuid: str
    lib_symbols: dict[str, LibSymbol]
    symbols: list[PlacedSymbol]
    wires: list[tuple[Point, Point]]
    junctions: list[Point]
    no_connects: list[Point]
    labels: list[Label]
    sheets: list[SheetSymbol]
    #: KiCad 6 root files only: instance path -> (reference, unit, value, footprint)
    symbol_instances: dict[str, tuple[str, int | None, str, str]] = field(default_factory=dict)
    text: str = ""


@dataclass(slots=True)
class Design:
    """The files of one design. ``sheets`` is keyed by normalised absolute path."""

    root: str
    sheets: dict[str, SheetFile]
    #: (parent file, index of the sheet symbol in it) -> child key in ``sheets`` or None
    children: dict[tuple[str, int], str | None] = field(default_factory=dict)
    problems: list[SchemcheckError] = field(default_factory=list)
    #: what was read but deserves a word (a child sheet outside the root's folder)
    warnings: list[str] = field(default_factory=list)

    @property
    def project_name(self) -> str:
        return os.path.splitext(os.path.basename(self.root))[0]


def grid_point(x: float, y: float) -> Point:
    return (round(x * SCALE), round(y * SCALE))


def pin_point(symbol: PlacedSymbol, pin: LibPin) -> Point:
    """Sheet position of ``pin`` on ``symbol``.

    Library Y is flipped (library Y up, sheet Y down), the result rotated by the
    symbol's angle counter-clockwise as seen on screen, then mirrored (``x``: vertical
    flip, ``y``: horizontal flip), then moved to the symbol's position.
    """
    px, py = pin.x, -pin.y
    angle = symbol.angle % 360
    if angle == 0:
        rx, ry = px, py
    elif angle == 90:
        rx, ry = py, -px
    elif angle == 180:
        rx, ry = -px, -py
    elif angle == 270:
        rx, ry = -py, px
    else:
        rad = math.radians(angle)
        c, s = math.cos(rad), math.sin(rad)
        rx, ry = px * c + py * s, -px * s + py * c
    if symbol.mirror == "x":
        ry = -ry
    elif symbol.mirror == "y":
        rx = -rx
    return grid_point(symbol.x + rx, symbol.y + ry)
