"""Seeded random op-amp circuits for differential tests against an outside simulator.

A :class:`RandomCircuit` is a description only: parts, the nets they join and the
numbers behind every value text. ``tests/draw_circuits.py`` draws it as a schematic and
``tests/spice_deck.py`` writes it as a simulator deck, both from this description, so
the schematic reader and the engine meet the numbers only through the drawn file.

Every stage family of the trade appears: inverting, non-inverting and buffer, summing,
T-network, difference, transimpedance (photodiode input), Sallen-Key and multiple-
feedback filters (capacitors open at DC), integrators with a DC resistor, chains of
stages, a loop around two op-amps, three-op-amp instrumentation amplifiers. Op-amps are
single parts (supply pins drawn or hidden) or units of dual parts (a spare unit tied
off now and then); about a third carry a finite open-loop gain (field ``Aol``).
Resistor values use every notation the reader accepts (``4k7``, ``10k``, ``1M``,
``100R``, ``4r7``, ``4.7kΩ``, ``470ohm``, ``4.7e3``, ``4700``, ``10k 1%``, ``4k7/0.1%``);
``0R`` jumpers and inductors are shorts,
capacitors and the photodiode are open at DC.
"""

from __future__ import annotations

import random
from dataclasses import dataclass, field
from decimal import Decimal

GROUND = "GND"
#: Two-significant-digit mantissas (the E24 series) and a few three-digit ones.
E24 = ("10", "11", "12", "13", "15", "16", "18", "20", "22", "24", "27", "30", "33", "36", "39",
       "43", "47", "51", "56", "62", "68", "75", "82", "91")
THREE_DIGIT = ("100", "124", "137", "169", "249", "301", "392", "499", "604", "732", "845", "953")
#: Resistor value notations, by name (see :func:`notate`).
NOTATIONS = ("prefix", "split", "upper-k", "ohm-unit", "plain", "exponent", "tolerance")
FAMILIES = ("inverting", "non-inverting", "summing", "t-network", "difference",
            "transimpedance", "sallen-key", "multiple-feedback", "integrator", "chain",
            "two-opamp-loop", "in-amp")
#: Families that take one input net and give one output net (chainable).
_CHAINABLE = ("inverting", "non-inverting", "summing", "t-network", "difference",
              "sallen-key", "multiple-feedback", "integrator")


@dataclass(slots=True)
class TwoPin:
    """A resistor, capacitor, inductor or photodiode between nets ``a`` (pin 1) and
    ``b`` (pin 2)."""

    ref: str
    lib_id: str
    a: str
    b: str
    value: str  # as written on the schematic
    ohms: float | None = None  # resistors only: the value in ohms (0.0 for a 0R jumper)
    notation: str = ""


@dataclass(slots=True)
class Amp:
    """One op-amp unit: its nets, its package and its open-loop gain (None: ideal)."""

    plus: str
    minus: str
    out: str
    ref: str = ""
    unit: int = 1
    package: str = "single"  # single | hidden-supply | dual
    aol: float | None = None  # V/V
    aol_text: str | None = None
    fields: dict[str, str] = field(default_factory=dict)

    @property
    def key(self) -> tuple[str, int]:
        return (self.ref, self.unit)


@dataclass(slots=True)
class Connector:
    """A two-pin input connector: pin 1 on ``net``, pin 2 on ground; optionally a
    ``Source_R`` field (ohms as written, and as a number)."""

    ref: str
    net: str
    source_text: str | None = None
    source_ohms: float | None = None


