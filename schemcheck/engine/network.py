"""The DC network of a design: resistors, shorts, fixed nets and op-amps (pure).

Built from the netlist and the recognised op-amp units, in named steps
(:func:`build_network`):

1. *place the parts* by their kind (:mod:`schemcheck.circuit.kinds`, one stamp per DC
   behaviour): resistors from their value (:mod:`schemcheck.circuit.values`; ``0R`` is a
   short, a not-fitted value or a do-not-populate part is absent, a value that cannot be
   read is kept aside and never silently opened); potentiometers as two resistors with the
   wiper at mid-travel; resistor arrays between their pin pairs; capacitors open;
   inductors, ferrite beads, fuses, net ties and closed jumpers shorts; open jumpers, test
   points, mounting holes and fiducials absent; every other part open, remembered as one
   that may conduct at DC (transistors, diodes, switches, ...) or as an integrated circuit
   whose output, bidirectional and tri-state pins drive their nets;
2. *merge the shorts* (an op-amp's feedback pin is its output);
3. *take comparators wired as op-amps* (a comparator symbol with a resistive path from its
   output back to its - input is analysed as an op-amp);
4. *fix the driven nets* at 0 V (the error analysis looks at deviations only): supply rails
   (power-symbol nets); nets driven by an integrated circuit's output, bidirectional or
   tri-state pin or by an amplifier that is not analysed; and external inputs: nets
   reached from outside through a connector pin or a global label that nothing inside the
   design drives. A net is never fixed where that would cut a path between an op-amp's
   output and its inputs; an external input is also left open where it already has a DC
   path to a driven net. Test points, labels, PWR_FLAG and the like never drive. A
   source resistance annotated on a connector (field ``Source_R``) or in the settings is
   placed between the net and its 0 V source;
5. *place the resistors and the op-amps*, and list the assumptions made: spare units
   (output reaching nothing, inputs tied off or floating) are set aside, and nets that two
   outputs drive (op-amp outputs, or one and an integrated circuit's output pin) are
   listed in ``Network.tied``; capacitors keep their values for the messages.
"""

from __future__ import annotations

import re
from collections import deque
from collections.abc import Callable, Iterable, Mapping
from dataclasses import dataclass, field

from schemcheck.circuit.kinds import Kind, classify
from schemcheck.circuit.values import (
    PartValue,
    UnreadableValue,
    ValueRules,
    is_not_fitted,
    part_value,
)
from schemcheck.engine.stages import OpampUnit, SkippedAmplifier, amplifier_name, output_pins
from schemcheck.model import Netlist, Part, Pin, natural_key
from schemcheck.units import ValueFormatError, parse_resistance, parse_tolerance, read_capacitance

#: Pin types that drive a net when they belong to an integrated circuit.
_DRIVING = ("output", "power_out", "bidirectional", "tri_state")
#: Any pin type that marks a net as driven from inside the design (external inputs are
#: only nets nothing drives).
_ANY_DRIVER = ("output", "power_out", "bidirectional", "tri_state", "open_collector",
               "open_emitter")
#: Current outputs are not voltage sources.
_CURRENT_OUT = re.compile(r"^I_?OUT", re.I)
_CURRENT_PART = re.compile(r"current[- ]output|transconductance|\bOTA\b", re.I)
#: Pin types through which a net may get its DC level from a part the tool does not model.
_LEAF_TYPES = ("output", "power_out", "bidirectional", "tri_state", "passive", "unspecified",
               "open_collector", "open_emitter")


@dataclass(frozen=True, slots=True)
class Resistor:
    ref: str
    a: str  # net names (after shorts are merged)
    b: str
    ohms: float
    tolerance: float
    tolerance_source: str


@dataclass(slots=True)
class OpampNode:
    """One op-amp unit placed in the network."""

    unit: OpampUnit
    plus: str
    minus: str
    out: str
    aol: float | None = None
    #: "comparator" where the unit is drawn with a comparator symbol
    symbol: str = ""


@dataclass(frozen=True, slots=True)
class Pot:
    """A potentiometer: its two halves (indices into ``Network.resistors``, -1 where a
    half is shorted out) and its end-to-end value in ohms."""

    name: str
    ref: str
    ohms: float
    a: int
    b: int


@dataclass(frozen=True, slots=True)
class OutputDriver:
    """An output pin that drives a net: its part, unit, pin, and ``stage`` (the op-amp
    stage identifier where it is an op-amp's output, else "")."""

    ref: str
    unit: int
    pin: str
    stage: str = ""
    pin_type: str = "output"

    def describe(self) -> str:
        if self.stage:
            return f"{self.stage} output (pin {self.pin})"
        return f"{self.ref} pin {self.pin} ({self.pin_type})"


@dataclass(frozen=True, slots=True)
class Unreadable:
    """A resistive part whose value could not be read, and the nets it touches."""

    ref: str
    field: str
    text: str
    why: str
    nets: frozenset[str]


@dataclass(slots=True)
class NetLookup:
    """A network's parts by net, for walks over it."""

    #: net -> the op-amps with an input on it: (index, output net)
    inputs: dict[str, list[tuple[int, str]]]
    #: op-amp output net -> its op-amp's index (the last, where outputs are tied)
    outputs: dict[str, int]
    #: op-amp output net -> every op-amp driving it (indices, in order)
    drivers: dict[str, list[int]]
    #: net -> the nets one capacitor away
    capacitors: dict[str, list[str]]
    #: net -> the net sets of the parts that may conduct touching it
    conducting: dict[str, list[set[str]]]
    #: net -> the resistors with a terminal on it (indices, in order)
    resistors: dict[str, list[int]]
    #: net -> the op-amps with a pin (input or output) on it (indices, in order)
    pins: dict[str, list[int]]

    @staticmethod
    def of(network: Network) -> NetLookup:
        inputs: dict[str, list[tuple[int, str]]] = {}
        for j, o in enumerate(network.opamps):
            for pin in dict.fromkeys((o.plus, o.minus)):
                inputs.setdefault(pin, []).append((j, o.out))
        capacitors: dict[str, list[str]] = {}
        for _, a, b in network.capacitors:
            if a != b:
                capacitors.setdefault(a, []).append(b)
                capacitors.setdefault(b, []).append(a)
        conducting: dict[str, list[set[str]]] = {}
        for nets in network.may_conduct.values():
            for net in nets:
                conducting.setdefault(net, []).append(nets)
        resistors: dict[str, list[int]] = {}
        for i, r in enumerate(network.resistors):
            for net in dict.fromkeys((r.a, r.b)):
                resistors.setdefault(net, []).append(i)
        pins: dict[str, list[int]] = {}
        for j, o in enumerate(network.opamps):
            for net in dict.fromkeys((o.plus, o.minus, o.out)):
                pins.setdefault(net, []).append(j)
        drivers: dict[str, list[int]] = {}
        for j, o in enumerate(network.opamps):
            drivers.setdefault(o.out, []).append(j)
        return NetLookup(inputs, {o.out: j for j, o in enumerate(network.opamps)}, drivers,
                         capacitors, conducting, resistors, pins)


