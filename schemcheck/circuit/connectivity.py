"""Wires, junctions, labels, sheets and power symbols -> nets (pure; no file access).

Rules (KiCad's, as its file-format documentation and editor behave):

* items connect where their connection points coincide: pin ends, wire ends, junctions,
  labels, sheet pins, no-connect flags;
* a wire end, a junction or a label lying on the interior of a wire connects to that
  wire; wires that merely cross do not;
* local labels join within one sheet instance; global labels and global power symbols
  (by their value) across the design; a hierarchical label joins the pin of the same
  name on the sheet symbol that placed its sheet;
* a hidden power-input pin of an ordinary symbol joins the design-wide net named by the
  pin's name;
* only pins of the placed unit (unit 0 pins belong to every unit) and body style count.

Buses are not followed: members of a bus are joined by their labels, as KiCad does;
the bus lines themselves carry no net.

Work is done once per sheet *file* (a local union-find over points) and then once per
sheet *instance* (a global union-find over the local groups), so a sheet placed five
times is scanned once.
"""

from __future__ import annotations

import re
from bisect import bisect_left, bisect_right
from dataclasses import dataclass, field

from schemcheck.drawing import Design, LibSymbol, PlacedSymbol, Point, SheetFile, pin_point
from schemcheck.model import Net, Netlist, Node, Part, Pin
from schemcheck.model import natural_key as _natural

_PRIORITY = {"power": 6, "global_label": 5, "label": 4, "hierarchical_label": 3}
_KIND_OF_PRIORITY = {value: key for key, value in _PRIORITY.items()}
#: Bus vectors ``D[0..7]`` and bus groups ``{A B}`` / ``NAME{A B}``; not ``~{X}`` (overbar),
#: ``_{X}`` or ``^{X}`` (sub/superscript markup), which are ordinary net names.
_BUS_NAME = re.compile(r"\[\d+\.\.\d+\]|(?:^|[^~_^])\{")


# ---------------------------------------------------------------------------
# Per sheet file: points -> local groups


class _UnionFind:
    __slots__ = ("parent",)

    def __init__(self, size: int = 0) -> None:
        self.parent = list(range(size))

    def add(self) -> int:
        self.parent.append(len(self.parent))
        return len(self.parent) - 1

    def find(self, item: int) -> int:
        parent = self.parent
        root = item
        while parent[root] != root:
            root = parent[root]
        while parent[item] != root:
            parent[item], item = root, parent[item]
        return root

    def union(self, a: int, b: int) -> None:
        ra, rb = self.find(a), self.find(b)
        if ra != rb:
            if ra < rb:
                self.parent[rb] = ra
            else:
                self.parent[ra] = rb


@dataclass(slots=True)
class _PlacedPin:
    symbol: PlacedSymbol
    lib: LibSymbol
    pin: Pin
    group: int


@dataclass(slots=True)
class _LocalGraph:
    """Connectivity of one sheet file, independent of where it is placed."""

    size: int
    group: list[int]  # point id -> local group id (canonical root)
    pins: list[_PlacedPin] = field(default_factory=list)
    labels: list[tuple[str, str, int]] = field(default_factory=list)  # kind, name, group
    sheet_pins: dict[tuple[int, str], int] = field(default_factory=dict)  # (sheet idx, name)
    unknown_symbols: list[PlacedSymbol] = field(default_factory=list)
    pins_of: dict[int, tuple[Pin, ...]] = field(default_factory=dict)  # id(symbol) -> pins


