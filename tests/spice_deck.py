"""Random circuits through ngspice and through schemcheck, side by side.

ngspice (https://ngspice.sourceforge.io; Debian package ``ngspice``, checked with
ngspice-39, package version 39.3+ds-1) is an independent circuit simulator, run here as
a subprocess in batch mode (``ngspice -b deck.cir``). Each op-amp unit becomes, in the
deck (element syntax of the ngspice manual's independent sources and linear
voltage-controlled voltage source, from memory):

* ``V..vos  pi p  DC 0``: Vos in series with the + input (V(pi) = V(p) + Vos);
* ``E..  out 0  pi m  A``: a voltage-controlled voltage source, Vout = A (V(pi) - V(m)),
  with A the part's ``Aol`` where the schematic gives one, else a high stand-in gain for
  the engine's ideal op-amp;
* ``I..ibp  p 0  DC 0`` and ``I..ibm  m 0  DC 0``: bias currents flowing into the pins
  (a SPICE current source drives its current from its first node through itself to its
  second, so these draw current out of the input nets).

Every error source sits at 0 V / 0 A and one ``dc`` sweep per source takes it from 0 to 1:
by superposition the swept point is that source's sensitivity at every op-amp output
(V/V for Vos, V/A for the bias currents). A few circuits share one deck on disjoint
nodes. Capacitors are open and inductors short in ngspice's DC analysis by its own
device models; a 0R jumper is a 0 V source; the photodiode is left out (open at DC, as
the engine takes it); connector and global-label inputs are 0 V sources (or the
connector's ``Source_R`` to ground), as the engine takes them.

Accuracy of the reference:

* ideal op-amps: a stand-in gain A leaves a relative error of about noise gain / A, and
  the difference V(pi) - V(m) loses about 2e-16 x A of the output scale to rounding.
  Each deck runs twice, with A = 1e7 and 2A; every sensitivity is a smooth function of
  1/A, so 2 s(2A) - s(A) cancels the first-order error (Richardson extrapolation),
  leaving about (noise gain / A)^2, under 1e-6 for the noise gains drawn here (up to
  a few thousand), while rounding stays near 4e-9 of the output scale;
* ``.options pivrel=1``: ngspice's default relative pivot threshold (1e-3, the
  manual's matrix options, from memory) loosens partial pivoting, which on these decks
  of several high-gain sources cost up to 2e-5 relative (measured on 300 circuits);
  1 restores strict partial pivoting.
"""

from __future__ import annotations

import re
import shutil
import subprocess
from dataclasses import dataclass, field
from pathlib import Path

from schemcheck.circuit.load import load_netlist
from schemcheck.engine.dcerror import SOURCES, solve
from schemcheck.engine.network import build_network
from schemcheck.engine.params import resolve
from schemcheck.engine.stages import recognise

from .random_circuits import GROUND, RandomCircuit

NGSPICE = "ngspice"
STAND_IN_GAIN = 1e7  # V/V, the lower of the two stand-in gains for ideal op-amps
BATCH = 5  # circuits per deck: ngspice's time per sweep grows with the deck's size
_SOURCE_TAG = {"vos": "vos", "ib_plus": "ibp", "ib_minus": "ibm"}
_VALUE_LINE = re.compile(r"^v\(([^)]+)\)\[1\]\s*=\s*(\S+)\s*$")
_MARK_LINE = re.compile(r"^@@ (\d+) (\S+) (\d+) (\S+)\s*$")

AmpKey = tuple[str, int]  # (reference, unit)
#: (op-amp at the output, op-amp of the source, source) -> V/V (vos) or V/A (ib_*)
Sensitivities = dict[tuple[AmpKey, AmpKey, str], float]


class NgspiceError(RuntimeError):
    """ngspice could not run a deck, or its output was not what the deck asked for."""


def ngspice_version() -> str | None:
    """ngspice's version (``ngspice-39``), or None where it cannot run."""
    if shutil.which(NGSPICE) is None:
        return None
    try:
        done = subprocess.run([NGSPICE, "--version"], capture_output=True, text=True,
                              timeout=30, check=False)
    except (OSError, subprocess.SubprocessError):
        return None
    match = re.search(r"ngspice-\S+", done.stdout)
    return match.group(0) if match and done.returncode == 0 else None