@dataclass(slots=True)
class Network:
    """What the solver needs, with net names already merged through shorts."""

    resistors: list[Resistor]
    opamps: list[OpampNode]
    fixed: dict[str, str]  # net -> why it is at 0 V ("rail", "external", "driven by U2 ...")
    canonical: dict[str, str]  # original net -> merged net
    capacitors: list[tuple[str, str, str]] = field(default_factory=list)  # ref, a, b
    open_parts: dict[str, set[str]] = field(default_factory=dict)  # ref -> nets it touches
    assumptions: list[str] = field(default_factory=list)
    problems: list[str] = field(default_factory=list)
    unused: list[OpampUnit] = field(default_factory=list)  # spare units, tied off
    #: values that could not be read
    unreadable: list[Unreadable] = field(default_factory=list)
    #: parts (or not-analysed amplifier units) that may carry DC in a way the tool does not
    #: model, with the nets they touch: unmodelled parts, amplifiers that are not analysed,
    #: connectors and open jumpers (a cable or a jumper may close them)
    may_conduct: dict[str, set[str]] = field(default_factory=dict)
    #: what each of those is, in words ("transistor", "connector, left open")
    kinds: dict[str, str] = field(default_factory=dict)
    #: nets reached by a pin of a part the tool does not model that may set their DC level
    #: (an integrated circuit's output, bidirectional or passive pin): net -> "U7 pin 3"
    leaves: dict[str, str] = field(default_factory=dict)
    #: fixed nets driven by an amplifier that is not analysed: net -> its name and kind
    driven_by: dict[str, str] = field(default_factory=dict)
    pots: list[Pot] = field(default_factory=list)
    #: capacitors' values in farads (None where the Value could not be read), by reference
    capacitance: dict[str, float | None] = field(default_factory=dict)
    #: nets driven by two outputs or more, at least one an op-amp's: net -> the drivers
    tied: dict[str, list[OutputDriver]] = field(default_factory=dict)
    #: spare amplifier units (in ``unused``) by key: how they are tied off, in words
    spares: dict[tuple[str, int, int | None], str] = field(default_factory=dict)
    #: spare units whose inputs float, with the floating pins ("pin 5 (+)")
    floating_spares: list[tuple[OpampUnit, list[str]]] = field(default_factory=list)

    _by_net: dict[str, list[Resistor]] | None = None
    _lookup: NetLookup | None = None

    def lookup(self) -> NetLookup:
        """What touches each net, by net (indexed on first use; the network is not
        changed after it is built: a changed one is a :meth:`variant`)."""
        if self._lookup is None:
            self._lookup = NetLookup.of(self)
        return self._lookup

    def net(self, name: str) -> str:
        return self.canonical.get(name, name)

    def resistors_at(self, net: str) -> list[Resistor]:
        """Resistors with a terminal on ``net`` (indexed on first use)."""
        if self._by_net is None:
            index: dict[str, list[Resistor]] = {}
            for r in self.resistors:
                index.setdefault(r.a, []).append(r)
                if r.b != r.a:
                    index.setdefault(r.b, []).append(r)
            self._by_net = index
        return self._by_net.get(net, [])

    def with_resistors(self, resistors: list[Resistor]) -> Network:
        """The same network with other resistor values (a potentiometer's travel)."""
        return self.variant(resistors=resistors)

    def variant(self, *, resistors: list[Resistor] | None = None,
                opamps: list[OpampNode] | None = None, fixed: dict[str, str] | None = None,
                capacitors: list[tuple[str, str, str]] | None = None) -> Network:
        """The same network with other resistors, op-amps, fixed nets or capacitors (what
        the solver reads); everything else is shared with this one."""
        return Network(self.resistors if resistors is None else resistors,
                       self.opamps if opamps is None else opamps,
                       self.fixed if fixed is None else fixed, self.canonical,
                       self.capacitors if capacitors is None else capacitors,
                       self.open_parts, self.assumptions, self.problems, self.unused,
                       self.unreadable, self.may_conduct, self.kinds, self.leaves,
                       self.driven_by, self.pots, self.capacitance, self.tied, self.spares,
                       self.floating_spares)


class _Merge:
    def __init__(self) -> None:
        self.parent: dict[str, str] = {}

    def find(self, name: str) -> str:
        parent = self.parent
        root = name
        while parent.get(root, root) != root:
            root = parent[root]
        while parent.get(name, name) != root:
            parent[name], name = root, parent[name]
        return root

    def union(self, a: str, b: str) -> None:
        ra, rb = self.find(a), self.find(b)
        if ra != rb:
            # keep the nicer (named, shorter) name as the representative
            keep, drop = sorted((ra, rb), key=lambda n: (n.startswith("unnamed-"), len(n), n))
            self.parent[drop] = keep


@dataclass(slots=True)
class _Driver:
    """A net that may be fixed at 0 V, and why."""

    why: str
    external: bool  # a connector or a label from outside: left open where driven inside
    amplifier: str = ""  # an amplifier that is not analysed: its name


