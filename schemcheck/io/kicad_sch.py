"""Read one ``.kicad_sch`` sheet file into plain geometry (no connectivity yet).

Works straight on the tree from :mod:`schemcheck.io.sexpr` rather than on kiutils
objects: building kiutils' objects costs more than the whole connectivity pass
(measured in ``benchmarks/bench_netlist.py``), and kiutils 1.4.8 drops things this reader
needs: KiCad 9's ``(hide yes)`` on pins, ``exclude_from_sim``, body style (``convert`` /
``body_style``), sheet-level ``dnp``, stacked pins with one number, ``lib_name``.

Coordinates are kept as integers in units of 0.1 µm (KiCad writes at most four decimals
of a millimetre), so coincidence tests are exact.
"""

from __future__ import annotations

from typing import Any

from schemcheck.drawing import (
    Instance,
    Label,
    LibPin,
    LibSymbol,
    PlacedSymbol,
    Point,
    SheetFile,
    SheetPin,
    SheetSymbol,
    grid_point,
)
from schemcheck.errors import ParseError
from schemcheck.io import sexpr


class _Bad(Exception):
    """Internal: a bad value at a tree path; turned into a located ParseError."""

    def __init__(self, path: tuple[int, ...], message: str) -> None:
        super().__init__(message)
        self.path = path
        self.message = message


def _number(node: list[Any], i: int, path: tuple[int, ...], what: str) -> float:
    if len(node) <= i:
        raise _Bad(path, f"expected a number for {what} in '({node[0]} ...)', found nothing")
    value = node[i]
    if value.__class__ is int or value.__class__ is float:
        return value
    raise _Bad(path + (i,), f"expected a number for {what} in '({node[0]} ...)', "
                            f"found {value!r}")


#: Larger than any sheet the editor draws on; beyond it a position would overflow the
#: integer grid of :mod:`schemcheck.drawing`.
MAX_COORDINATE_MM = 1_000_000.0


def _coordinate(node: list[Any], i: int, path: tuple[int, ...], what: str) -> float:
    value = _number(node, i, path, what)
    if not -MAX_COORDINATE_MM <= value <= MAX_COORDINATE_MM:
        raise _Bad(path + (i,), f"expected {what} within ±{MAX_COORDINATE_MM:.0f} mm in "
                                f"'({node[0]} ...)', found {value:g}")
    return value


def _text(node: list[Any], i: int, path: tuple[int, ...], what: str) -> str:
    if len(node) <= i or isinstance(node[i], list):
        raise _Bad(path, f"expected a text value for {what} in '({node[0]} ...)'")
    value = node[i]
    return value if value.__class__ is str else str(value)


def _yes(node: list[Any]) -> bool:
    """``(dnp yes)`` / ``(dnp)`` / ``(dnp no)``."""
    return len(node) < 2 or node[1] == "yes"


def _key(x: float, y: float) -> Point:
    return grid_point(x, y)


def _at(node: list[Any], path: tuple[int, ...]) -> tuple[float, float, float]:
    x = _coordinate(node, 1, path, "X")
    y = _coordinate(node, 2, path, "Y")
    angle = node[3] if len(node) > 3 else 0
    if not (angle.__class__ is int or angle.__class__ is float):
        raise _Bad(path + (3,), f"expected a number for the angle in '(at ...)', found {angle!r}")
    return x, y, angle


def _lists(node: list[Any], path: tuple[int, ...], start: int = 1):
    """(head, child list, tree path) of every non-empty list among ``node[start:]``."""
    for j in range(start, len(node)):
        sub = node[j]
        if sub.__class__ is list and sub:
            yield sub[0], sub, path + (j,)


def _point(node: list[Any], path: tuple[int, ...], what: str) -> Point:
    """The connection point ``(at X Y ...)`` of ``node``."""
    for head, sub, where in _lists(node, path):
        if head == "at":
            x, y, _ = _at(sub, where)
            return _key(x, y)
    raise _Bad(path, f"expected '(at X Y)' in {what}")


def read_sheet(text: str, file: str) -> SheetFile:
    """Parse ``text`` (the content of ``file``) into a :class:`SheetFile`.

    Raises :class:`ParseError` with file, line and column for malformed input.
    """
    # No connectivity rule reads what only draws; leaving it out saves about half of
    # the tokens (benchmarks/bench_netlist.py).
    tree = sexpr.parse(text, file=file, drop_cosmetic=True)
    if not tree or tree[0] != "kicad_sch":
        head = tree[0] if tree and not isinstance(tree[0], list) else "(...)"
        raise ParseError(f"expected a KiCad schematic '(kicad_sch ...)', found '({head} ...)'",
                         file=file, line=1, column=1)
    try:
        sheet = _read_tree(tree, file)
    except _Bad:
        # Slow path, for the message only: the tree paths of the full tree locate the text.
        try:
            _read_tree(sexpr.parse(text, file=file), file)
        except _Bad as bad:
            line, column, snippet = sexpr.locate(text, bad.path)
            raise ParseError(bad.message, file=file, line=line, column=column,
                             snippet=snippet) from None
        raise  # pragma: no cover - both trees hold the same values
    sheet.text = text
    return sheet