def _points_on_segment(a: Point, b: Point, by_x: dict[int, list[int]],
                       by_y: dict[int, list[int]], xs_sorted: list[int]) -> list[Point]:
    """Candidate points strictly inside segment a-b (exact integer geometry)."""
    (x1, y1), (x2, y2) = a, b
    if y1 == y2:
        xs = by_y.get(y1)
        if not xs:
            return []
        lo, hi = (x1, x2) if x1 < x2 else (x2, x1)
        return [(x, y1) for x in xs[bisect_right(xs, lo):bisect_left(xs, hi)]]
    if x1 == x2:
        ys = by_x.get(x1)
        if not ys:
            return []
        lo, hi = (y1, y2) if y1 < y2 else (y2, y1)
        return [(x1, y) for y in ys[bisect_right(ys, lo):bisect_left(ys, hi)]]
    found = []
    xlo, xhi = (x1, x2) if x1 < x2 else (x2, x1)
    ylo, yhi = (y1, y2) if y1 < y2 else (y2, y1)
    for x in xs_sorted[bisect_right(xs_sorted, xlo):bisect_left(xs_sorted, xhi)]:
        ys = by_x[x]
        for y in ys[bisect_left(ys, ylo):bisect_right(ys, yhi)]:
            if (x2 - x1) * (y - y1) == (y2 - y1) * (x - x1):
                found.append((x, y))
    return found


def local_graph(sheet: SheetFile) -> _LocalGraph:
    """Group the connection points of one sheet file."""
    ids: dict[Point, int] = {}
    uf = _UnionFind()

    def point_id(point: Point) -> int:
        found = ids.get(point)
        if found is None:
            found = ids[point] = uf.add()
        return found

    for a, b in sheet.wires:
        uf.union(point_id(a), point_id(b))
    # points that attach to a wire's interior: wire ends, junctions, labels
    attach: set[Point] = {p for wire in sheet.wires for p in wire}
    attach.update(sheet.junctions)
    attach.update(label.point for label in sheet.labels)
    by_x: dict[int, list[int]] = {}
    by_y: dict[int, list[int]] = {}
    for x, y in attach:
        by_x.setdefault(x, []).append(y)
        by_y.setdefault(y, []).append(x)
    for values in by_x.values():
        values.sort()
    for values in by_y.values():
        values.sort()
    xs_sorted = sorted(by_x)
    for a, b in sheet.wires:
        inner = _points_on_segment(a, b, by_x, by_y, xs_sorted)
        if inner:
            wire_id = ids[a]
            for point in inner:
                uf.union(wire_id, point_id(point))

    graph_pins: list[tuple[PlacedSymbol, LibSymbol, Pin, int]] = []
    unknown: list[PlacedSymbol] = []
    for symbol in sheet.symbols:
        lib = sheet.lib_symbols.get(symbol.lib_name or symbol.lib_id)
        if lib is None:
            lib = sheet.lib_symbols.get(symbol.lib_id)
        if lib is None:
            unknown.append(symbol)
            continue
        for lib_pin in lib.pins:
            if (lib_pin.unit not in (0, symbol.unit)
                    or lib_pin.body_style not in (0, symbol.body_style)):
                continue
            pin = Pin(lib_pin.number, lib_pin.name, lib_pin.electrical_type,
                      lib_pin.unit, lib_pin.hidden)
            graph_pins.append((symbol, lib, pin, point_id(pin_point(symbol, lib_pin))))
    label_ids = [(label.kind, label.name, point_id(label.point)) for label in sheet.labels]
    sheet_pin_ids = {(s.index, p.name): point_id(p.point) for s in sheet.sheets for p in s.pins}
    for point in sheet.no_connects:
        point_id(point)

    group = [uf.find(i) for i in range(len(uf.parent))]
    graph = _LocalGraph(size=len(group), group=group, unknown_symbols=unknown)
    graph.pins = [_PlacedPin(s, lib, pin, group[i]) for s, lib, pin, i in graph_pins]
    pins_of: dict[int, list[Pin]] = {}
    for symbol, _, pin, _ in graph_pins:
        pins_of.setdefault(id(symbol), []).append(pin)
    graph.pins_of = {key: tuple(value) for key, value in pins_of.items()}
    graph.labels = [(kind, name, group[i]) for kind, name, i in label_ids
                    if not _BUS_NAME.search(name)]
    graph.sheet_pins = {key: group[i] for key, i in sheet_pin_ids.items()}
    return graph