class _Builder:
    """Collects what the parts put into the network, before nets are merged."""

    def __init__(self, pin_net: dict[tuple[str, str], str], default_tolerance: float,
                 values: ValueRules, source_resistance: dict[str, float]) -> None:
        self.pin_net = pin_net
        self.default_tolerance = default_tolerance
        self.values = values
        self.source_resistance = source_resistance
        self.merge = _Merge()
        self.resistors: list[tuple[str, str, str, float, float, str]] = []
        self.pots: list[tuple[str, str, float, int, int]] = []  # name, ref, ohms, i_a, i_b
        self.capacitors: list[tuple[str, str, str]] = []
        self.capacitance: dict[str, float | None] = {}
        self.open_parts: dict[str, set[str]] = {}
        self.may_conduct: dict[str, set[str]] = {}
        self.kinds: dict[str, str] = {}
        self.leaves: dict[str, str] = {}
        self.drivers: dict[str, _Driver] = {}  # raw net -> driver (first one wins)
        self.ports: dict[str, str] = {}  # raw net -> connector ref
        self.unreadable: list[Unreadable] = []
        self.assumptions: list[str] = []
        self.problems: list[str] = []

    def nets(self, part: Part) -> list[str | None]:
        return [self.pin_net.get((part.ref, pin.number)) for pin in part.pins]

    def touched(self, ref: str, nets: Iterable[str | None], table: dict[str, set[str]]) -> None:
        found = {n for n in nets if n}
        if found:
            table.setdefault(ref, set()).update(found)

    def value(self, part: Part, nets: Iterable[str | None], *, pot: bool = False
              ) -> PartValue | None:
        """The part's value, or None (kept aside as unreadable)."""
        try:
            return part_value(part, self.values, pot=pot)
        except UnreadableValue as error:
            self.unreadable.append(Unreadable(part.ref, error.field, error.text, error.why,
                                              frozenset(n for n in nets if n)))
            return None

    def add_resistor(self, name: str, a: str, b: str, ohms: float,
                     tolerance: tuple[float, str]) -> int:
        self.resistors.append((name, a, b, ohms, *tolerance))
        return len(self.resistors) - 1

    def tolerance(self, part: Part, default: float) -> tuple[float, str]:
        text = part.field("Tolerance")
        if text:
            try:
                return parse_tolerance(text, f"field Tolerance of {part.ref}"), "field"
            except ValueFormatError as error:
                self.problems.append(f"{error}; the default {default:.2%} is used")
        match = re.search(r"(\d+(?:\.\d+)?)\s*%", part.value)
        if match:
            return float(match.group(1)) / 100.0, "value"
        return default, "default"


# ---------------------------------------------------------------------------
# One stamp per DC behaviour of the kind table


def _stamp_resistance(b: _Builder, part: Part, kind: Kind) -> None:
    nets = b.nets(part)
    if len(nets) != 2:
        _stamp_unmodelled(b, part, kind)
        return
    one, two = nets
    if one is None or two is None:
        return  # an end on no net carries nothing
    value = b.value(part, nets)
    if value is None or value.ohms is None:
        return
    if value.ohms == 0.0:
        b.merge.union(one, two)
        return
    b.add_resistor(part.ref, one, two, value.ohms, b.tolerance(part, b.default_tolerance))


def _stamp_divider(b: _Builder, part: Part, kind: Kind) -> None:
    nets = b.nets(part)
    if len(nets) != 3:
        _stamp_unmodelled(b, part, kind)
        return
    value = b.value(part, nets, pot=True)
    if value is None or value.ohms is None:
        return
    ohms = value.ohms
    tol = b.tolerance(part, max(b.default_tolerance, 0.2))
    order = sorted(range(3), key=lambda i: natural_key(part.pins[i].number))
    one, wiper, two = (nets[i] for i in order)
    name = part.ref if part.unit_count == 1 else f"{part.ref}/{part.unit}"
    halves = []
    for end, side in ((one, "a"), (two, "b")):
        if end is not None and wiper is not None:
            halves.append(b.add_resistor(f"{name}({side})", end, wiper, ohms / 2, tol))
        else:
            halves.append(-1)
    b.pots.append((name, part.ref, ohms, halves[0], halves[1]))
    taper = f", taper {value.taper}" if value.taper else ""
    b.assumptions.append(f"{name}: potentiometer taken at mid-travel ({ohms / 2:g} Ω each "
                         f"side{taper})")


_ARRAY_PIN = re.compile(r"^R?(\d+)[._](\d+)$", re.I)


def _stamp_array(b: _Builder, part: Part, kind: Kind) -> None:
    """Resistors between pin pairs: pins named ``R1.1``/``R1.2`` (by name), a ``common``
    pin and ``R1``... (bussed), one resistor per two-pin unit, or 2N pins paired
    1-2N, 2-(2N-1)... (the usual numbering of isolated arrays)."""
    nets = b.nets(part)
    pins = part.pins
    value = b.value(part, nets)
    if value is None or value.ohms is None:
        return
    pairs: list[tuple[int, int, str]] = []
    named: dict[str, dict[str, int]] = {}
    for i, pin in enumerate(pins):
        match = _ARRAY_PIN.match(pin.name.strip())
        if match:
            named.setdefault(match.group(1), {})[match.group(2)] = i
    common = [i for i, pin in enumerate(pins) if pin.name.strip().lower() in ("common", "com")]
    if len(pins) == 2:
        pairs.append((0, 1, part.ref if part.unit_count == 1 else f"{part.ref}/{part.unit}"))
    elif common and len(common) == 1:
        pairs.extend((common[0], i, f"{part.ref}({pin.name.strip()})")
                     for i, pin in enumerate(pins) if i != common[0])
    elif named and all(len(ends) == 2 for ends in named.values()):
        for n, ends in sorted(named.items(), key=lambda item: int(item[0])):
            first, second = sorted(ends.values())
            pairs.append((first, second, f"{part.ref}(R{n})"))
    elif len(pins) % 2 == 0:
        order = sorted(range(len(pins)), key=lambda i: natural_key(pins[i].number))
        half = len(order) // 2
        pairs.extend((order[i], order[-1 - i], f"{part.ref}({i + 1})") for i in range(half))
    else:
        _stamp_unmodelled(b, part, kind)
        return
    tol = b.tolerance(part, b.default_tolerance)
    for i, j, name in pairs:
        one, two = nets[i], nets[j]
        if one is None or two is None:
            continue
        if value.ohms == 0.0:
            b.merge.union(one, two)
        else:
            b.add_resistor(name, one, two, value.ohms, tol)


def _stamp_capacitance(b: _Builder, part: Part, kind: Kind) -> None:
    nets = b.nets(part)
    if len(nets) != 2 or is_not_fitted(part.value):
        return
    one, two = nets
    if one is not None and two is not None:
        b.capacitors.append((part.ref, one, two))
        b.capacitance[part.ref] = read_capacitance(part.value)


def _stamp_short(b: _Builder, part: Part, kind: Kind) -> None:
    nets = [n for n in b.nets(part) if n]
    for net in nets[1:]:
        b.merge.union(nets[0], net)


