"""Draw a :class:`~tests.random_circuits.RandomCircuit` as a KiCad schematic.

Every symbol gets its own cell of a grid, a random rotation (0/90/180/270) and mirror
(none, x, y). Each net is joined in one of three ways, chosen at random:

* ``label``: a label (a global label on external inputs and on some outputs; a power
  symbol on GND/VCC/VEE) on every pin, at the pin end or at the end of a short stub;
* ``wire``: every pin's stub runs to a riser in the gap beside its cell, and the risers
  end on a lane of the net's own below the drawing (a wire end on a wire's interior);
* ``mixed``: some pins wired as above, the others labelled, one label on the lane.

Hidden supply pins join VCC/VEE by name. Wires of different nets may cross but never
touch; :func:`check_geometry` proves it for every drawing (a generator fault is raised
as :class:`GeometryError`, never passed on as a reader fault).
"""

from __future__ import annotations

import math
import random
from dataclasses import dataclass, field

from .random_circuits import GROUND, RandomCircuit
from .synth import PIN_AT, Sheet, pin_position

DUAL = "Amplifier_Operational:Generic_Dual"
SINGLE = "Amplifier_Operational:Generic_Single"
HIDDEN = "Amplifier_Operational:Generic_HiddenSupply"
CONNECTOR = "Connector:Conn_01x02"
POWER_NETS = ("GND", "VCC", "VEE")
NO_CONNECT = "NC:"  # net name prefix of a pin with a no-connect flag

GRID = 2.54  # mm; every coordinate is a multiple of half of it
HALF_CELL = 20.32  # mm from a cell's centre to its edge
ROW_PITCH = 2 * HALF_CELL + 2 * GRID

Point = tuple[float, float]


class GeometryError(AssertionError):
    """The drawing would join nets that the circuit keeps apart (a generator fault)."""


@dataclass(slots=True)
class _Symbol:
    lib_id: str
    ref: str
    value: str
    unit: int
    pins: dict[str, str]  # pin number -> net ("NC:..." for a no-connect)
    fields: dict[str, str] = field(default_factory=dict)
    hidden: frozenset[str] = frozenset()  # pin numbers not drawn (hidden supply pins)
    angle: int = 0
    mirror: str = ""
    row: int = 0
    col: int = 0
    offsets: dict[str, Point] = field(default_factory=dict)  # pin end from the centre
    ports: dict[str, Point] = field(default_factory=dict)  # stub end from the centre
    outward: dict[str, Point] = field(default_factory=dict)
    centre: Point = (0.0, 0.0)


def _r(value: float) -> float:
    return round(value, 4)


def _add(p: Point, q: Point) -> Point:
    return (_r(p[0] + q[0]), _r(p[1] + q[1]))


def _symbols(circuit: RandomCircuit) -> list[_Symbol]:
    out: list[_Symbol] = []
    for part in circuit.parts:
        out.append(_Symbol(part.lib_id, part.ref, part.value, 1, {"1": part.a, "2": part.b}))
    for conn in circuit.connectors:
        fields = {"Source_R": conn.source_text} if conn.source_text else {}
        out.append(_Symbol(CONNECTOR, conn.ref, "SIGNAL", 1, {"1": conn.net, "2": GROUND},
                           fields))
    powered: set[str] = set()
    for amp in circuit.amps:
        value = "OPX-2" if amp.package == "dual" else "OPX-1"
        if amp.package == "dual":
            numbers = ("3", "2", "1") if amp.unit == 1 else ("5", "6", "7")
            lib_id = DUAL
        else:
            numbers = ("3", "2", "6")
            lib_id = SINGLE if amp.package == "single" else HIDDEN
        pins = dict(zip(numbers, (amp.plus, amp.minus, amp.out)))
        hidden: frozenset[str] = frozenset()
        if lib_id == SINGLE:
            pins.update({"7": "VCC", "4": "VEE"})
        elif lib_id == HIDDEN:
            pins.update({"7": "VCC", "4": "VEE"})
            hidden = frozenset(("7", "4"))
        out.append(_Symbol(lib_id, amp.ref, value, amp.unit, pins, dict(amp.fields), hidden))
        if amp.package == "dual" and amp.ref not in powered:
            powered.add(amp.ref)
            out.append(_Symbol(DUAL, amp.ref, value, 3, {"8": "VCC", "4": "VEE"},
                               dict(amp.fields)))
    for ref, unit in circuit.spares:
        fields = next(a.fields for a in circuit.amps if a.ref == ref)
        out.append(_Symbol(DUAL, ref, "OPX-2", unit,
                           {"5": GROUND, "6": GROUND, "7": f"{NO_CONNECT}{ref}.7"},
                           dict(fields)))
    return out