# ---------------------------------------------------------------------------
# Per sheet instance: the hierarchy


@dataclass(slots=True)
class SheetInstance:
    file: str  # key into Design.sheets
    names: str  # "/" or "/Channel A/"
    uuids: tuple[str, ...]  # sheet-symbol uuids from the root down (root excluded)
    parent: int | None  # index of the parent instance
    sheet_index: int | None  # index of the sheet symbol in the parent's file
    dnp: bool = False
    exclude_from_sim: bool = False
    offset: int = 0  # first global id of this instance's local groups


def instances(design: Design) -> list[SheetInstance]:
    """Every sheet instance, root first, depth first, in file order."""
    out = [SheetInstance(design.root, "/", (), None, None)]
    stack = [0]
    while stack:
        index = stack.pop()
        inst = out[index]
        sheet = design.sheets[inst.file]
        children = []
        for symbol in sheet.sheets:
            target = design.children.get((inst.file, symbol.index))
            if target is None or target not in design.sheets:
                continue
            if len(inst.uuids) >= 64:  # deeper than any real design: a loop
                continue
            children.append(SheetInstance(
                target, f"{inst.names}{symbol.name}/", inst.uuids + (symbol.uuid,), index,
                symbol.index, inst.dnp or symbol.dnp,
                inst.exclude_from_sim or symbol.exclude_from_sim))
        for child in reversed(children):
            out.append(child)
            stack.append(len(out) - 1)
    return out


def _reference(symbol: PlacedSymbol, inst: SheetInstance, design: Design,
               root: SheetFile) -> tuple[str, int, str | None]:
    """(reference, unit, value override) of ``symbol`` in sheet instance ``inst``."""
    path7 = "/" + root.uuid + "".join("/" + u for u in inst.uuids)
    chosen = None
    for entry in symbol.instances:
        if entry.path == path7:
            if chosen is None or entry.project == design.project_name:
                chosen = entry
    if chosen is not None:
        return chosen.reference, chosen.unit or symbol.unit, None
    if root.symbol_instances:
        path6 = "".join("/" + u for u in inst.uuids) + "/" + symbol.uuid
        found = root.symbol_instances.get(path6)
        if found is not None:
            reference, unit, value, _ = found
            return reference, unit or symbol.unit, value or None
    if len(symbol.instances) == 1 and inst.parent is None:
        return symbol.instances[0].reference, symbol.instances[0].unit or symbol.unit, None
    return symbol.properties.get("Reference", "?"), symbol.unit, None


@dataclass(slots=True)
class _Joining:
    """The design-wide union-find over every instance's local groups, and what is
    gathered on the way: name candidates, parts, pin nodes, warnings."""

    uf: _UnionFind
    names: dict[int, list[tuple[int, int, str]]] = field(default_factory=dict)
    by_global_name: dict[str, int] = field(default_factory=dict)
    warnings: list[str] = field(default_factory=list)
    parts: list[Part] = field(default_factory=list)
    nodes: list[tuple[int, Node]] = field(default_factory=list)

    def name_candidate(self, gid: int, kind: str, depth: int, name: str) -> None:
        """(priority, depth, name): the lowest tuple names the net."""
        self.names.setdefault(gid, []).append((-_PRIORITY[kind], depth, name))

    def join_global(self, gid: int, name: str) -> None:
        other = self.by_global_name.setdefault(name, gid)
        if other != gid:
            self.uf.union(other, gid)

    def join_local(self, local: dict[str, int], key: str, gid: int) -> None:
        other = local.setdefault(key, gid)
        if other != gid:
            self.uf.union(other, gid)