def _stamp_bridge(b: _Builder, part: Part, kind: Kind) -> None:
    """``Jumper_3_Bridged12``: pins 1 and 2 joined; ``..._Bridged`` or ``Bridged123``: all."""
    match = re.search(r"Bridged(\d*)", part.lib_id.rpartition(":")[2], re.I)
    joined = set(match.group(1)) if match and match.group(1) else None
    nets = [n for pin, n in zip(part.pins, b.nets(part))
            if n and (joined is None or pin.number in joined)]
    for net in nets[1:]:
        b.merge.union(nets[0], net)
    if joined is not None and any(pin.number not in joined for pin in part.pins):
        b.touched(part.ref, b.nets(part), b.may_conduct)  # its open side may be closed
        b.kinds.setdefault(part.ref, "open jumper")


def _stamp_none(b: _Builder, part: Part, kind: Kind) -> None:
    if kind.name == "open jumper":  # as drawn: open; a jumper may close it
        b.touched(part.ref, b.nets(part), b.may_conduct)
        b.kinds.setdefault(part.ref, "open jumper")


def _stamp_port(b: _Builder, part: Part, kind: Kind) -> None:
    nets = b.nets(part)
    for net in nets:
        if net:
            b.ports.setdefault(net, part.ref)
    b.touched(part.ref, nets, b.may_conduct)
    b.kinds.setdefault(part.ref, "connector")
    text = part.field("Source_R")
    if text:
        try:
            ohms = parse_resistance(text, f"field Source_R of {part.ref}")
        except ValueFormatError as error:
            b.problems.append(str(error))
            ohms = None
        if ohms:
            for net in nets:
                if net:
                    b.source_resistance.setdefault(net, ohms)


def _stamp_unmodelled(b: _Builder, part: Part, kind: Kind) -> None:
    nets = b.nets(part)
    b.touched(part.ref, nets, b.open_parts)
    signal = [n for pin, n in zip(part.pins, nets) if pin.electrical_type != "power_in"]
    b.touched(part.ref, signal, b.may_conduct)
    b.kinds.setdefault(part.ref, kind.words)


def _stamp_ic(b: _Builder, part: Part, kind: Kind) -> None:
    nets = b.nets(part)
    b.touched(part.ref, nets, b.open_parts)
    b.kinds.setdefault(part.ref, kind.words)
    current = bool(_CURRENT_PART.search(part.description))
    for pin, net in zip(part.pins, nets):
        if net is None:
            continue
        if pin.electrical_type in _LEAF_TYPES:
            b.leaves.setdefault(net, f"{part.ref} pin {pin.number} ({pin.electrical_type})")
        if (pin.electrical_type in _DRIVING and not current
                and not _CURRENT_OUT.match(pin.name.strip())):
            b.drivers.setdefault(net, _Driver(f"driven by {part.ref} pin {pin.number} "
                                              f"({pin.electrical_type})", False))


STAMPS: dict[str, Callable[[_Builder, Part, Kind], None]] = {
    "resistance": _stamp_resistance,
    "divider": _stamp_divider,
    "array": _stamp_array,
    "capacitance": _stamp_capacitance,
    "short": _stamp_short,
    "bridge": _stamp_bridge,
    "none": _stamp_none,
    "port": _stamp_port,
    "unmodelled": _stamp_unmodelled,
    "ic": _stamp_ic,
}


def _stamp_amplifier(b: _Builder, part: Part, name: str, reason: str, pins: Iterable[str],
                     outputs: Iterable[str], current_output: bool) -> None:
    """An amplifier that is not analysed: open; it may carry DC from its inputs to its
    outputs; its voltage outputs drive their nets (a current output drives nothing)."""
    by_number = {pin.number: pin for pin in part.pins}
    nets = [b.pin_net.get((part.ref, number)) for number in pins]
    b.touched(part.ref, nets, b.open_parts)
    signal = [b.pin_net.get((part.ref, n)) for n in pins
              if n in by_number and by_number[n].electrical_type != "power_in"]
    b.touched(name, signal, b.may_conduct)
    b.kinds.setdefault(name, reason)
    if current_output:
        return  # a current output is not a voltage source
    for number in outputs:
        net = b.pin_net.get((part.ref, number))
        pin = by_number.get(number)
        if net is None or pin is None or pin.electrical_type in ("open_collector",
                                                                 "open_emitter"):
            continue
        b.drivers.setdefault(net, _Driver(f"driven by {name} ({reason})", False, name))


# ---------------------------------------------------------------------------
# The network


def build_network(netlist: Netlist, units: list[OpampUnit], skipped: list[SkippedAmplifier],
                  *, default_tolerance: float = 0.01,
                  source_resistance: Mapping[str, float] | None = None,
                  values: ValueRules | None = None,
                  excluded: Mapping[tuple[str, int, int | None], str] | None = None
                  ) -> Network:
    """The DC network of ``netlist`` with ``units`` as its op-amps.

    ``values`` holds the settings' values by reference and house notations; ``excluded``
    op-amp units (by :attr:`OpampUnit.key`, with why) are left out of the analysis and
    treated as amplifiers that are not analysed.
    """
    excluded = dict(excluded or {})
    pin_net = _pin_nets(netlist)
    builder = _Builder(pin_net, default_tolerance, values or ValueRules(),
                       dict(source_resistance or {}))
    analysed = [u for u in units if u.key not in excluded]
    _place_parts(builder, netlist, units, skipped, excluded)
    _merge_feedback_pins(builder, analysed)
    canonical = {net.name: builder.merge.find(net.name) for net in netlist.nets}

    def canon(name: str) -> str:
        return canonical.get(name) or builder.merge.find(name)

    promoted = _comparators_wired_as_opamps(
        builder, netlist, [s for s in skipped if s.unit is None or s.unit.key not in excluded],
        canon)
    fixed, driven_by, notes = _fix_nets(builder, netlist, analysed + promoted,
                                        [u for u in units if u.key in excluded], canon)
    resistors, pots = _place_resistors(builder, canon, fixed)
    opamps, unused, problems, spares, floating = _place_opamps(
        netlist, pin_net, analysed, promoted, fixed, canon, resistors,
        [u for u in units if u.key in excluded])
    tied = _tied_outputs(netlist, pin_net, [*analysed, *promoted],
                         [u for u in units if u.key in excluded], skipped, fixed, canon)
    network = Network(
        resistors, opamps, fixed, canonical, [(r, canon(a), canon(b)) for r, a, b in
                                              builder.capacitors],
        {ref: {canon(n) for n in nets} for ref, nets in builder.open_parts.items()},
        builder.assumptions, builder.problems + problems, unused,
        [Unreadable(u.ref, u.field, u.text, u.why, frozenset(canon(n) for n in u.nets))
         for u in builder.unreadable],
        {ref: {canon(n) for n in nets} for ref, nets in builder.may_conduct.items()},
        builder.kinds, {canon(n): why for n, why in builder.leaves.items()}, driven_by, pots,
        dict(builder.capacitance), tied, spares, floating)
    _note_sources(network, notes)
    return network