def _node(index: int, net: str) -> str:
    if net == GROUND:
        return "0"
    return f"c{index}_" + re.sub(r"[^a-z0-9_]", "_", net.lower())


@dataclass(slots=True)
class _Sweep:
    circuit: int
    amp: AmpKey
    source: str
    element: str
    outputs: dict[str, AmpKey]  # ngspice node -> op-amp whose output it is


@dataclass(slots=True)
class Deck:
    text: str
    sweeps: list[_Sweep] = field(default_factory=list)


def deck(circuits: list[RandomCircuit], stand_in_gain: float = STAND_IN_GAIN) -> Deck:
    """One ngspice deck for ``circuits`` (circuit i on nodes ``c<i>_*``), ideal op-amps
    as VCVS of gain ``stand_in_gain``."""
    lines = ["* schemcheck random op-amp circuits: DC error sensitivities by superposition"]
    sweeps: list[_Sweep] = []
    for index, circuit in enumerate(circuits):
        def n(net: str, index: int = index) -> str:
            return _node(index, net)

        lines.append(f"* circuit {index}: {circuit.name} ({', '.join(circuit.families)})")
        for part in circuit.parts:
            name = f"{index}_{part.ref}"
            if part.lib_id == "Device:R" and part.ohms == 0.0:
                lines.append(f"V{name} {n(part.a)} {n(part.b)} DC 0")  # 0R jumper
            elif part.lib_id == "Device:R":
                lines.append(f"R{name} {n(part.a)} {n(part.b)} {part.ohms!r}")
            elif part.lib_id == "Device:L":
                lines.append(f"L{name} {n(part.a)} {n(part.b)} 10u")
            elif part.lib_id == "Device:C":
                lines.append(f"C{name} {n(part.a)} {n(part.b)} 100n")
            else:
                lines.append(f"* {part.ref} ({part.value}) left out: open at DC")
        for conn in circuit.connectors:
            name = f"{index}_{conn.ref}"
            if conn.source_ohms:
                lines.append(f"R{name}src {n(conn.net)} 0 {conn.source_ohms!r}")
            else:
                lines.append(f"V{name} {n(conn.net)} 0 DC 0")
        for net in sorted(circuit.global_inputs):
            lines.append(f"V{index}_ext_{n(net)} {n(net)} 0 DC 0")
        outputs = {n(amp.out): amp.key for amp in circuit.amps}
        for amp in circuit.amps:
            tag = f"{index}_{amp.ref}_{amp.unit}"
            inner = f"c{index}_{amp.ref.lower()}_{amp.unit}_pi"
            gain = amp.aol if amp.aol else stand_in_gain
            lines.append(f"V{tag}_vos {inner} {n(amp.plus)} DC 0")
            lines.append(f"E{tag} {n(amp.out)} 0 {inner} {n(amp.minus)} {gain!r}")
            sources = [("vos", f"V{tag}_vos")]
            for net, source in ((amp.plus, "ib_plus"), (amp.minus, "ib_minus")):
                if net != GROUND:
                    element = f"I{tag}_{_SOURCE_TAG[source]}"
                    lines.append(f"{element} {n(net)} 0 DC 0")
                    sources.append((source, element))
            for source, element in sources:
                sweeps.append(_Sweep(index, amp.key, source, element, outputs))
    lines += [".options pivrel=1", ".control", "set numdgt=15"]
    for sweep in sweeps:
        probes = " ".join(f"v({node})[1]" for node in sweep.outputs)
        lines += [f"dc {sweep.element} 0 1 1",
                  f"echo @@ {sweep.circuit} {sweep.amp[0]} {sweep.amp[1]} {sweep.source}",
                  f"print {probes}", "destroy all"]
    lines += ["quit", ".endc", ".end", ""]
    return Deck("\n".join(lines), sweeps)