@dataclass(slots=True)
class RandomCircuit:
    seed: int
    families: list[str] = field(default_factory=list)
    parts: list[TwoPin] = field(default_factory=list)
    amps: list[Amp] = field(default_factory=list)
    connectors: list[Connector] = field(default_factory=list)
    #: nets joined by global labels that nothing drives: external 0 V inputs
    global_inputs: set[str] = field(default_factory=set)
    #: op-amp outputs that carry a global label
    global_outputs: set[str] = field(default_factory=set)
    #: dual parts whose second unit is a spare, tied off (inputs to ground, output open)
    spares: list[tuple[str, int]] = field(default_factory=list)
    #: dual part reference -> open-loop gain text (None: ideal) shared by its units
    duals: dict[str, str | None] = field(default_factory=dict)

    @property
    def name(self) -> str:
        return f"rc{self.seed}"

    def features(self) -> set[str]:
        """What this circuit exercises (for coverage checks)."""
        out = set(self.families)
        out.update(f"notation:{p.notation}" for p in self.parts if p.notation)
        out.update(f"package:{a.package}" for a in self.amps)
        if any(a.aol for a in self.amps):
            out.add("finite-aol")
        if self.spares:
            out.add("spare-unit")
        if any(c.source_ohms for c in self.connectors):
            out.add("source-resistance")
        if self.global_inputs:
            out.add("global-input")
        if any(p.lib_id == "Device:L" for p in self.parts):
            out.add("inductor-short")
        if any(p.ohms == 0.0 for p in self.parts):
            out.add("jumper-0R")
        return out


def _decimal_value(rng: random.Random, low: float, high: float) -> Decimal:
    """A preferred value in [low, high] ohms."""
    while True:
        digits = rng.choice(E24 if rng.random() < 0.8 else THREE_DIGIT)
        exponent = rng.randint(0, 7) - (len(digits) - 1)
        value = Decimal(digits).scaleb(exponent)
        if Decimal(repr(low)) <= value <= Decimal(repr(high)):
            return value


def _engineering(value: Decimal) -> tuple[str, str]:
    """(mantissa text, prefix) with the mantissa in [1, 1000)."""
    for scale, prefix in ((Decimal(10) ** 6, "M"), (Decimal(1000), "k"), (Decimal(1), "")):
        if value >= scale:
            mantissa = (value / scale).normalize()
            return format(mantissa, "f"), prefix
    return format(value.normalize(), "f"), ""


def notate(value: Decimal, notation: str, rng: random.Random) -> str:
    """``value`` ohms written in ``notation`` (one of :data:`NOTATIONS`)."""
    mantissa, prefix = _engineering(value)
    if notation == "prefix":  # 4.7k, 47k, 1M, 470
        return f"{mantissa}{prefix}"
    if notation == "split":  # 4k7, 2M2, 49R9, 4r7, 47k, 100R
        mark = prefix or rng.choice(("R", "R", "r"))
        if "." in mantissa:
            return mantissa.replace(".", mark)
        return f"{mantissa}{mark}"
    if notation == "upper-k":  # 4K7, 47K (M and R otherwise)
        text = notate(value, rng.choice(("prefix", "split")), rng)
        return text.replace("k", "K")
    if notation == "ohm-unit":  # 4.7kΩ (Greek capital omega or the ohm sign), 470ohm
        return f"{mantissa}{prefix}" + rng.choice(("\u03a9", "\u03a9", "\u2126", "ohm", "ohms"))
    if notation == "plain":  # 4700
        return format(value.normalize(), "f")
    if notation == "exponent":  # 4.7e3
        mantissa_text, power = f"{value.normalize():e}".split("e")  # '4.7e+3'
        return f"{mantissa_text}e{int(power)}"
    if notation == "tolerance":  # 10k 1%, 4k7/0.1%
        text = notate(value, rng.choice(("prefix", "split")), rng)
        return text + rng.choice((" 1%", "/0.1%", " 5%"))
    raise ValueError(f"unknown notation {notation!r}")


#: Open-loop gains (V/V) and ways to write them; dB by 20 log10 (handbook definition).
_GAINS = ((1e4, ("80dB", "1e4", "10V/mV")), (1e5, ("100dB", "100000", "100 V/mV", "1e5 V/V")),
          (2e5, ("200V/mV", "2e5")), (1e6, ("120 dB", "1e6", "1000V/mV")),
          (3.16e4, ("3.16e4", "31.6V/mV")))