def _orient(symbol: _Symbol, rng: random.Random) -> None:
    """Rotation, mirror, pin ends, outward directions and stub ends (from the centre)."""
    symbol.angle = rng.choice((0, 90, 180, 270))
    symbol.mirror = rng.choice(("", "", "x", "y"))
    local = PIN_AT[symbol.lib_id]
    for number in symbol.pins:
        lx, ly = local[number]
        direction = (math.copysign(1.0, lx), 0.0) if abs(lx) >= abs(ly) else \
            (0.0, math.copysign(1.0, ly))
        symbol.offsets[number] = pin_position(0, 0, symbol.angle, symbol.mirror, (lx, ly))
        dx, dy = pin_position(0, 0, symbol.angle, symbol.mirror, direction)
        symbol.outward[number] = (round(dx), round(dy))
    by_direction: dict[Point, list[str]] = {}
    for number in sorted(symbol.pins):
        by_direction.setdefault(symbol.outward[number], []).append(number)
    for direction, numbers in by_direction.items():
        reach = max(o[0] * direction[0] + o[1] * direction[1] for o in symbol.offsets.values())
        for rank, number in enumerate(numbers):
            end = symbol.offsets[number]
            along = reach - (end[0] * direction[0] + end[1] * direction[1]) + GRID * (1 + rank)
            symbol.ports[number] = _add(end, (direction[0] * along, direction[1] * along))


@dataclass(slots=True)
class _Drawing:
    """Geometry kept for the self-check: segments and connection points by net."""

    segments: list[tuple[Point, Point, str]] = field(default_factory=list)
    points: list[tuple[Point, str, str]] = field(default_factory=list)  # point, net, what

    def wire(self, sheet: Sheet, a: Point, b: Point, net: str) -> None:
        if a != b:
            sheet.wire(a, b)
            self.segments.append((a, b, net))
            self.points.append((a, net, "wire end"))
            self.points.append((b, net, "wire end"))


def check_geometry(drawing: _Drawing) -> None:
    """Raise :class:`GeometryError` where a point of one net touches another net's
    point or wire (wire crossings without a shared point are allowed)."""

    def key(p: Point) -> tuple[int, int]:
        return (round(p[0] * 10000), round(p[1] * 10000))

    at: dict[tuple[int, int], tuple[str, str]] = {}
    for point, net, what in drawing.points:
        first = at.setdefault(key(point), (net, what))
        if first[0] != net:
            raise GeometryError(f"{what} of net {net} and {first[1]} of net {first[0]} "
                                f"meet at {point}")
    horizontal: dict[int, list[tuple[int, int, str]]] = {}
    vertical: dict[int, list[tuple[int, int, str]]] = {}
    for a, b, net in drawing.segments:
        (ax, ay), (bx, by) = key(a), key(b)
        if ay == by:
            horizontal.setdefault(ay, []).append((min(ax, bx), max(ax, bx), net))
        elif ax == bx:
            vertical.setdefault(ax, []).append((min(ay, by), max(ay, by), net))
        else:
            raise GeometryError(f"slanted wire {a}-{b}")
    for point, net, what in drawing.points:
        x, y = key(point)
        for low, high, other in horizontal.get(y, ()):
            if other != net and low <= x <= high:
                raise GeometryError(f"{what} of net {net} at {point} lies on a wire of {other}")
        for low, high, other in vertical.get(x, ()):
            if other != net and low <= y <= high:
                raise GeometryError(f"{what} of net {net} at {point} lies on a wire of {other}")


