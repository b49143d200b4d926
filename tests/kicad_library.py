"""Place every symbol of one of the editor's own symbol libraries on a generated sheet.

The libraries are KiCad's official ones as Debian packages them (``kicad-symbols``,
KiCad 6 format ``.kicad_sym`` under ``/usr/share/kicad/symbols``). A derived symbol
(``(extends "PARENT")``) holds only its own properties; the editor copies the parent's
units into it when it places the symbol, and so does :func:`flatten` here, so the sheet
carries every placed symbol's full drawing in its ``lib_symbols`` as the editor writes it.
"""

from __future__ import annotations

import re
from pathlib import Path
from typing import Any

from schemcheck.io.sexpr import parse

SYMBOLS = Path("/usr/share/kicad/symbols")
_BARE = re.compile(r"^[a-z_][a-z0-9_]*$")


def _write(node: Any) -> str:
    """A tree from :func:`schemcheck.io.sexpr.parse` back into S-expression text."""
    if isinstance(node, list):
        if not node:
            return "()"
        head = node[0] if isinstance(node[0], str) and _BARE.match(node[0]) else _write(node[0])
        return "(" + " ".join([head] + [_write(n) if isinstance(n, list) else _atom(n)
                                        for n in node[1:]]) + ")"
    return _atom(node)


def _atom(value: Any) -> str:
    if isinstance(value, (int, float)):
        return repr(value)
    if isinstance(value, str) and value in ("hide", "line", "input", "output", "passive",
                                            "bidirectional", "tri_state", "power_in",
                                            "power_out", "open_collector", "open_emitter",
                                            "no_connect", "unspecified", "free", "yes", "no"):
        return value
    text = str(value).replace("\\", "\\\\").replace('"', '\\"').replace("\n", "\\n")
    return f'"{text}"'


def library(path: Path) -> dict[str, list[Any]]:
    """The symbols of the library file at ``path`` by name, derived ones flattened."""
    tree = parse(path.read_text(encoding="utf-8"), file=str(path))
    raw = {node[1]: node for node in tree[1:] if isinstance(node, list) and node
           and node[0] == "symbol"}
    return {name: flatten(name, raw) for name in raw}


def flatten(name: str, raw: dict[str, list[Any]]) -> list[Any]:
    """Symbol ``name`` with its parent's units copied in, renamed ``NAME_U_B``."""
    node = raw[name]
    parent = next((sub[1] for sub in node if isinstance(sub, list) and sub
                   and sub[0] == "extends"), None)
    if parent is None:
        return node
    base = flatten(parent, raw)
    own = [sub for sub in node[2:] if isinstance(sub, list) and sub and sub[0] != "extends"]
    own_props = {sub[1] for sub in own if sub[0] == "property"}
    out: list[Any] = ["symbol", name]
    for sub in base[2:]:
        if not isinstance(sub, list) or not sub:
            continue
        if sub[0] == "property" and sub[1] in own_props:
            continue
        if sub[0] == "symbol":
            sub = ["symbol", name + sub[1][len(parent):]] + sub[2:]
        out.append(sub)
    out.extend(own)
    return out


def unit_count(symbol: list[Any]) -> int:
    count = 1
    for sub in symbol[2:]:
        if isinstance(sub, list) and sub and sub[0] == "symbol":
            match = re.search(r"_(\d+)_(\d+)$", sub[1])
            if match:
                count = max(count, int(match.group(1)))
    return count


def library_sheet(lib: str, symbols: dict[str, list[Any]]) -> tuple[str, dict[str, str]]:
    """A schematic placing every unit of every symbol in ``symbols`` (library ``lib``),
    and the reference given to each symbol name. Pins are left unwired: each is a net."""
    sheet_uuid = "00000000-0000-4000-8000-000000000000"
    libs = []
    placed = []
    refs: dict[str, str] = {}
    serial = 0
    for index, (name, symbol) in enumerate(sorted(symbols.items()), start=1):
        full = f"{lib}:{name}"
        libs.append(_write(["symbol", full] + symbol[2:]))
        ref = f"X{index}"
        refs[name] = ref
        for unit in range(1, unit_count(symbol) + 1):
            serial += 1
            x, y = 25.4 * (serial % 40), 25.4 * (serial // 40)
            uid = f"00000000-0000-4000-8000-{serial:012d}"
            placed.append(
                f'(symbol (lib_id "{full}") (at {x:.2f} {y:.2f} 0) (unit {unit}) '
                f'(in_bom yes) (on_board yes) (dnp no) (uuid "{uid}") '
                f'(property "Reference" "{ref}" (at 0 0 0)) '
                f'(property "Value" {_atom(name)} (at 0 0 0)) '
                f'(instances (project "lib" (path "/{sheet_uuid}" (reference "{ref}") '
                f'(unit {unit})))))')
    text = (f'(kicad_sch (version 20211123) (generator eeschema) (uuid "{sheet_uuid}") '
            f'(paper "A0")\n(lib_symbols\n' + "\n".join(libs) + "\n)\n"
            + "\n".join(placed) + "\n(sheet_instances (path \"/\" (page \"1\"))))\n")
    return text, refs