def _pin_nets(netlist: Netlist) -> dict[tuple[str, str], str]:
    pin_net: dict[tuple[str, str], str] = {}
    for net in netlist.nets:
        for node in net.nodes:
            pin_net[(node.ref, node.pin)] = net.name
    return pin_net


def _place_parts(b: _Builder, netlist: Netlist, units: list[OpampUnit],
                 skipped: list[SkippedAmplifier],
                 excluded: Mapping[tuple[str, int, int | None], str]) -> None:
    """Step 1: every part by its kind; op-amp units are placed later."""
    opamp_parts = {(u.part.ref, u.part.unit) for u in units}
    skipped_parts = {(s.part.ref, s.part.unit): s for s in skipped}
    for unit in units:
        if unit.key in excluded:
            name = _unit_name(unit)
            pins = [unit.plus.number, unit.minus.number, unit.out.number]
            _stamp_amplifier(b, unit.part, name, f"op-amp, not analysed: {excluded[unit.key]}",
                             pins, [unit.out.number], current_output=False)
    amplifier_refs = {s.part.ref: s.reason for s in skipped}
    amplifier_refs.update((u.part.ref, "op-amp") for u in units)
    for part in netlist.parts:
        if part.dnp or part.is_power or (part.ref, part.unit) in opamp_parts:
            continue
        amplifier = skipped_parts.get((part.ref, part.unit))
        if amplifier is not None:
            name = amplifier_name(part)  # the reports' identifier (U6/3)
            _stamp_amplifier(b, part, name, amplifier.reason, [p.number for p in part.pins],
                             [p.number for p in output_pins(part)],
                             current_output=bool(_CURRENT_PART.search(amplifier.reason)))
            continue
        if part.ref in amplifier_refs:  # another unit of an amplifier part (buffers, diodes)
            _stamp_ic(b, part, Kind("unit", "ic", f"{amplifier_refs[part.ref]}, another unit"))
            continue
        kind = classify(part)
        STAMPS[kind.dc](b, part, kind)


def _unit_name(unit: OpampUnit) -> str:
    """The stage identifier (``U4/2``), the same in every output."""
    return unit.name


def _merge_feedback_pins(b: _Builder, units: list[OpampUnit]) -> None:
    """Step 2 (with the shorts placed in step 1): a feedback pin is the output."""
    for unit in units:
        if unit.feedback is None:
            continue
        fb = b.pin_net.get((unit.part.ref, unit.feedback.number))
        out = b.pin_net.get((unit.part.ref, unit.out.number))
        if fb and out:
            b.merge.union(fb, out)
            b.assumptions.append(f"{_unit_name(unit)}: pin {unit.feedback.number} "
                                 f"({unit.feedback.name}) is the output, fed back internally")


def _resistive_neighbours(b: _Builder, canon: Callable[[str], str]) -> dict[str, set[str]]:
    adjacency: dict[str, set[str]] = {}
    for _, a, c, *_ in b.resistors:
        x, y = canon(a), canon(c)
        if x != y:
            adjacency.setdefault(x, set()).add(y)
            adjacency.setdefault(y, set()).add(x)
    return adjacency


def _comparators_wired_as_opamps(b: _Builder, netlist: Netlist,
                                 skipped: list[SkippedAmplifier],
                                 canon: Callable[[str], str]) -> list[OpampUnit]:
    """Step 3: comparator symbols whose output reaches their - input through resistors
    (not through a supply rail): analysed as op-amps."""
    rails = {canon(net.name) for net in netlist.nets if net.kind == "power"}
    adjacency: dict[str, set[str]] | None = None
    promoted = []
    for amplifier in skipped:
        unit = amplifier.unit
        if unit is None or amplifier.part.dnp:
            continue
        ends = [b.pin_net.get((unit.part.ref, pin.number)) for pin in (unit.minus, unit.out)]
        if ends[0] is None or ends[1] is None:
            continue
        minus, out = canon(ends[0]), canon(ends[1])
        if out in rails or minus in rails:
            continue
        if adjacency is None:
            adjacency = _resistive_neighbours(b, canon)
        if minus == out or minus in _reach(adjacency, out, rails):
            promoted.append(unit)
            key = (unit.part.ref, unit.part.unit)
            b.open_parts.pop(key[0], None)
            name = amplifier_name(unit.part)
            b.may_conduct.pop(name, None)
            b.kinds.pop(name, None)
            for net, driver in list(b.drivers.items()):
                if driver.amplifier == name:
                    del b.drivers[net]
    return promoted


def _reach(adjacency: Mapping[str, Iterable[str]], start: str, blocked: set[str]) -> set[str]:
    seen = {start}
    queue = deque([start])
    while queue:
        net = queue.popleft()
        for nxt in adjacency.get(net, ()):
            if nxt not in seen and nxt not in blocked:
                seen.add(nxt)
                queue.append(nxt)
    return seen