def draw(circuit: RandomCircuit, features: set[str] | None = None) -> Sheet:
    """The schematic of ``circuit``, its layout and joining drawn at random from the
    circuit's seed; what the drawing exercises is added to ``features``."""
    rng = random.Random(circuit.seed * 7 + 3)
    seen = features if features is not None else set()
    symbols = _symbols(circuit)
    rng.shuffle(symbols)
    columns = max(2, math.ceil(math.sqrt(len(symbols) * 1.5)))
    for index, symbol in enumerate(symbols):
        symbol.row, symbol.col = divmod(index, columns)
        _orient(symbol, rng)
        seen.add(f"angle:{symbol.angle}")
        seen.add(f"mirror:{symbol.mirror or 'none'}")
    rows = max(s.row for s in symbols) + 1

    pins_of: dict[str, list[tuple[_Symbol, str]]] = {}
    for symbol in symbols:
        for number, net in symbol.pins.items():
            if number not in symbol.hidden and not net.startswith(NO_CONNECT):
                pins_of.setdefault(net, []).append((symbol, number))

    # How each net is joined; which pins are wired, and to which gap.
    mode: dict[str, str] = {}
    wired: dict[str, list[tuple[_Symbol, str]]] = {}
    gap_users: dict[int, list[tuple[str, _Symbol, str]]] = {}
    for net in sorted(pins_of):
        pins = pins_of[net]
        choices = ["label"]
        if len(pins) >= 2 and net not in circuit.global_inputs:
            choices += ["wire", "wire"]
        if len(pins) >= 3:
            choices += ["mixed", "mixed"]
        mode[net] = rng.choice(choices)
        seen.add(f"join:{mode[net]}")
        if mode[net] == "label":
            continue
        chosen = list(pins)
        if mode[net] == "mixed":
            rng.shuffle(chosen)
            chosen = chosen[:rng.randint(2, len(pins) - 1)]
        wired[net] = chosen
        for symbol, number in chosen:
            dx = symbol.outward[number][0]
            right = dx > 0 if dx else rng.random() < 0.5
            gap_users.setdefault(symbol.col + (1 if right else 0), []).append(
                (net, symbol, number))

    # Column centres leave room for the risers of each gap (one per 2.54 mm).
    gap_width = {g: GRID * (len(gap_users.get(g, ())) + 1) for g in range(columns + 1)}
    x = 25.4
    gap_start: dict[int, float] = {}
    centres_x: list[float] = []
    for col in range(columns):
        gap_start[col] = x
        x = _r(x + gap_width[col] + HALF_CELL)
        centres_x.append(x)
        x = _r(x + HALF_CELL)
    gap_start[columns] = x
    top = 25.4 + HALF_CELL
    for symbol in symbols:
        symbol.centre = (centres_x[symbol.col], _r(top + symbol.row * ROW_PITCH))
    slot: dict[tuple[int, int], float] = {}  # (id(symbol), pin) -> riser x
    for g, users in gap_users.items():
        # users from the left column take the left slots: jogs into one gap from both
        # sides at the same height then never overlap
        users.sort(key=lambda user: user[1].col != g - 1)
        for k, (_, symbol, number) in enumerate(users):
            slot[(id(symbol), int(number))] = _r(gap_start[g] + GRID * (k + 1))
    lanes = {net: _r(top + (rows - 1) * ROW_PITCH + HALF_CELL + GRID * (1 + j))
             for j, net in enumerate(sorted(wired))}

    wired_pins = {(id(s), n) for pins in wired.values() for s, n in pins}
    sheet = Sheet(project=circuit.name, seed=circuit.seed % 1_000_000 + 1)
    drawing = _Drawing()
    power_count = [0]

    def power(net: str, at: Point) -> None:
        seen.add("power-symbol")
        power_count[0] += 1
        sheet.place(f"power:{net}", f"#PWR{power_count[0]:04d}", net, *at)
        drawing.points.append((at, net, f"power symbol {net}"))

    def tag(net: str, at: Point) -> None:
        """A label, global label or power symbol naming ``net`` at ``at``."""
        if net in POWER_NETS:
            power(net, at)
            return
        kind = "global_label" if net in circuit.global_inputs | circuit.global_outputs \
            else "label"
        seen.add(kind)
        sheet.label(net, at, kind=kind)
        drawing.points.append((at, net, f"{kind} {net}"))

    for symbol in symbols:
        placed = sheet.place(symbol.lib_id, symbol.ref, symbol.value, *symbol.centre,
                             angle=symbol.angle, mirror=symbol.mirror, unit=symbol.unit,
                             fields=symbol.fields)
        for number, net in symbol.pins.items():
            end = placed.pin(number)
            if end != _add(symbol.centre, symbol.offsets[number]):
                raise GeometryError(f"{symbol.ref} pin {number}: {end} is not where the "
                                    "layout put it")
            drawing.points.append((end, net, f"{symbol.ref} pin {number}"))
            if number in symbol.hidden:
                continue
            if net.startswith(NO_CONNECT):
                seen.add("no-connect")
                sheet.no_connect(end)
                continue
            port = _add(symbol.centre, symbol.ports[number])
            if (id(symbol), number) in wired_pins:
                riser = (slot[(id(symbol), int(number))], port[1])
                drawing.wire(sheet, end, port, net)
                drawing.wire(sheet, port, riser, net)
                drawing.wire(sheet, riser, (riser[0], lanes[net]), net)
            elif rng.random() < 0.5:
                seen.add("tag-on-pin")
                tag(net, end)
            else:
                drawing.wire(sheet, end, port, net)
                tag(net, port)

    for net, pins in sorted(wired.items()):
        xs = sorted(slot[(id(s), int(n))] for s, n in pins)
        y = lanes[net]
        drawing.wire(sheet, (xs[0], y), (xs[-1], y), net)
        if len(xs) > 2:
            seen.add("wire-end-on-wire")
        if net in POWER_NETS:
            power(net, (xs[0], y))  # a power symbol's pin joins wire ends only
        elif mode[net] == "mixed" or net in circuit.global_outputs:
            tag(net, (_r(xs[0] + GRID / 2), y))  # on the lane's interior
            seen.add("label-on-wire")
    check_geometry(drawing)
    return sheet


def drawn_nets(circuit: RandomCircuit) -> set[frozenset[tuple[str, str]]]:
    """The nets as the circuit means them: sets of (reference, pin number), hidden supply
    pins and one-pin no-connect nets included."""
    nets: dict[str, set[tuple[str, str]]] = {}
    for symbol in _symbols(circuit):
        for number, net in symbol.pins.items():
            nets.setdefault(net, set()).add((symbol.ref, number))
    return {frozenset(nodes) for nodes in nets.values()}