class _Builder:
    """Adds parts for one circuit; nets are named by role and a running number."""

    def __init__(self, rng: random.Random, circuit: RandomCircuit) -> None:
        self.rng = rng
        self.c = circuit
        self._count: dict[str, int] = {}

    def _next(self, letter: str) -> int:
        self._count[letter] = self._count.get(letter, 0) + 1
        return self._count[letter]

    def net(self, role: str) -> str:
        return f"{role}{self._next('net')}"

    def resistor(self, a: str, b: str, low: float, high: float) -> None:
        """A resistor a-b, now and then with an inductor or 0R jumper in series."""
        rng = self.rng
        if rng.random() < 0.08:
            mid = self.net("S")
            if rng.random() < 0.5:
                self._two("Device:L", "L", a, mid, rng.choice(("10uH", "1mH", "BLM-1")))
            else:
                self._two("Device:R", "R", a, mid, "0R", ohms=0.0)
            a = mid
        value = _decimal_value(rng, low, high)
        notation = rng.choice(NOTATIONS)
        self._two("Device:R", "R", a, b, notate(value, notation, rng), ohms=float(value),
                  notation=notation)

    def capacitor(self, a: str, b: str) -> None:
        self._two("Device:C", "C", a, b, self.rng.choice(("100n", "10nF", "1u", "2n2", "470p")))

    def photodiode(self, cathode: str, anode: str) -> None:
        self._two("Device:D", "D", cathode, anode, "PD-1")

    def _two(self, lib_id: str, letter: str, a: str, b: str, value: str,
             ohms: float | None = None, notation: str = "") -> None:
        if self.rng.random() < 0.5:
            a, b = b, a
        ref = f"{letter}{self._next(letter)}"
        self.c.parts.append(TwoPin(ref, lib_id, a, b, value, ohms, notation))

    def amp(self, plus: str, minus: str, out: str) -> None:
        self.c.amps.append(Amp(plus, minus, out))

    def source(self) -> str:
        """A signal input: ground, a connector (maybe with Source_R) or a net named by a
        global label that nothing drives; all are 0 V for the DC error analysis."""
        rng = self.rng
        roll = rng.random()
        if roll < 0.35:
            return GROUND
        net = self.net("IN")
        if roll < 0.7:
            ref = f"J{self._next('J')}"
            if rng.random() < 0.4:
                value = _decimal_value(rng, 10.0, 10e3)
                self.c.connectors.append(Connector(ref, net, notate(value, "split", rng),
                                                   float(value)))
            else:
                self.c.connectors.append(Connector(ref, net))
        else:
            self.c.global_inputs.add(net)
        return net

    def bias_plus(self) -> str:
        """The + input of an inverting-type stage: ground or a resistor to ground."""
        if self.rng.random() < 0.5:
            return GROUND
        plus = self.net("P")
        self.resistor(plus, GROUND, 1e3, 100e3)
        return plus

    def output(self, role: str = "O") -> str:
        out = self.net(role)
        if self.rng.random() < 0.3:
            self.c.global_outputs.add(out)
        return out

    # -- stage families: each returns its output net --------------------------------

    def inverting(self, inp: str) -> str:
        minus, out = self.net("M"), self.output()
        self.resistor(inp, minus, 1e3, 100e3)
        self.resistor(minus, out, 1e3, 1e6)
        self.amp(self.bias_plus(), minus, out)
        return out

    def non_inverting(self, inp: str) -> str:
        rng = self.rng
        plus = inp
        if inp == GROUND or rng.random() < 0.6:
            plus = self.net("P")
            self.resistor(inp, plus, 100.0, 100e3)
        out = self.output()
        if rng.random() < 0.35:  # buffer
            self.amp(plus, out, out)
        else:
            minus = self.net("M")
            self.resistor(minus, GROUND, 1e3, 100e3)
            self.resistor(minus, out, 1e3, 1e6)
            self.amp(plus, minus, out)
        return out

    def summing(self, inp: str) -> str:
        minus, out = self.net("M"), self.output()
        inputs = [inp] + [self.source() for _ in range(self.rng.randint(1, 3))]
        for net in inputs:
            self.resistor(net, minus, 10e3, 100e3)
        self.resistor(minus, out, 1e3, 1e6)
        self.amp(self.bias_plus(), minus, out)
        return out

    def t_network(self, inp: str) -> str:
        minus, tee, out = self.net("M"), self.net("T"), self.output()
        self.resistor(inp, minus, 10e3, 100e3)
        self.resistor(minus, tee, 10e3, 100e3)
        self.resistor(tee, out, 10e3, 100e3)
        self.resistor(tee, GROUND, 1e3, 10e3)
        self.amp(self.bias_plus(), minus, out)
        return out

    def difference(self, inp: str, other: str | None = None) -> str:
        minus, plus, out = self.net("M"), self.net("P"), self.output()
        other = self.source() if other is None else other
        reference = self.source() if self.rng.random() < 0.3 else GROUND
        self.resistor(inp, minus, 1e3, 100e3)
        self.resistor(minus, out, 1e3, 1e6)
        self.resistor(other, plus, 1e3, 100e3)
        self.resistor(plus, reference, 1e3, 1e6)
        self.amp(plus, minus, out)
        return out

    def transimpedance(self) -> str:
        minus, out = self.net("M"), self.output()
        if self.rng.random() < 0.8:
            self.photodiode(minus, self.source())
        self.resistor(minus, out, 10e3, 10e6)
        if self.rng.random() < 0.5:
            self.capacitor(minus, out)
        self.amp(self.bias_plus(), minus, out)
        return out

    def sallen_key(self, inp: str) -> str:
        a, plus, out = self.net("A"), self.net("P"), self.output()
        self.resistor(inp, a, 1e3, 100e3)
        self.resistor(a, plus, 1e3, 100e3)
        self.capacitor(a, out)
        self.capacitor(plus, GROUND)
        if self.rng.random() < 0.5:
            self.amp(plus, out, out)
        else:
            minus = self.net("M")
            self.resistor(minus, GROUND, 1e3, 100e3)
            self.resistor(minus, out, 1e3, 100e3)
            self.amp(plus, minus, out)
        return out

    def multiple_feedback(self, inp: str) -> str:
        a, minus, out = self.net("A"), self.net("M"), self.output()
        self.resistor(inp, a, 1e3, 100e3)
        self.resistor(a, out, 1e3, 100e3)
        self.resistor(a, minus, 1e3, 100e3)
        self.capacitor(a, GROUND)
        self.capacitor(minus, out)
        self.amp(self.bias_plus(), minus, out)
        return out

    def integrator(self, inp: str) -> str:
        minus, out = self.net("M"), self.output()
        self.resistor(inp, minus, 10e3, 100e3)
        self.resistor(minus, out, 100e3, 10e6)
        self.capacitor(minus, out)
        self.amp(self.bias_plus(), minus, out)
        return out

    def two_opamp_loop(self, inp: str) -> str:
        """An inverting stage whose feedback runs through a second op-amp (a buffer or a
        non-inverting stage behind a divider)."""
        rng = self.rng
        m1, o1, n1, o2 = self.net("M"), self.output(), self.net("N"), self.net("O")
        self.resistor(inp, m1, 1e3, 100e3)
        self.resistor(o1, n1, 1e3, 100e3)
        self.resistor(n1, GROUND, 1e3, 100e3)
        if rng.random() < 0.5:
            self.amp(n1, o2, o2)
        else:
            m2 = self.net("M")
            self.resistor(m2, GROUND, 1e3, 100e3)
            self.resistor(m2, o2, 1e3, 100e3)
            self.amp(n1, m2, o2)
        self.resistor(o2, m1, 10e3, 1e6)
        self.amp(self.bias_plus(), m1, o1)
        return o1

    def in_amp(self, inp: str, other: str | None = None) -> str:
        """Three-op-amp instrumentation amplifier: two non-inverting input stages sharing
        the gain resistor, into a difference stage."""
        other = self.source() if other is None else other
        m1, m2, o1, o2 = self.net("M"), self.net("M"), self.output(), self.output()
        plus1, plus2 = inp, other
        for net, which in ((inp, 1), (other, 2)):
            if net == GROUND or self.rng.random() < 0.4:
                plus = self.net("P")
                self.resistor(net, plus, 100.0, 100e3)
                if which == 1:
                    plus1 = plus
                else:
                    plus2 = plus
        self.resistor(m1, m2, 100.0, 100e3)
        self.resistor(m1, o1, 1e3, 100e3)
        self.resistor(m2, o2, 1e3, 100e3)
        self.amp(plus1, m1, o1)
        self.amp(plus2, m2, o2)
        return self.difference(o1, o2)

    def family(self, name: str, inp: str | None = None) -> str:
        if name == "transimpedance":  # its input is a photodiode current
            return self.transimpedance()
        inp = self.source() if inp is None else inp
        if name == "chain":
            out = inp
            for _ in range(self.rng.randint(2, 3)):
                out = self.family(self.rng.choice(_CHAINABLE), out)
            return out
        method = getattr(self, name.replace("-", "_"))
        return method(inp)