def _read_tree(tree: list[Any], file: str) -> SheetFile:
    sheet = SheetFile(path=file, version=None, generator="", generator_version="", uuid="",
                      lib_symbols={}, symbols=[], wires=[], junctions=[], no_connects=[],
                      labels=[], sheets=[])
    for head, item, path in _lists(tree, (), 0):
        if head == "symbol":
            sheet.symbols.append(_placed_symbol(item, path))
        elif head == "wire":
            sheet.wires.append(_wire(item, path))
        elif head == "junction":
            sheet.junctions.append(_point(item, path, "'(junction ...)'"))
        elif head == "no_connect":
            sheet.no_connects.append(_point(item, path, "'(no_connect ...)'"))
        elif head in ("label", "global_label", "hierarchical_label"):
            name = _text(item, 1, path, "the label name")
            sheet.labels.append(Label(head, name, _point(item, path, f"'({head} ...)'")))
        elif head == "sheet":
            sheet.sheets.append(_sheet_symbol(item, path))
        elif head == "lib_symbols":
            for sub_head, sub, where in _lists(item, path):
                if sub_head == "symbol":
                    lib = _lib_symbol(sub, where)
                    sheet.lib_symbols[lib.name] = lib
        elif head == "version":
            sheet.version = item[1] if len(item) > 1 and item[1].__class__ is int else None
            if sheet.version is None:
                raise _Bad(path, "expected the format date '(version YYYYMMDD)'")
        elif head == "generator":
            sheet.generator = _text(item, 1, path, "the generator")
        elif head == "generator_version":
            sheet.generator_version = _text(item, 1, path, "the generator version")
        elif head == "uuid":
            sheet.uuid = _text(item, 1, path, "the sheet uuid")
        elif head == "symbol_instances":
            _symbol_instances(item, path, sheet.symbol_instances)
    return sheet


def _wire(item: list[Any], path: tuple[int, ...]) -> tuple[Point, Point]:
    for head, sub, where in _lists(item, path):
        if head == "pts":
            points = [_key(_coordinate(xy, 1, at, "X"), _coordinate(xy, 2, at, "Y"))
                      for xy_head, xy, at in _lists(sub, where) if xy_head == "xy"]
            if len(points) != 2:
                raise _Bad(where, "expected two points '(xy X Y)' in a wire's '(pts ...)'")
            return points[0], points[1]
    raise _Bad(path, "expected '(pts (xy X Y) (xy X Y))' in '(wire ...)'")


def _unit_of(name: str) -> tuple[int, int]:
    """Unit and body style from a library sub-symbol name ``NAME_U_B``."""
    parts = name.rsplit("_", 2)
    if len(parts) == 3 and parts[1].isdigit() and parts[2].isdigit():
        return int(parts[1]), int(parts[2])
    return 0, 0


def _lib_symbol(item: list[Any], path: tuple[int, ...]) -> LibSymbol:
    name = _text(item, 1, path, "the library symbol name")
    lib = LibSymbol(name=name, pins=[])
    for head, sub, where in _lists(item, path, 2):
        if head == "symbol":
            unit, body = _unit_of(_text(sub, 1, where, "the unit name"))
            lib.unit_count = max(lib.unit_count, unit)
            for pin_head, pin, at in _lists(sub, where, 2):
                if pin_head == "pin":
                    lib.pins.append(_lib_pin(pin, at, unit, body))
        elif head == "pin":
            lib.pins.append(_lib_pin(sub, where, 0, 0))
        elif head == "property":
            key = sub[1] if len(sub) > 1 else ""
            if key in ("Description", "ki_description"):
                lib.description = _text(sub, 2, where, "the description")
            elif key == "ki_keywords":
                lib.keywords = _text(sub, 2, where, "the keywords")
        elif head == "power":
            lib.is_power = True
            if len(sub) > 1 and sub[1] == "local":
                lib.power_scope = "local"
    return lib


def _lib_pin(pin: list[Any], path: tuple[int, ...], unit: int, body: int) -> LibPin:
    etype = _text(pin, 1, path, "the pin's electrical type")
    x = y = None
    name = number = ""
    hidden = False
    for j, sub in enumerate(pin[2:], start=2):
        if sub.__class__ is list:
            if not sub:
                continue
            head = sub[0]
            if head == "at":
                x, y, _ = _at(sub, path + (j,))
            elif head == "name":
                name = _text(sub, 1, path + (j,), "the pin name")
            elif head == "number":
                number = _text(sub, 1, path + (j,), "the pin number")
            elif head == "hide":  # KiCad 9: (hide yes)
                hidden = _yes(sub)
        elif sub == "hide":  # KiCad 6 to 8: bare flag
            hidden = True
    if x is None or y is None:  # set together by '(at X Y A)'
        raise _Bad(path, "expected '(at X Y A)' in '(pin ...)'")
    return LibPin(number, name, etype, x, y, unit, body, hidden)