def run(deck_: Deck, path: Path, timeout: float = 300.0) -> list[Sensitivities]:
    """Write ``deck_`` to ``path``, run it with ngspice; per circuit of the deck, every
    sensitivity it swept (a bias current into a grounded pin has none)."""
    path.write_text(deck_.text, encoding="utf-8")
    try:
        done = subprocess.run([NGSPICE, "-b", path.name], cwd=path.parent,
                              capture_output=True, text=True, timeout=timeout, check=False)
    except (OSError, subprocess.SubprocessError) as error:
        raise NgspiceError(f"{NGSPICE} -b {path}: {error}") from None
    count = 1 + max((s.circuit for s in deck_.sweeps), default=-1)
    found: list[Sensitivities] = [{} for _ in range(count)]
    current: _Sweep | None = None
    pending = iter(deck_.sweeps)
    values = 0
    for line in done.stdout.splitlines():
        mark = _MARK_LINE.match(line)
        if mark:
            current = next(pending, None)
            expected = (current.circuit, current.amp[0], current.amp[1], current.source) \
                if current else None
            got = (int(mark[1]), mark[2], int(mark[3]), mark[4])
            if got != expected:
                raise NgspiceError(f"{path}: sweep {got} out of order (expected {expected})")
            continue
        value = _VALUE_LINE.match(line)
        if value and current is not None:
            out = current.outputs[value[1]]
            found[current.circuit][(out, current.amp, current.source)] = float(value[2])
            values += 1
    wanted = sum(len(s.outputs) for s in deck_.sweeps)
    if done.returncode != 0 or values != wanted:
        tail = "\n".join((done.stdout + done.stderr).splitlines()[-20:])
        raise NgspiceError(f"{NGSPICE} -b {path}: exit {done.returncode}, {values} of "
                           f"{wanted} values read; last output:\n{tail}")
    return found


def simulate(circuits: list[RandomCircuit], folder: Path, batch: int = BATCH
             ) -> list[Sensitivities]:
    """ngspice's sensitivities for every circuit: decks of ``batch`` circuits, each run
    with the stand-in gain A and 2A and extrapolated to infinite gain, 2 s(2A) - s(A)."""
    out: list[Sensitivities] = []
    for start in range(0, len(circuits), batch):
        group = circuits[start:start + batch]
        low = run(deck(group, STAND_IN_GAIN), folder / f"deck{start:06d}_A.cir")
        high = run(deck(group, 2 * STAND_IN_GAIN), folder / f"deck{start:06d}_2A.cir")
        out.extend({key: 2.0 * h[key] - value for key, value in lo.items()}
                   for lo, h in zip(low, high))
    return out


@dataclass(slots=True)
class EngineResult:
    """What schemcheck made of one drawn circuit: its nets, each op-amp's status, and
    every output's sensitivities as the solver reports them (the figures each stage's
    ``sensitivity``, budgets and contributors are built from)."""

    nets: set[frozenset[tuple[str, str]]]
    status: dict[AmpKey, str]
    tainted: dict[AmpKey, bool]
    unused: list[AmpKey]
    skipped: list[str]
    sensitivity: Sensitivities


def engine(path: Path) -> EngineResult:
    """Read ``path`` and solve it as ``schemcheck audit`` does: reader, stage recognition,
    DC network, each op-amp's Aol from its fields, solve."""
    netlist = load_netlist(path)
    units, skipped = recognise(netlist.parts)
    network = build_network(netlist, units, skipped)
    for op in network.opamps:
        op.aol = resolve(op.unit.part, {}).aol
    solution = solve(network)
    keys = [(op.unit.part.ref, op.unit.part.unit) for op in network.opamps]
    sensitivity: Sensitivities = {}
    for k, key in enumerate(keys):
        for (j, source), value in solution.sensitivity[k].items():
            sensitivity[(key, keys[j], source)] = value
    return EngineResult(
        nets={frozenset((n.ref, n.pin) for n in net.nodes) for net in netlist.nets},
        status=dict(zip(keys, solution.status)),
        tainted=dict(zip(keys, solution.tainted)),
        unused=[(u.part.ref, u.part.unit) for u in network.unused],
        skipped=[f"{s.part.ref}: {s.reason}" for s in skipped],
        sensitivity=sensitivity)


