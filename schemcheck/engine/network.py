"""The DC network of a design: resistors, shorts, fixed nets and op-amps (pure).

Built from the netlist and the recognised op-amp units:

* resistors from their value (``0R`` is a short, ``DNP`` or a do-not-populate part is
  absent); capacitors are open; inductors and ferrite beads are shorts; potentiometers
  are two resistors with the wiper at mid-travel; every other part is open at DC and
  listed as an assumption where it touches an analysed net;
* supply rails and ground (power-symbol nets), connector pins and global-label nets
  that nothing inside the design drives are fixed at 0 V: the error analysis looks at
  deviations only. A source resistance annotated on a connector (field
  ``Source_R``) or in the settings is placed between the net and its 0 V source.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field
from functools import lru_cache

from schemcheck.model import Netlist, Part, natural_key
from schemcheck.engine.stages import OpampUnit, SkippedAmplifier
from schemcheck.units import ValueFormatError, parse_resistance, parse_tolerance

_CAPACITOR = re.compile(r"^(?:C|CP|C_.*|CP_.*|Capacitor.*)$", re.I)
_RESISTOR = re.compile(r"^(?:R|R_.*|Resistor.*)$", re.I)
_POT = re.compile(r"^(?:R_Pot.*|R_POT.*|Potentiometer.*|RV.*|R_Trim.*)$", re.I)
_SHORT = re.compile(r"^(?:L|L_.*|Inductor.*|FerriteBead.*|Ferrite.*|NetTie.*|Jumper_.*Bridged.*|"
                    r"SolderJumper_.*_Bridged.*)$", re.I)
_CONNECTOR_LIB = re.compile(r"^(?:Connector|Connector_Generic|Connector_Audio|Connector_Coaxial)"
                            r"(?::|$)", re.I)


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


@dataclass(slots=True)
class Network:
    """What the solver needs, with net names already merged through shorts."""

    resistors: list[Resistor]
    opamps: list[OpampNode]
    fixed: dict[str, str]  # net -> why it is at 0 V ("rail", "external", "source R1")
    canonical: dict[str, str]  # original net -> merged net
    capacitors: list[tuple[str, str, str]] = field(default_factory=list)  # ref, a, b
    open_parts: dict[str, set[str]] = field(default_factory=dict)  # ref -> nets it touches
    assumptions: list[str] = field(default_factory=list)
    problems: list[str] = field(default_factory=list)
    unused: list[OpampUnit] = field(default_factory=list)  # spare units, tied off

    _by_net: dict[str, list[Resistor]] | None = None

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


def _kind(part: Part) -> str:
    """resistor, capacitor, short, pot, connector or other."""
    prefix = re.match(r"^[A-Za-z#]+", part.ref)
    return _kind_of(part.lib_id, prefix.group(0).upper() if prefix else "")


@lru_cache(maxsize=4096)
def _kind_of(lib_id: str, letters: str) -> str:
    """By the library symbol's name; by the reference letters where there is none
    (netlists of hand-made libraries)."""
    name = lib_id.split(":", 1)[-1]
    if _POT.match(name) or letters in ("RV", "VR"):
        return "pot"
    if _RESISTOR.match(name):
        return "resistor"
    if _CAPACITOR.match(name):
        return "capacitor"
    if _SHORT.match(name):
        return "short"
    if _CONNECTOR_LIB.match(lib_id) or (letters in ("J", "P", "CN", "X")
                                         and name.lower().startswith("conn")):
        return "connector"
    if not name:
        return {"R": "resistor", "C": "capacitor", "L": "short", "FB": "short",
                "J": "connector"}.get(letters, "other")
    return "other"


def build_network(netlist: Netlist, units: list[OpampUnit], skipped: list[SkippedAmplifier],
                  *, default_tolerance: float = 0.01,
                  source_resistance: dict[str, float] | None = None) -> Network:
    """The DC network of ``netlist`` with ``units`` as its op-amps."""
    source_resistance = dict(source_resistance or {})
    pin_net: dict[tuple[str, str], str] = {}
    for net in netlist.nets:
        for node in net.nodes:
            pin_net[(node.ref, node.pin)] = net.name
    merge = _Merge()
    assumptions: list[str] = []
    problems: list[str] = []
    resistors_raw: list[tuple[str, str, str, float, float, str]] = []
    capacitors: list[tuple[str, str, str]] = []
    open_parts: dict[str, set[str]] = {}
    connector_nets: dict[str, str] = {}
    opamp_refs = {(u.part.ref, u.part.unit) for u in units}
    skipped_refs = {(s.part.ref, s.part.unit): s.reason for s in skipped}

    for part in netlist.parts:
        if part.dnp or part.is_power:
            continue
        nets = [pin_net.get((part.ref, pin.number)) for pin in part.pins]
        if (part.ref, part.unit) in opamp_refs:
            continue
        if (part.ref, part.unit) in skipped_refs:
            touched = {n for n in nets if n}
            if touched:
                open_parts[part.ref] = touched
            continue
        kind = _kind(part)
        if kind in ("resistor", "short", "capacitor") and len(part.pins) == 2:
            a, b = nets
            if a is None or b is None:
                continue
            if kind == "capacitor":
                capacitors.append((part.ref, a, b))
                continue
            if kind == "short":
                merge.union(a, b)
                continue
            try:
                ohms = parse_resistance(part.value, f"the value of {part.ref}")
            except ValueFormatError as error:
                problems.append(f"{part.ref}: {error}; the resistor is left out (open)")
                continue
            if ohms is None:
                continue
            if ohms == 0.0:
                merge.union(a, b)
                continue
            tol, tol_source = _tolerance(part, default_tolerance, problems)
            resistors_raw.append((part.ref, a, b, ohms, tol, tol_source))
        elif kind == "pot" and len(part.pins) == 3:
            try:
                ohms = parse_resistance(_leading_value(part.value), f"the value of {part.ref}")
            except ValueFormatError as error:
                problems.append(f"{part.ref}: {error}; the potentiometer is left out (open)")
                continue
            if ohms is None:
                continue
            tol, tol_source = _tolerance(part, max(default_tolerance, 0.2), problems)
            order = sorted(range(3), key=lambda i: natural_key(part.pins[i].number))
            one, wiper, two = (nets[i] for i in order)
            name = part.ref if part.unit_count == 1 else f"{part.ref}/{part.unit}"
            for a, b, side in ((one, wiper, "a"), (wiper, two, "b")):
                if a is not None and b is not None:
                    resistors_raw.append((f"{name}({side})", a, b, ohms / 2, tol, tol_source))
            assumptions.append(f"{name}: potentiometer taken at mid-travel "
                               f"({ohms / 2:g} Ω each side)")
        elif kind == "connector":
            for n in nets:
                if n:
                    connector_nets.setdefault(n, part.ref)
            sr = part.field("Source_R")
            if sr:
                try:
                    ohms = parse_resistance(sr, f"field Source_R of {part.ref}")
                except ValueFormatError as error:
                    problems.append(str(error))
                    ohms = None
                if ohms:
                    for n in nets:
                        if n:
                            source_resistance.setdefault(n, ohms)
        else:
            touched = {n for n in nets if n}
            if touched:
                open_parts[part.ref] = touched

    canonical = {net.name: merge.find(net.name) for net in netlist.nets}
    canon = lambda n: canonical.get(n, merge.find(n))  # noqa: E731

    fixed: dict[str, str] = {}
    driven_raw, sources = _drivers(netlist, pin_net, units)
    driven = {canon(n) for n in driven_raw}
    for net in netlist.nets:
        if net.kind == "power":
            fixed[canon(net.name)] = "rail"
    opamp_outs = {canon(pin_net[(u.part.ref, u.out.number)]) for u in units
                  if (u.part.ref, u.out.number) in pin_net}
    for net_name, why in sorted(sources.items()):
        name = canon(net_name)
        if name not in fixed and name not in opamp_outs:
            fixed[name] = why
    for net_name, ref in connector_nets.items():
        name = canon(net_name)
        if name not in fixed and name not in driven:
            fixed[name] = f"external (connector {ref})"
    for net in netlist.nets:
        name = canon(net.name)
        if net.kind == "global_label" and name not in fixed and name not in driven:
            fixed[name] = "external (global label, no driver inside the design)"

    resistors = [Resistor(ref, canon(a), canon(b), ohms, tol, src)
                 for ref, a, b, ohms, tol, src in resistors_raw if canon(a) != canon(b)]
    # annotated source resistances: the net is then driven through that resistance
    for net_name, ohms in sorted(source_resistance.items()):
        name = canon(net_name)
        if name in fixed and fixed[name] != "rail" and ohms > 0:
            source_node = f"{name} (source)"
            resistors.append(Resistor(f"Rsource({net_name})", source_node, name, ohms, 0.0,
                                      "annotated source resistance"))
            fixed[source_node] = fixed.pop(name)
            assumptions.append(f"net {net_name}: driven through the annotated source "
                               f"resistance {ohms:g} Ω")

    opamps = []
    unused = []
    loads: dict[str, int] = {}
    for net in netlist.nets:
        loads[canon(net.name)] = loads.get(canon(net.name), 0) + len(net.nodes)
    for unit in units:
        ref = unit.part.ref
        ends = [pin_net.get((ref, pin.number)) for pin in (unit.plus, unit.minus, unit.out)]
        if ends[2] is None or (ends[0] is None and ends[1] is None):
            unused.append(unit)  # nothing on the output, or both inputs open: not a stage
            continue
        if None in ends:
            problems.append(f"{ref}: an input pin of unit {unit.part.unit} is on no net; the "
                            "stage is not analysed")
            continue
        plus, minus, out = (canon(n) for n in ends)
        if (fixed.get(plus) == "rail" and fixed.get(minus) == "rail" and loads.get(out, 0) <= 1):
            unused.append(unit)  # the usual tie-off of a spare amplifier
            continue
        opamps.append(OpampNode(unit, plus, minus, out))

    network = Network(resistors, opamps, fixed, canonical, capacitors, open_parts,
                      assumptions, problems, unused)
    _note_sources(network)
    return network


def _leading_value(value: str) -> str:
    """'A10k' (audio taper) -> '10k'; 'B100K' -> '100K'."""
    match = re.match(r"^[ABC](\d.*)$", value.strip())
    return match.group(1) if match else value


def _tolerance(part: Part, default: float, problems: list[str]) -> tuple[float, str]:
    text = part.field("Tolerance")
    if text:
        try:
            return parse_tolerance(text, f"field Tolerance of {part.ref}"), "field"
        except ValueFormatError as error:
            problems.append(f"{error}; the default {default:.2%} is used")
    match = re.search(r"(\d+(?:\.\d+)?)\s*%", part.value)
    if match:
        return float(match.group(1)) / 100.0, "value"
    return default, "default"


_DRIVING = ("output", "power_out", "tri_state", "open_collector")


def _drivers(netlist: Netlist, pin_net: dict[tuple[str, str], str],
             units: list[OpampUnit]) -> tuple[set[str], dict[str, str]]:
    """Nets driven from inside the design (by any output-type pin), and among them those
    driven by an output or power-output pin of a part that is not an analysed op-amp (a
    DAC, a reference, a regulator, a comparator), with why: ideal sources for the error
    analysis."""
    analysed = {(u.part.ref, u.out.number) for u in units}
    driven: set[str] = {pin_net[key] for key in analysed if key in pin_net}
    sources: dict[str, str] = {}
    for part in netlist.parts:
        if part.dnp or part.is_power:
            continue
        for pin in part.pins:
            if pin.electrical_type not in _DRIVING:
                continue
            net = pin_net.get((part.ref, pin.number))
            if net is None:
                continue
            driven.add(net)
            if pin.electrical_type in ("output", "power_out") and \
                    (part.ref, pin.number) not in analysed:
                sources.setdefault(net, f"driven by {part.ref} pin {pin.number} "
                                        f"({pin.electrical_type})")
    return driven, sources


def _note_sources(network: Network) -> None:
    """State, once per net, the nets taken as ideal 0 V sources near the op-amps."""
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
    for net in sorted(near):
        why = network.fixed.get(net, "")
        if why.startswith(("external", "driven by")):
            network.assumptions.append(f"net {net}: {why}, taken as an ideal 0 V source "
                                       "(zero source impedance unless annotated)")