def _fix_nets(b: _Builder, netlist: Netlist, units: list[OpampUnit],
              left_out: list[OpampUnit], canon: Callable[[str], str]
              ) -> tuple[dict[str, str], dict[str, str], list[str]]:
    """Step 4: the nets at 0 V and why; the ones driven by amplifiers not analysed; and
    notes on would-be sources left open. The loops of op-amp units left out of the
    analysis (``left_out``) still exist: no source is placed in them either."""
    fixed: dict[str, str] = {}
    for net in netlist.nets:
        if net.kind == "power":
            fixed[canon(net.name)] = "rail"
    rails = set(fixed)
    ends: list[tuple[str, set[str]]] = []  # per op-amp: output, inputs
    named: list[OpampUnit] = []
    analysed = 0  # the first ends are the analysed units'
    for i, unit in enumerate([*units, *left_out]):
        nets = [b.pin_net.get((unit.part.ref, pin.number))
                for pin in (unit.plus, unit.minus, unit.out)]
        if nets[2] is not None:
            ends.append((canon(nets[2]), {canon(n) for n in nets[:2] if n}))
            named.append(unit)
            analysed += i < len(units)
    outputs = {out for out, _ in ends[:analysed]}
    inputs = set().union(*(ins for _, ins in ends[:analysed])) if ends else set()
    loops = _Loops(b, named, ends, rails, canon)

    candidates: dict[str, _Driver] = {}
    for net_name, driver in b.drivers.items():
        candidates.setdefault(canon(net_name), driver)
    driven_inside = {canon(net) for net in b.drivers} | outputs
    for part in netlist.parts:
        if part.dnp or part.is_power:
            continue
        for pin in part.pins:
            pin_net = b.pin_net.get((part.ref, pin.number))
            if pin_net and pin.electrical_type in _ANY_DRIVER:
                driven_inside.add(canon(pin_net))
    for net_name, ref in sorted(b.ports.items()):
        candidates.setdefault(canon(net_name), _Driver(f"external (connector {ref})", True))
    for net in netlist.nets:
        name = canon(net.name)
        if net.kind == "global_label" and name not in driven_inside:
            candidates.setdefault(name, _Driver(
                "external (global label, no driver inside the design)", True))

    targets = {canon(n) for n in b.drivers} | outputs
    resistive = _resistive_neighbours(b, canon)
    driven_by: dict[str, str] = {}
    notes: list[str] = []
    for name, driver in sorted(candidates.items()):
        if name in fixed:
            continue
        if name in outputs:
            notes.append(f"net {name}: an op-amp output; not taken as {driver.why}")
            continue
        loop = loops.through(name, ignore=driver.amplifier)
        if loop:
            notes.append(f"net {name}: {driver.why.replace('external', 'reached from outside')}"
                         f", left open: it lies on a path between {loop}'s output and its "
                         "inputs")
            continue
        if (driver.external and _reaches(resistive, name, targets, rails | inputs)
                and not _reaches(resistive, name, inputs, targets | rails)):
            # driven inside and feeding no stage's input except through what drives it:
            # an output brought out on a connector, not an input
            notes.append(f"net {name}: {driver.why.replace('external', 'reached from outside')}"
                         ", left open: it already has a DC path to a driven net")
            continue
        fixed[name] = driver.why
        if driver.amplifier:
            driven_by[name] = driver.amplifier
    return fixed, driven_by, notes


def _reaches(adjacency: Mapping[str, Iterable[str]], start: str, targets: set[str],
             blocked: set[str]) -> bool:
    """True when ``start`` reaches a target through resistors, not passing ``blocked``."""
    seen = {start}
    queue = deque([start])
    while queue:
        net = queue.popleft()
        for nxt in adjacency.get(net, ()):
            if nxt in targets:
                return True
            if nxt not in seen and nxt not in blocked:
                seen.add(nxt)
                queue.append(nxt)
    return False


#: Parts that may conduct with more signal nets than this (multiplexers, arrays) are not
#: taken as closing an op-amp's loop when deciding where a source may go: through them
#: every net would lie on some loop. (A stage whose own path runs only through one is
#: still not analysed: see :mod:`schemcheck.engine.coverage`.)
_LOOP_PART_NETS = 6


class _Loops:
    """Which nets lie on a path between an op-amp's output and its inputs (through
    resistors, capacitors, parts that may conduct and other op-amps; not through supply
    rails): fixing such a net at 0 V would cut that path."""

    def __init__(self, b: _Builder, units: list[OpampUnit], ends: list[tuple[str, set[str]]],
                 rails: set[str], canon: Callable[[str], str]) -> None:
        adjacency: dict[str, set[str]] = {}

        def link(x: str, y: str) -> None:
            if x != y and x not in rails and y not in rails:
                adjacency.setdefault(x, set()).add(y)
                adjacency.setdefault(y, set()).add(x)

        for _, a, c, *_ in b.resistors:
            link(canon(a), canon(c))
        for _, a, c in b.capacitors:
            link(canon(a), canon(c))
        for unreadable in b.unreadable:
            joined = sorted({canon(n) for n in unreadable.nets})
            for x in joined[1:]:
                link(joined[0], x)
        open_as_drawn: dict[str, set[str]] = {}
        for ref, nets in b.may_conduct.items():
            signal = {canon(n) for n in nets} - rails
            if len(signal) > _LOOP_PART_NETS and b.kinds.get(ref) not in ("connector",
                                                                          "open jumper"):
                continue  # a multiplexer or an array: every net through it is not a loop
            for net in signal:
                if b.kinds.get(ref) in ("connector", "open jumper"):
                    # open as drawn: a source beside them cuts no drawn path; but an
                    # op-amp input reached only through them is not a source's place
                    if net not in rails:
                        open_as_drawn.setdefault(f"\0{ref}", set()).add(net)
                        open_as_drawn.setdefault(net, set()).add(f"\0{ref}")
                else:
                    link(f"\0{ref}", net)
        self.ends = ends
        self.adjacency = adjacency
        self.open_as_drawn = open_as_drawn
        self.rails = rails
        self.names = [_unit_name(u) for u in units]
        merge = _Merge()
        for x, others in adjacency.items():
            for y in others:
                merge.union(x, y)
        for out, inputs in ends:
            for net in inputs:
                merge.union(out, net)
        self.group = merge.find
        #: the op-amps (in order) of each connected piece, by the piece's representative
        self.members: dict[str, list[int]] = {}
        #: per net: the op-amps it is an output or an input of, and where it leads through
        #: them (an output to the inputs, an input to the output)
        self.across: dict[str, list[tuple[int, tuple[str, ...]]]] = {}
        for k, (out, inputs) in enumerate(ends):
            self.members.setdefault(merge.find(out), []).append(k)
            self.across.setdefault(out, []).append((k, tuple(inputs)))
            for net in inputs - {out}:
                self.across.setdefault(net, []).append((k, (out,)))

    def through(self, net: str, ignore: str = "") -> str:
        """The first op-amp (by name; not ``ignore``) with ``net`` on a path between its
        output and its inputs, or ""."""
        for k in self.members.get(self.group(net), ()):
            out, inputs = self.ends[k]
            if self.names[k] == ignore:
                continue
            if net == out:
                return self.names[k]
            if net in inputs:
                if out in self._reach(net, k, inputs, maybe=True):
                    return self.names[k]
            elif self._two_paths(net, out, inputs, k):
                return self.names[k]
        return ""

    def _neighbours(self, net: str, k: int, maybe: bool = False) -> Iterable[str]:
        yield from self.adjacency.get(net, ())
        if maybe:
            yield from self.open_as_drawn.get(net, ())
        for j, leads in self.across.get(net, ()):
            if j != k:
                yield from leads

    def _reach(self, start: str, k: int, stops: set[str], maybe: bool = False) -> set[str]:
        """Nets reached from ``start``, not passing rails or through ``stops`` (with
        ``maybe``, also through connectors and open jumpers)."""
        seen = {start}
        queue = deque([start])
        while queue:
            node = queue.popleft()
            if node in stops and node != start:
                continue
            for nxt in self._neighbours(node, k, maybe):
                if nxt not in seen and nxt not in self.rails:
                    seen.add(nxt)
                    queue.append(nxt)
        return seen

    def _two_paths(self, start: str, out: str, inputs: set[str], k: int) -> bool:
        """Two paths from ``start``, one to ``out`` and one to an input, sharing no net but
        ``start`` (Menger's theorem: a flow of 2 with every net of capacity 1)."""
        ends = inputs | {out}
        nets = self._reach(start, k, ends)
        if out not in nets or not (inputs & nets):
            return False
        cap: dict[tuple[object, object], int] = {}
        arcs: dict[object, set[object]] = {}

        def arc(u: object, v: object) -> None:
            cap[(u, v)] = cap.get((u, v), 0) + 1
            cap.setdefault((v, u), 0)
            arcs.setdefault(u, set()).add(v)
            arcs.setdefault(v, set()).add(u)

        for net in nets:
            if net == out:
                arc((net, 0), "out")
            elif net in inputs:
                arc((net, 0), "in")
            else:
                if net != start:
                    arc((net, 0), (net, 1))
                for nxt in self._neighbours(net, k):
                    if nxt in nets:
                        arc((net, 1), (nxt, 0))
        arc("out", "sink")
        arc("in", "sink")
        source: object = (start, 1)
        for _ in range(2):
            parent: dict[object, object] = {source: source}
            queue: deque[object] = deque([source])
            while queue and "sink" not in parent:
                here = queue.popleft()
                for step in arcs.get(here, ()):
                    if step not in parent and cap[(here, step)] > 0:
                        parent[step] = here
                        queue.append(step)
            if "sink" not in parent:
                return False
            node: object = "sink"
            while node != source:
                prev = parent[node]
                cap[(prev, node)] -= 1
                cap[(node, prev)] += 1
                node = prev
        return True