def _package(rng: random.Random, circuit: RandomCircuit) -> None:
    """Give every op-amp a reference, a unit, a package and maybe a finite Aol."""
    amps = list(circuit.amps)
    rng.shuffle(amps)
    number = 0
    while amps:
        number += 1
        ref = f"U{number}"
        gain, gain_text = None, None
        if rng.random() < 0.35:
            gain, texts = rng.choice(_GAINS)
            gain_text = rng.choice(texts)
        fields = {"Vos": rng.choice(("1mV", "250uV", "±3mV", "50µV")),
                  "Ib": rng.choice(("20nA", "±50pA", "1.5 nA", "200nA")),
                  "Ios": rng.choice(("2nA", "10pA", "150pA"))}
        if gain_text:
            fields["Aol"] = gain_text
        roll = rng.random()
        if roll < 0.55:
            group = amps[:2]
            del amps[:2]
            circuit.duals[ref] = gain_text
            for unit, amp in enumerate(group, start=1):
                amp.ref, amp.unit, amp.package = ref, unit, "dual"
            if len(group) == 1 and rng.random() < 0.6:
                circuit.spares.append((ref, 2))
        else:
            amp = amps.pop(0)
            amp.ref, amp.unit = ref, 1
            amp.package = "single" if roll < 0.8 else "hidden-supply"
            group = [amp]
        for amp in group:
            amp.aol, amp.aol_text, amp.fields = gain, gain_text, dict(fields)