RTOL = 1e-4
#: absolute floor, as a fraction of the largest effect of the same source on any output
#: (the reference's own error is under about 1e-7 of it, see the module docstring)
FLOOR_OF_SOURCE = 1e-6
#: absolute floor for a source that moves no output at all, as a fraction of the
#: circuit's largest sensitivity in the same unit (V/V for Vos, V/A for bias currents)
FLOOR_OF_UNIT = 1e-12
_SAME_UNIT = {"vos": ("vos",), "ib_plus": ("ib_plus", "ib_minus"),
              "ib_minus": ("ib_plus", "ib_minus")}


@dataclass(frozen=True, slots=True)
class Entry:
    """One sensitivity as both sides see it, and the disagreement allowed."""

    out: AmpKey
    amp: AmpKey
    source: str
    reference: float  # ngspice
    got: float  # schemcheck
    floor: float  # absolute part of the allowance

    @property
    def allowed(self) -> float:
        return RTOL * abs(self.reference) + self.floor

    @property
    def agrees(self) -> bool:
        return abs(self.got - self.reference) <= self.allowed


def entries(circuit: RandomCircuit, ours: EngineResult, spice: Sensitivities) -> list[Entry]:
    """Every op-amp output's sensitivity to every op-amp's Vos, Ib+ and Ib-, with the
    allowance RTOL |ngspice| + FLOOR_OF_SOURCE x (largest effect of that source on any
    output) + FLOOR_OF_UNIT x (largest sensitivity of the circuit in the same unit)."""
    keys = [amp.key for amp in circuit.amps]
    out: list[Entry] = []
    for source in SOURCES:
        unit_scale = max((abs(v) for (_, _, s), v in spice.items()
                          if s in _SAME_UNIT[source]), default=0.0)
        for amp in keys:
            column = {k: spice.get((k, amp, source), 0.0) for k in keys}
            floor = FLOOR_OF_SOURCE * max(abs(v) for v in column.values()) \
                + FLOOR_OF_UNIT * unit_scale
            out.extend(Entry(k, amp, source, reference,
                             ours.sensitivity.get((k, amp, source), 0.0), floor)
                       for k, reference in column.items())
    return out


def compare(circuit: RandomCircuit, ours: EngineResult, spice: Sensitivities) -> list[str]:
    """Every disagreement between schemcheck and ngspice on ``circuit``, as text: op-amps
    analysed, spare units, status, and each sensitivity of :func:`entries`."""
    problems = []
    keys = [amp.key for amp in circuit.amps]
    if set(ours.status) != set(keys):
        problems.append(f"op-amps analysed {sorted(ours.status)}, drawn {sorted(keys)}")
    if sorted(ours.unused) != sorted(circuit.spares):
        problems.append(f"unused units {sorted(ours.unused)}, spares drawn {circuit.spares}")
    if ours.skipped:
        problems.append(f"amplifiers not analysed: {ours.skipped}")
    for key in keys:
        if ours.status.get(key, "ok") != "ok" or ours.tainted.get(key):
            problems.append(f"{key[0]}/{key[1]}: status {ours.status.get(key)}, tainted "
                            f"{ours.tainted.get(key)}")
    for e in entries(circuit, ours, spice):
        if not e.agrees:
            error = abs(e.got - e.reference)
            rel = f"{error / abs(e.reference):.2e}" if e.reference else "inf"
            problems.append(f"output of {e.out[0]}/{e.out[1]}, {e.source} of "
                            f"{e.amp[0]}/{e.amp[1]}: ngspice {e.reference:.9g}, schemcheck "
                            f"{e.got:.9g} (relative error {rel})")
    return problems


def net_problems(circuit_nets: set[frozenset[tuple[str, str]]], ours: EngineResult
                 ) -> list[str]:
    """Nets drawn but not read back, and nets read but not drawn."""
    def show(nets: set[frozenset[tuple[str, str]]]) -> str:
        return "; ".join(" ".join(f"{r}.{p}" for r, p in sorted(net)) for net in nets)

    missing, extra = circuit_nets - ours.nets, ours.nets - circuit_nets
    if not missing and not extra:
        return []
    return [f"nets drawn but not read: {show(missing)}",
            f"nets read but not drawn: {show(extra)}"]
