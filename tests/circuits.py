"""Build connectivity models directly (no drawing) for engine tests.

``circuit("R1 in m 10k", "R2 m out 100k", "U1 p=GND m=m out=out Vos=1mV")``: each line is
a resistor (R), capacitor (C), inductor (L), diode/other (D, Q), connector (J, one net
per pin), integrated circuit (X: ``o=NET`` an output pin, ``b=NET`` a bidirectional one,
``i=NET`` an input, ``p=NET`` a power output, in pin order) or op-amp (U/IC: ``p=``,
``m=``, ``out=`` nets, ``unit=`` (pins numbered as a quad op-amp's), ``lib=`` and ``desc=``
(underscores for spaces) for another symbol, then symbol fields). Nets named GND, VCC,
VEE are power nets.
"""

from __future__ import annotations

from schemcheck.model import Net, Netlist, Node, Part, Pin

POWER = {"GND", "VCC", "VEE", "AGND"}
#: Pin numbers (+, -, output) of each unit: the usual dual and quad op-amp pinout.
_QUAD = {1: ("3", "2", "1"), 2: ("5", "6", "7"), 3: ("10", "9", "8"), 4: ("12", "13", "14")}


def circuit(*lines: str) -> Netlist:
    parts: list[Part] = []
    nets: dict[str, list[Node]] = {}

    def connect(ref: str, pin: str, net: str) -> None:
        nets.setdefault(net, []).append(Node(ref, pin))

    for line in lines:
        words = line.split()
        ref = words[0]
        letter = ref.rstrip("0123456789")
        if letter in ("R", "C", "L"):
            a, b, value = words[1], words[2], words[3]
            fields = dict(w.split("=", 1) for w in words[4:])
            lib = {"R": "Device:R", "C": "Device:C", "L": "Device:L"}[letter]
            pins = (Pin("1", "~", "passive", 1), Pin("2", "~", "passive", 1))
            parts.append(Part(ref, 1, value, lib, "/", {"Reference": ref, "Value": value,
                                                        **fields}, pins))
            connect(ref, "1", a)
            connect(ref, "2", b)
        elif letter in ("D", "Q"):
            pins = tuple(Pin(str(i + 1), f"P{i + 1}", "passive", 1) for i in range(len(words) - 1))
            lib = "Device:D" if letter == "D" else "Device:Q_NPN_BCE"
            parts.append(Part(ref, 1, "X", lib, "/", {"Reference": ref}, pins))
            for i, net in enumerate(words[1:]):
                connect(ref, str(i + 1), net)
        elif letter == "J":
            pins = tuple(Pin(str(i + 1), f"Pin_{i + 1}", "passive", 1)
                         for i in range(len(words) - 1))
            parts.append(Part(ref, 1, "CONN", "Connector:Conn_01x02", "/", {"Reference": ref},
                              pins))
            for i, net in enumerate(words[1:]):
                connect(ref, str(i + 1), net)
        elif letter == "X":
            types = {"o": "output", "b": "bidirectional", "i": "input", "p": "power_out"}
            pairs = [w.split("=", 1) for w in words[1:]]
            pins = tuple(Pin(str(i + 1), f"P{i + 1}", types[kind], 1)
                         for i, (kind, _) in enumerate(pairs))
            parts.append(Part(ref, 1, "ICX-1", "Invented_IC:ICX-1", "/", {"Reference": ref},
                              pins, description="Invented integrated circuit"))
            for i, (_, net) in enumerate(pairs):
                connect(ref, str(i + 1), net)
        else:  # op-amp
            spec = dict(w.split("=", 1) for w in words[1:])
            unit = int(spec.pop("unit", "1"))
            lib = spec.pop("lib", "Amplifier_Operational:Generic")
            desc = spec.pop("desc", "Operational_amplifier,_generic").replace("_", " ")
            numbers = _QUAD.get(unit, (f"{unit}3", f"{unit}2", f"{unit}1"))
            pins = (Pin(numbers[0], "+", "input", unit), Pin(numbers[1], "-", "input", unit),
                    Pin(numbers[2], "~", "output", unit))
            fields = {"Reference": ref, "Value": spec.pop("value", "OPX"),
                      **{k: v for k, v in spec.items() if k not in ("p", "m", "out")}}
            parts.append(Part(ref, unit, fields["Value"], lib, "/", fields, pins, unit_count=2,
                              description=desc))
            connect(ref, numbers[0], spec["p"])
            connect(ref, numbers[1], spec["m"])
            connect(ref, numbers[2], spec["out"])
    out_nets = tuple(Net(name, tuple(nodes), True, name in POWER, (),
                         "power" if name in POWER else "label") for name, nodes in nets.items())
    return Netlist(nets=out_nets, parts=tuple(parts), source="test", format="test")


def analysed(netlist: Netlist):
    """``netlist``'s DC network (op-amp figures from their fields, finite gains set), its
    solution and the figures: what the engine's tests start from."""
    from schemcheck.engine.dcerror import solve
    from schemcheck.engine.network import build_network
    from schemcheck.engine.params import resolve
    from schemcheck.engine.stages import recognise

    units, skipped = recognise(netlist.parts)
    network = build_network(netlist, units, skipped)
    params = [resolve(op.unit.part, {}) for op in network.opamps]
    for op, p in zip(network.opamps, params):
        op.aol = p.aol
    return network, solve(network), params