def build_netlist(design: Design) -> Netlist:
    """Connect every sheet instance of ``design`` into one :class:`Netlist`, in steps:
    the local groups of every sheet file, the sheet instances, then per instance its
    labels, its sheet pins and its symbols' pins; last, the nets and their names."""
    root = design.sheets[design.root]
    graphs = {key: local_graph(sheet) for key, sheet in design.sheets.items()}
    insts = instances(design)
    total = 0
    for inst in insts:
        inst.offset = total
        total += graphs[inst.file].size
    joining = _Joining(_UnionFind(total))
    for inst in insts:
        graph = graphs[inst.file]
        local_by_name = _join_labels(joining, inst, graph)
        if inst.parent is not None:
            parent = insts[inst.parent]
            _join_sheet_pins(joining, inst, graph, parent, graphs[parent.file])
        _place_symbols(joining, design, root, inst, graph, local_by_name)
    _check_duplicates(joining.parts, joining.warnings)
    nets = _name_nets(joining)
    parts = sorted(joining.parts, key=lambda p: (_natural(p.ref), p.unit, p.sheet))
    files = tuple(sheet.path for sheet in design.sheets.values())
    return Netlist(nets=tuple(nets), parts=tuple(parts), source=root.path, format="kicad_sch",
                   version=str(root.version or ""), files=files,
                   warnings=tuple(joining.warnings))


def _join_labels(joining: _Joining, inst: SheetInstance, graph: _LocalGraph
                 ) -> dict[str, int]:
    """Global labels across the design, local labels (and a root sheet's hierarchical
    labels) within the instance; every label a name candidate. Returns the instance's
    local names (power symbols of local scope join them later)."""
    off = inst.offset
    depth = inst.names.count("/") - 1
    local_by_name: dict[str, int] = {}
    for kind, name, group in graph.labels:
        gid = off + group
        if kind == "global_label":
            joining.join_global(gid, name)
            joining.name_candidate(gid, kind, depth, name)
        elif kind == "label" or (kind == "hierarchical_label" and inst.parent is None):
            joining.join_local(local_by_name, name, gid)
            joining.name_candidate(gid, "label", depth, inst.names + name)
        else:
            joining.name_candidate(gid, kind, depth, inst.names + name)
    return local_by_name


def _join_sheet_pins(joining: _Joining, inst: SheetInstance, graph: _LocalGraph,
                     parent: SheetInstance, parent_graph: _LocalGraph) -> None:
    """A hierarchical label joins the pin of the same name on the sheet symbol that
    placed the instance."""
    hier: dict[str, list[int]] = {}
    for kind, name, group in graph.labels:
        if kind == "hierarchical_label":
            hier.setdefault(name, []).append(inst.offset + group)
    for (sheet_index, pin_name), group in parent_graph.sheet_pins.items():
        if sheet_index != inst.sheet_index:
            continue
        targets = hier.get(pin_name)
        if not targets:
            joining.warnings.append(f"sheet pin {pin_name!r} of sheet {inst.names!r} has no "
                                    "hierarchical label of that name inside the sheet")
            continue
        for target in targets:
            joining.uf.union(parent.offset + group, target)