def _placed_symbol(item: list[Any], path: tuple[int, ...]) -> PlacedSymbol:
    lib_id = lib_name = mirror = uuid = ""
    x = y = angle = None
    unit = body = 1
    dnp = exclude = False
    in_bom = True
    props: dict[str, str] = {}
    instances: list[Instance] = []
    for head, sub, where in _lists(item, path):
        if head == "property":
            key = _text(sub, 1, where, "the property name")
            props[key] = _text(sub, 2, where, f"the value of property {key!r}")
        elif head == "at":
            x, y, angle = _at(sub, where)
        elif head == "lib_id":
            lib_id = _text(sub, 1, where, "the library id")
        elif head == "lib_name":
            lib_name = _text(sub, 1, where, "the library name")
        elif head == "unit":
            unit = int(_number(sub, 1, where, "the unit"))
        elif head == "convert" or head == "body_style":
            body = int(_number(sub, 1, where, "the body style"))
        elif head == "mirror":
            mirror = _text(sub, 1, where, "the mirror axis")
        elif head == "dnp":
            dnp = _yes(sub)
        elif head == "exclude_from_sim":
            exclude = _yes(sub)
        elif head == "in_bom":
            in_bom = _yes(sub)
        elif head == "uuid":
            uuid = _text(sub, 1, where, "the uuid")
        elif head == "instances":
            _instances(sub, where, instances)
    if x is None or y is None or angle is None:  # set together by '(at X Y A)'
        raise _Bad(path, "expected '(at X Y A)' in a placed '(symbol ...)'")
    if not lib_id:
        raise _Bad(path, "expected '(lib_id \"Library:Name\")' in a placed '(symbol ...)'")
    return PlacedSymbol(lib_id, lib_name, x, y, angle, mirror, unit, body, dnp, exclude, in_bom,
                        uuid, props, instances, path[0])


def _instance_entry(entry: list[Any], where: tuple[int, ...]) -> dict[str, Any]:
    """``(path "..." (reference "R1") (unit 1) (value ...) (footprint ...))``."""
    fields: dict[str, Any] = {"path": _text(entry, 1, where, "the instance path"),
                              "reference": "", "unit": None, "value": "", "footprint": ""}
    for head, sub, at in _lists(entry, where, 2):
        if head == "unit":
            fields["unit"] = int(_number(sub, 1, at, "the unit"))
        elif head.__class__ is str and head in fields:
            fields[head] = _text(sub, 1, at, head)
    return fields


def _instances(node: list[Any], path: tuple[int, ...], out: list[Instance]) -> None:
    for head, project, where in _lists(node, path):
        if head != "project":
            continue
        name = project[1] if len(project) > 1 and project[1].__class__ is str else ""
        for entry_head, entry, at in _lists(project, where, 2):
            if entry_head == "path":
                f = _instance_entry(entry, at)
                out.append(Instance(name, f["path"], f["reference"], f["unit"]))


def _symbol_instances(node: list[Any], path: tuple[int, ...],
                      out: dict[str, tuple[str, int | None, str, str]]) -> None:
    for head, entry, where in _lists(node, path):
        if head == "path":
            f = _instance_entry(entry, where)
            out[f["path"]] = (f["reference"], f["unit"], f["value"], f["footprint"])


def _sheet_symbol(item: list[Any], path: tuple[int, ...]) -> SheetSymbol:
    uuid = name = file = ""
    pins: list[SheetPin] = []
    dnp = exclude = False
    for head, sub, where in _lists(item, path):
        if head == "property":
            key = _text(sub, 1, where, "the property name")
            if key in ("Sheetname", "Sheet name"):
                name = _text(sub, 2, where, "the sheet name")
            elif key in ("Sheetfile", "Sheet file"):
                file = _text(sub, 2, where, "the sheet file")
        elif head == "uuid":
            uuid = _text(sub, 1, where, "the uuid")
        elif head == "pin":
            pin_name = _text(sub, 1, where, "the sheet pin name")
            pins.append(SheetPin(pin_name, _point(sub, where, "a sheet '(pin ...)'")))
        elif head == "dnp":
            dnp = _yes(sub)
        elif head == "exclude_from_sim":
            exclude = _yes(sub)
    if not file:
        raise _Bad(path, "expected a 'Sheetfile' property naming the child sheet file "
                         "in '(sheet ...)'")
    return SheetSymbol(uuid, name or file, file, pins, dnp, exclude, path[0])