def random_circuit(seed: int, family: str | None = None) -> RandomCircuit:
    """A random circuit from ``seed``: ``family`` (or a random one) plus up to two more
    independent groups of stages on the same sheet."""
    rng = random.Random(seed)
    circuit = RandomCircuit(seed)
    builder = _Builder(rng, circuit)
    chosen = [family or rng.choice(FAMILIES)]
    chosen += [rng.choice(FAMILIES) for _ in range(rng.choice((0, 0, 1, 2)))]
    for name in chosen:
        builder.family(name)
        circuit.families.append(name)
    _package(rng, circuit)
    _take_outputs_out(circuit)
    return circuit


def _take_outputs_out(circuit: RandomCircuit) -> None:
    """A follower whose output reaches nothing else is how a spare is tied off (common
    practice); a stage's output is taken somewhere: a global label on every follower
    output that nothing else uses (no random draw, so the circuits stay the same)."""
    used: dict[str, int] = {}
    for part in circuit.parts:
        for net in (part.a, part.b):
            used[net] = used.get(net, 0) + 1
    for amp in circuit.amps:
        for net in (amp.plus, amp.minus):
            used[net] = used.get(net, 0) + 1
    for conn in circuit.connectors:
        used[conn.net] = used.get(conn.net, 0) + 1
    for amp in circuit.amps:
        if amp.minus == amp.out and used.get(amp.out, 0) <= 1:
            circuit.global_outputs.add(amp.out)


def circuits(count: int, base_seed: int = 1) -> list[RandomCircuit]:
    """``count`` circuits; circuit i leads with family i mod len(FAMILIES), so every
    family appears in any run of len(FAMILIES) circuits."""
    return [random_circuit(base_seed * 1_000_000 + i, FAMILIES[i % len(FAMILIES)])
            for i in range(count)]