def _place_symbols(joining: _Joining, design: Design, root: SheetFile, inst: SheetInstance,
                   graph: _LocalGraph, local_by_name: dict[str, int]) -> None:
    """Power symbols name and join their nets; hidden power inputs join the net of their
    name; every other symbol becomes a Part whose pins are nodes of their groups."""
    sheet = design.sheets[inst.file]
    off = inst.offset
    depth = inst.names.count("/") - 1
    for symbol in graph.unknown_symbols:
        joining.warnings.append(
            f"{sheet.path}: symbol {symbol.properties.get('Reference', '?')} uses library "
            f"symbol {symbol.lib_name or symbol.lib_id!r}, which is not in the file's "
            "lib_symbols: its pins are unknown")
    done_parts: dict[int, Part] = {}
    for placed in graph.pins:
        symbol, lib = placed.symbol, placed.lib
        gid = off + placed.group
        if lib.is_power:
            # KiCad: only a power-input pin of a power symbol is a power net driver
            # (PWR_FLAG's power-output pin names nothing).
            if placed.pin.electrical_type != "power_in":
                continue
            value = symbol.properties.get("Value") or placed.pin.name
            if lib.power_scope == "local":
                joining.join_local(local_by_name, "\0power:" + value, gid)
                joining.name_candidate(gid, "power", depth, inst.names + value)
            else:
                joining.join_global(gid, value)
                joining.name_candidate(gid, "power", depth, value)
            continue
        if placed.pin.hidden and placed.pin.electrical_type == "power_in" and placed.pin.name:
            joining.join_global(gid, placed.pin.name)
            joining.name_candidate(gid, "power", depth, placed.pin.name)
        key = id(symbol)
        part = done_parts.get(key)
        if part is None:
            part = done_parts[key] = _make_part(symbol, lib, inst, design, root, graph)
            if not part.ref.startswith("#"):
                joining.parts.append(part)
        if part.ref.startswith("#") or part.dnp:
            continue
        joining.nodes.append((gid, Node(part.ref, placed.pin.number)))
    for symbol in graph.unknown_symbols:  # listed, with no pins
        part = _make_part(symbol, None, inst, design, root, graph)
        if not part.ref.startswith("#"):
            joining.parts.append(part)


def _name_nets(joining: _Joining) -> list[Net]:
    """One Net per joined group holding a pin, named by its best candidate (power, then
    global label, label, hierarchical label; the shallowest sheet; then by text), or
    ``unnamed-REF-PIN`` after its first node."""
    uf = joining.uf
    node_sets: dict[int, set[Node]] = {}
    for gid, node in joining.nodes:
        node_sets.setdefault(uf.find(gid), set()).add(node)
    merged_names: dict[int, list[tuple[int, int, str]]] = {}
    for gid, cands in joining.names.items():
        merged_names.setdefault(uf.find(gid), []).extend(cands)
    nets = []
    for root_id, nodes in node_sets.items():
        ordered = tuple(sorted(nodes, key=lambda n: (_natural(n.ref), _natural(n.pin))))
        cands = merged_names.get(root_id, [])
        if cands:
            best = min(cands)
            labels = tuple(sorted({c[2] for c in cands}))
            kind = _KIND_OF_PRIORITY[-best[0]]
            nets.append(Net(best[2], ordered, True, -best[0] >= _PRIORITY["global_label"], labels,
                            kind))
        else:
            first = ordered[0]
            nets.append(Net(f"unnamed-{first.ref}-{first.pin}", ordered, False, False, ()))
    nets.sort(key=lambda n: _natural(n.name))
    return nets


def _make_part(symbol: PlacedSymbol, lib: LibSymbol | None, inst: SheetInstance,
               design: Design, root: SheetFile, graph: _LocalGraph) -> Part:
    """The Part of ``symbol`` in ``inst``; ``lib`` None when its library symbol is missing."""
    ref, unit, value = _reference(symbol, inst, design, root)
    return Part(
        ref=ref, unit=unit, value=value or symbol.properties.get("Value", ""),
        lib_id=symbol.lib_id, sheet=inst.names, fields=dict(symbol.properties),
        pins=graph.pins_of.get(id(symbol), ()), dnp=symbol.dnp or inst.dnp,
        exclude_from_sim=symbol.exclude_from_sim or inst.exclude_from_sim,
        in_bom=symbol.in_bom, body_style=symbol.body_style,
        unit_count=lib.unit_count if lib else 1, description=lib.description if lib else "",
        keywords=lib.keywords if lib else "", is_power=lib.is_power if lib else False,
        source_file=design.sheets[inst.file].path, uuid=symbol.uuid)


def _check_duplicates(parts: list[Part], warnings: list[str]) -> None:
    seen: dict[tuple[str, int], Part] = {}
    for part in parts:
        key = (part.ref, part.unit)
        if key in seen:
            warnings.append(f"reference {part.ref} unit {part.unit} is used twice "
                            f"(sheets {seen[key].sheet!r} and {part.sheet!r}): annotate the design")
        else:
            seen[key] = part