def _place_resistors(b: _Builder, canon: Callable[[str], str], fixed: dict[str, str]
                     ) -> tuple[list[Resistor], list[Pot]]:
    """Step 5a: resistors between merged nets; annotated source resistances."""
    resistors: list[Resistor] = []
    index: dict[int, int] = {}
    for i, (ref, a, c, ohms, tol, src) in enumerate(b.resistors):
        x, y = canon(a), canon(c)
        if x != y:
            index[i] = len(resistors)
            resistors.append(Resistor(ref, x, y, ohms, tol, src))
    pots = [Pot(name, ref, ohms, index.get(i_a, -1), index.get(i_b, -1))
            for name, ref, ohms, i_a, i_b in b.pots]
    for net_name, ohms in sorted(b.source_resistance.items()):
        name = canon(net_name)
        if name in fixed and fixed[name] != "rail" and ohms > 0:
            source_node = f"{name} (source)"
            resistors.append(Resistor(f"Rsource({net_name})", source_node, name, ohms, 0.0,
                                      "annotated source resistance"))
            fixed[source_node] = fixed.pop(name)
            b.assumptions.append(f"net {net_name}: driven through the annotated source "
                                 f"resistance {ohms:g} Ω")
    return resistors, pots


def _place_opamps(netlist: Netlist, pin_net: dict[tuple[str, str], str],
                  units: list[OpampUnit], promoted: list[OpampUnit], fixed: dict[str, str],
                  canon: Callable[[str], str], resistors: list[Resistor],
                  left_out: list[OpampUnit]
                  ) -> tuple[list[OpampNode], list[OpampUnit], list[str],
                             dict[tuple[str, int, int | None], str],
                             list[tuple[OpampUnit, list[str]]]]:
    """Step 5b: op-amp units between their merged nets; spare units set aside.

    A unit whose output reaches nothing but its own pins (no other pin, no global or
    hierarchical label: a sheet read alone may take it on elsewhere) is set aside:

    * where an input floats (on no net, or alone on its net): a spare with floating
      inputs, listed with the pins;
    * where both inputs are on rails (the old tie-off), or, for a unit of a package whose
      other amplifiers are in use (analysed, or left out of the analysis), where its
      inputs are tied off: the + input on a source or a divider between sources (no
      other stage's signal) and the - input on the output (a follower) or so too.

    Anything else stays a stage, wherever its output goes."""
    opamps = []
    unused = []
    problems = []
    spares: dict[tuple[str, int, int | None], str] = {}
    floating_spares: list[tuple[OpampUnit, list[str]]] = []
    loads: dict[str, int] = {}
    labelled: set[str] = set()
    for net in netlist.nets:
        name = canon(net.name)
        loads[name] = loads.get(name, 0) + len(net.nodes)
        if net.is_global or net.kind in ("global_label", "hierarchical_label", "power"):
            labelled.add(name)  # it may lead on to another sheet or design
    comparators = {u.key for u in promoted}
    everyone = [*units, *promoted]
    outputs = {canon(n) for n in (pin_net.get((u.part.ref, u.out.number)) for u in everyone)
               if n is not None}
    neighbours: dict[str, set[str]] = {}
    for r in resistors:
        neighbours.setdefault(r.a, set()).add(r.b)
        neighbours.setdefault(r.b, set()).add(r.a)

    def quiet(net: str) -> bool:
        """On a source, or joined through resistors to sources only (a divider between
        rails, a reference): a level the design sets, not another stage's signal."""
        if net in fixed:
            return True
        seen, queue, ends = {net}, deque([net]), set()
        while queue:
            for other in neighbours.get(queue.popleft(), ()):
                if other in outputs:
                    return False
                if other in fixed:
                    ends.add(other)
                elif other not in seen:
                    seen.add(other)
                    queue.append(other)
        return bool(ends)

    placed: dict[tuple[str, int, int | None], list[str | None]] = {}
    for unit in everyone:
        placed[unit.key] = [canon(n) if n is not None else None for n in
                            (pin_net.get((unit.part.ref, pin.number))
                             for pin in (unit.plus, unit.minus, unit.out))]

    def nowhere(key: tuple[str, int, int | None], net: str | None) -> bool:
        """Nothing but this unit's own pins on ``net`` (or no net at all)."""
        if net is None:
            return True
        own = sum(1 for other in placed[key] if other == net)
        return net not in labelled and net not in fixed and loads.get(net, 0) <= own

    idle = {key for key, nets in placed.items() if nowhere(key, nets[2])}
    by_ref: dict[str, list[OpampUnit]] = {}
    for unit in everyone:
        by_ref.setdefault(unit.part.ref, []).append(unit)
    left_out_refs = {other.part.ref for other in left_out}
    for unit in everyone:
        ref, key = unit.part.ref, unit.key
        plus, minus, out = placed[key]
        floating = [f"pin {pin.number} ({sign})" for pin, net, sign in
                    zip((unit.plus, unit.minus), (plus, minus), ("+", "-"))
                    if nowhere(key, net) and net != out]
        siblings = any(other.key != key and other.key not in idle
                       for other in by_ref.get(ref, ())) or ref in left_out_refs
        rails = fixed.get(plus or "") == "rail" and fixed.get(minus or "") == "rail"
        tied = plus is not None and quiet(plus) and minus is not None and (
            minus == out or quiet(minus))
        if key in idle and (floating or rails or (siblings and tied)):
            unused.append(unit)
            if floating:
                spares[key] = f"spare, inputs floating ({', '.join(floating)})"
                floating_spares.append((unit, floating))
            elif minus == out:
                spares[key] = "spare, tied off as a follower"
            elif rails:
                spares[key] = "spare, inputs tied to rails, output not connected"
            else:
                spares[key] = "spare, inputs tied off, output not connected"
            continue
        if out is None or (plus is None and minus is None):
            unused.append(unit)  # nothing on the output, or both inputs open: not a stage
            spares[key] = "spare, output or inputs not connected"
            continue
        if plus is None or minus is None:
            problems.append(f"{ref}: an input pin of unit {unit.part.unit} is on no net; the "
                            "stage is not analysed")
            continue
        opamps.append(OpampNode(unit, plus, minus, out,
                                symbol="comparator" if key in comparators else ""))
    return opamps, unused, problems, spares, floating_spares


#: Pin types that make a part drive its net for the two-outputs check (bidirectional and
#: tri-state pins are often inputs: an ADC or port pin on an op-amp's output is normal).
_HARD_OUTPUTS = ("output", "power_out")


def _tied_outputs(netlist: Netlist, pin_net: dict[tuple[str, str], str],
                  analysed: list[OpampUnit], left_out: list[OpampUnit],
                  skipped: list[SkippedAmplifier], fixed: dict[str, str],
                  canon: Callable[[str], str]) -> dict[str, list[OutputDriver]]:
    """Nets that two outputs or more drive, at least one of them an op-amp's: net -> the
    drivers. Op-amp outputs, the push-pull outputs of amplifiers not analysed and the
    output and power-output pins of integrated circuits count; supply rails (a power
    symbol's net, which an op-amp may itself generate as a virtual ground) do not."""
    drivers: dict[str, list[OutputDriver]] = {}
    opamp_nets: set[str] = set()
    seen: set[tuple[str, str]] = set()

    def add(part: Part, pin: Pin, stage: str = "") -> None:
        raw = pin_net.get((part.ref, pin.number))
        if raw is None or (part.ref, pin.number) in seen:
            return
        seen.add((part.ref, pin.number))
        net = canon(raw)
        drivers.setdefault(net, []).append(OutputDriver(part.ref, part.unit, pin.number, stage,
                                                        pin.electrical_type))
        if stage:
            opamp_nets.add(net)

    opamp_units = {(u.part.ref, u.part.unit) for u in [*analysed, *left_out]}
    for unit in [*analysed, *left_out]:
        add(unit.part, unit.out, unit.name)
    amplifiers = {(s.part.ref, s.part.unit): s for s in skipped}
    for part in netlist.parts:
        if part.dnp or part.is_power or (part.ref, part.unit) in opamp_units:
            continue
        if (part.ref, part.unit) in amplifiers:
            pins = [p for p in output_pins(part) if p.electrical_type in _HARD_OUTPUTS]
        elif classify(part).dc == "ic":
            pins = [p for p in part.pins if p.electrical_type in _HARD_OUTPUTS]
        else:
            continue
        for pin in pins:
            add(part, pin)
    return {net: found for net, found in sorted(drivers.items())
            if len(found) > 1 and net in opamp_nets and fixed.get(net) != "rail"}


def _note_sources(network: Network, notes: list[str]) -> None:
    """State, once per net, the nets taken as ideal 0 V sources near the op-amps, and the
    would-be sources left open there."""
    near: set[str] = set()
    for opamp in network.opamps:
        near.update((opamp.plus, opamp.minus, opamp.out))
    for resistor in network.resistors:
        if resistor.a in near or resistor.b in near:
            near.update((resistor.a, resistor.b))
    rails = sorted(n for n in near if network.fixed.get(n) == "rail")
    if rails:
        network.assumptions.append("supply rails and ground are ideal 0 V sources for the error "
                                   f"analysis: {', '.join(rails)}")
    # the sources a stage's inputs reach through resistors, however far
    outputs = {opamp.out for opamp in network.opamps}
    reached: set[str] = set()
    queue = deque(n for opamp in network.opamps for n in (opamp.plus, opamp.minus))
    while queue:
        net = queue.popleft()
        if net in reached:
            continue
        reached.add(net)
        if net in network.fixed or net in outputs:
            continue
        queue.extend(r.b if r.a == net else r.a for r in network.resistors_at(net))
    for net in sorted(near | reached):
        why = network.fixed.get(net, "")
        if why.startswith(("external", "driven by")):
            network.assumptions.append(f"net {net}: {why}, taken as an ideal 0 V source "
                                       "(zero source impedance unless annotated)")
    for note in notes:
        net = note[4:].split(":", 1)[0]
        if net in near or net in reached:
            network.assumptions.append(note)

