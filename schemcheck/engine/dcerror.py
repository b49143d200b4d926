"""DC network solve: the sensitivity of every op-amp output to every op-amp's Vos, Ib+
and Ib- (pure, numpy).

Modified nodal analysis over each connected part of the network, every op-amp in it:

* ideal op-amp: V(-) = V(+) + Vos (Vos in series with the + input, so a grounded
  buffer outputs +Vos); with a finite open-loop gain Aol: Vout = Aol (V(+) + Vos - V(-));
* Ib+ and Ib- flow into the pins (out of the nets);
* one solve with every error source as a right-hand-side column gives all
  sensitivities at once, so chains, feedback around several op-amps and shared nodes
  need no special cases; rounding noise far below a row's scale is taken as 0
  (:data:`NOISE`).

An op-amp whose input has no DC path (``no-bias-path``), whose output has no DC path
back to its inverting input (``no-dc-feedback``) or whose output net another output drives
too (``outputs-tied``: the first of them stands for the net) has no defined DC output. It
is solved as a source of unknown value: its own figures are unknown, and any output that depends
on it is marked ``tainted`` (its totals unknown, never a made-up number).
"""

from __future__ import annotations

import math
from collections import deque
from dataclasses import dataclass, field, replace

import numpy as np

from schemcheck.engine.network import Network, Resistor

SOURCES = ("vos", "ib_plus", "ib_minus")
#: A sensitivity below this share of its row's scale (the largest Vos gain, times the
#: largest resistance of the network for the V/A ones) is rounding noise of the solve
#: (like 6e-20 V/A where an ideal output absorbs a current) and is taken as 0.
NOISE = 1e-10
#: largest network solved (dense: 2000 unknowns is 32 MB a matrix and about a second)
MAX_UNKNOWNS = 2000
#: above this condition number (1-norm) a network's solution is not trusted
MAX_CONDITION = 1e13


@dataclass(slots=True)
class Component:
    """One independent piece of the network: its unknown nets and op-amps."""

    nets: list[str]
    opamps: list[int]  # indices into Network.opamps (analysed ones)
    resistors: list[Resistor]  # in the network's order


@dataclass(slots=True)
class System:
    """The MNA system of one component, split so resistor values can change:
    A(g) = base + sum_r g_r * stamp_r; right-hand sides one column per source."""

    component: Component
    base: np.ndarray
    stamps: list[tuple[int, int]]  # per resistor: (row/col of a, of b); -1 = fixed net
    conductance: np.ndarray
    rhs: np.ndarray
    columns: list[tuple[int, str]]  # per rhs column: (op-amp index, source or "unknown")
    out_rows: dict[int, int]  # op-amp index -> row of its output net
    net_rows: dict[str, int]
    #: the inverse of the nominal matrix (None until solved, or where it cannot be)
    inverse: np.ndarray | None = None

    def matrix(self, conductance: np.ndarray | None = None) -> np.ndarray:
        g = self.conductance if conductance is None else conductance
        a = self.base.copy()
        for (i, j), value in zip(self.stamps, g):
            _stamp(a, i, j, value)
        return a


def _stamp(a: np.ndarray, i: int, j: int, g: float) -> None:
    if i >= 0:
        a[i, i] += g
    if j >= 0:
        a[j, j] += g
    if i >= 0 and j >= 0:
        a[i, j] -= g
        a[j, i] -= g


@dataclass(slots=True)
class Solution:
    """Sensitivities and status of every op-amp of the network."""

    #: per op-amp index: "ok", "no-bias-path", "no-dc-feedback", "unsolvable", "output-fixed",
    #: "too-large" (its network has more than MAX_UNKNOWNS unknowns)
    #: "outputs-tied" (its output net is driven by another output too)
    status: list[str]
    #: op-amp k -> {(op-amp j, source): dVout_k / dsource}
    sensitivity: list[dict[tuple[int, str], float]]
    #: op-amp k's output depends on an op-amp with no defined DC output
    tainted: list[bool]
    #: op-amp k -> inputs with no DC path: [("+", net), ...]
    floating_inputs: list[list[tuple[str, str]]]
    systems: list[System] = field(default_factory=list)
    #: what was not analysed and why, for the report
    notes: list[str] = field(default_factory=list)
    _system_index: dict[int, int] | None = None

    def system_of(self, k: int) -> int | None:
        """The index in :attr:`systems` of the one op-amp k is solved in, or None."""
        if self._system_index is None:
            self._system_index = {j: i for i, system in enumerate(self.systems)
                                  for j in system.component.opamps}
        return self._system_index.get(k)

    def own(self, k: int) -> dict[str, float] | None:
        """Sensitivities of op-amp k's output to its own sources (V/V, V/A)."""
        if self.status[k] != "ok":
            return None
        return {s: self.sensitivity[k].get((k, s), 0.0) for s in SOURCES}


def _neighbours(network: Network, net: str) -> list[str]:
    """Nets one resistor away from ``net``."""
    return [r.b if r.a == net else r.a for r in network.resistors_at(net)]


def grounded_nets(network: Network) -> set[str]:
    """Nets with a DC path (through resistors) to a fixed net or an op-amp output."""
    seeds = set(network.fixed) | {op.out for op in network.opamps}
    seen = set(seeds)
    queue = deque(seeds)
    while queue:
        net = queue.popleft()
        for other in _neighbours(network, net):
            if other not in seen:
                seen.add(other)
                queue.append(other)
    return seen


def _through(network: Network) -> dict[str, set[str]]:
    """Op-amp input net -> output nets it drives."""
    through: dict[str, set[str]] = {}
    for other in network.opamps:
        for pin in (other.plus, other.minus):
            through.setdefault(pin, set()).add(other.out)
    return through


def has_dc_feedback(network: Network, k: int,
                    through: dict[str, set[str]] | None = None) -> bool:
    """True when op-amp k's output reaches its inverting input through resistors and
    other op-amps (input -> output), without passing through a fixed net."""
    opamp = network.opamps[k]
    if opamp.out == opamp.minus:
        return True
    fixed = network.fixed
    if opamp.minus in fixed or opamp.out in fixed:
        return False
    through = _through(network) if through is None else through
    seen = {opamp.out}
    queue = deque([opamp.out])
    while queue:
        net = queue.popleft()
        for nxt in [*_neighbours(network, net), *through.get(net, ())]:
            if nxt in fixed or nxt in seen:
                continue
            if nxt == opamp.minus:
                return True
            seen.add(nxt)
            queue.append(nxt)
    return False


def _components(network: Network, active: set[str]) -> list[Component]:
    parent: dict[str, str] = {n: n for n in active}

    def find(n: str) -> str:
        while parent[n] != n:
            parent[n] = parent[parent[n]]
            n = parent[n]
        return n

    def union(a: str, b: str) -> None:
        if a in parent and b in parent:
            ra, rb = find(a), find(b)
            if ra != rb:
                parent[rb] = ra

    for r in network.resistors:
        union(r.a, r.b)
    for op in network.opamps:
        for net in (op.plus, op.minus):
            union(net, op.out)
    groups: dict[str, Component] = {}
    for net in sorted(active):
        groups.setdefault(find(net), Component([], [], [])).nets.append(net)
    for k, op in enumerate(network.opamps):
        for net in (op.out, op.minus, op.plus):
            if net in parent:
                groups[find(net)].opamps.append(k)
                break
    for r in network.resistors:
        for net in (r.a, r.b):
            if net in parent:
                groups[find(net)].resistors.append(r)
                break
    return [c for c in groups.values() if c.opamps]


def build_system(network: Network, component: Component, status: list[str]) -> System:
    """The MNA system of ``component`` (unknowns: net voltages, then one output current
    per op-amp whose output net is not fixed)."""
    rows = {net: i for i, net in enumerate(component.nets)}
    n = len(rows)
    drivers = []
    taken: set[str] = set()
    for k in component.opamps:
        out = network.opamps[k].out
        if out not in rows or out in taken:
            continue  # a second output on one net: the first stands for the net (unknown)
        if out in network.tied:
            taken.add(out)
        drivers.append(k)
    size = n + len(drivers)
    base = np.zeros((size, size))
    columns: list[tuple[int, str]] = []
    for k in component.opamps:
        columns.extend((k, s) for s in SOURCES)
        if status[k] != "ok":
            columns.append((k, "unknown"))
    rhs = np.zeros((size, len(columns)))
    col = {key: i for i, key in enumerate(columns)}
    out_rows = {}
    for d, k in enumerate(drivers):
        op = network.opamps[k]
        row = n + d
        o = rows[op.out]
        out_rows[k] = o
        base[o, row] -= 1.0  # the op-amp's output current enters its output net
        if status[k] == "ok":
            p, m = rows.get(op.plus, -1), rows.get(op.minus, -1)
            if op.aol:
                base[row, o] += 1.0 / op.aol  # Vout/Aol - V(+) + V(-) = Vos
            if m >= 0:
                base[row, m] += 1.0
            if p >= 0:
                base[row, p] -= 1.0
            rhs[row, col[(k, "vos")]] = 1.0
        else:
            base[row, o] = 1.0  # V(out) = unknown source
            rhs[row, col[(k, "unknown")]] = 1.0
    for k in component.opamps:
        op = network.opamps[k]
        for net, source in ((op.plus, "ib_plus"), (op.minus, "ib_minus")):
            if net in rows:
                rhs[rows[net], col[(k, source)]] = -1.0  # current flows into the pin
    stamps = []
    conductance = []
    for r in component.resistors:
        stamps.append((rows.get(r.a, -1), rows.get(r.b, -1)))
        conductance.append(1.0 / r.ohms)
    return System(component, base, stamps, np.array(conductance), rhs, columns, out_rows, rows)


def solve(network: Network) -> Solution:
    """Sensitivities of every op-amp output to every op-amp's Vos, Ib+ and Ib-."""
    m = len(network.opamps)
    grounded = grounded_nets(network)
    status = ["ok"] * m
    floating: list[list[tuple[str, str]]] = [[] for _ in range(m)]
    through = _through(network)
    for k, op in enumerate(network.opamps):
        if op.out in network.fixed:
            status[k] = "output-fixed"
            continue
        if op.out in network.tied:
            status[k] = "outputs-tied"  # its level is whichever output wins: unknown
            continue
        for sign, net in (("+", op.plus), ("-", op.minus)):
            if net not in grounded:
                floating[k].append((sign, net))
        if floating[k]:
            status[k] = "no-bias-path"
        elif not has_dc_feedback(network, k, through):
            status[k] = "no-dc-feedback"
    all_nets = {r.a for r in network.resistors} | {r.b for r in network.resistors}
    for op in network.opamps:
        all_nets.update((op.plus, op.minus, op.out))
    active = {n for n in all_nets if n in grounded and n not in network.fixed}
    solution = Solution(status, [dict() for _ in range(m)], [False] * m, floating)
    by_size: dict[int, list[System]] = {}
    for component in _components(network, active):
        nets = set(component.nets)
        unknowns = len(nets) + sum(network.opamps[k].out in nets for k in component.opamps)
        if unknowns > MAX_UNKNOWNS:
            _too_large(network, component, unknowns, solution)
            continue
        system = build_system(network, component, status)
        solution.systems.append(system)
        # stacked by the matrix's own size: tied outputs share one row, so it can be
        # smaller than the count above (which only guards the size)
        by_size.setdefault(system.base.shape[0], []).append(system)
    for systems in by_size.values():
        for system, inverse in zip(systems, _inverses([s.matrix() for s in systems])):
            read_inverse(system, inverse, solution)
    return solution


@dataclass(frozen=True, slots=True)
class Piece:
    """The part of a network joined to some nets through resistors and op-amps (not
    through fixed nets): all that a change of a part on those nets can alter. Indices into
    the network's lists, in order; ``fixed`` the fixed nets at its edge."""

    opamps: list[int]
    resistors: list[int]
    fixed: dict[str, str]

    def network(self, network: Network) -> Network:
        """The piece alone, its op-amps numbered in the order of :attr:`opamps`."""
        return network.variant(resistors=[network.resistors[i] for i in self.resistors],
                               opamps=[network.opamps[k] for k in self.opamps],
                               fixed=self.fixed)


def piece(network: Network, nets: list[str], opamps: list[int] | None = None) -> Piece:
    """The piece of ``network`` holding ``nets`` and the op-amps ``opamps`` (see
    :class:`Piece`). Every connected part :func:`solve` takes apart lies wholly inside it
    or wholly outside, with everything its statuses depend on (bias paths, DC feedback),
    so solving the piece alone gives its op-amps the figures a solve of the whole network
    gives them."""
    lookup = network.lookup()
    fixed = network.fixed
    held: set[int] = set(opamps or ())
    resistors: set[int] = set()
    edge: dict[str, str] = {}
    start = [*nets]
    for k in held:
        op = network.opamps[k]
        start += (op.plus, op.minus, op.out)
    seen = set(start)
    queue = deque(start)
    while queue:
        net = queue.popleft()
        if net in fixed:
            edge[net] = fixed[net]
            continue  # a fixed net joins nothing
        reached: list[str] = []
        for i in lookup.resistors.get(net, ()):
            if i not in resistors:
                resistors.add(i)
                r = network.resistors[i]
                reached += (r.a, r.b)
        for k in lookup.pins.get(net, ()):
            if k not in held:
                held.add(k)
                op = network.opamps[k]
                reached += (op.plus, op.minus, op.out)
        for nxt in reached:
            if nxt not in seen:
                seen.add(nxt)
                queue.append(nxt)
    return Piece(sorted(held), sorted(resistors), edge)


def splice(before: Solution, opamps: list[int], part: Solution) -> Solution:
    """``before`` with the op-amps ``opamps`` solved anew: ``part`` is the solution of the
    piece they make up (:class:`Piece`, op-amp i of it is ``opamps[i]``), the rest as
    before. The notes are ``before``'s with the part's new ones."""
    status = list(before.status)
    sensitivity = list(before.sensitivity)
    tainted = list(before.tainted)
    floating = list(before.floating_inputs)
    for i, k in enumerate(opamps):
        status[k] = part.status[i]
        sensitivity[k] = {(opamps[j], source): value
                          for (j, source), value in part.sensitivity[i].items()}
        tainted[k] = part.tainted[i]
        floating[k] = part.floating_inputs[i]
    systems = list(before.systems)
    held = {before.system_of(k) for k in opamps}
    for i in sorted((i for i in held if i is not None), reverse=True):
        del systems[i]
    systems += [_renumbered(s, opamps) for s in part.systems]
    notes = [*before.notes, *(n for n in part.notes if n not in before.notes)]
    return Solution(status, sensitivity, tainted, floating, systems, notes)


def _renumbered(system: System, opamps: list[int]) -> System:
    component = system.component
    return replace(system,
                   component=Component(component.nets, [opamps[j] for j in component.opamps],
                                       component.resistors),
                   columns=[(opamps[j], source) for j, source in system.columns],
                   out_rows={opamps[j]: row for j, row in system.out_rows.items()})


def _inverses(matrices: list[np.ndarray]) -> list[np.ndarray | None]:
    """The inverse of each same-size matrix (one stacked LAPACK call); None where it is
    singular or its condition number (1-norm) exceeds MAX_CONDITION."""
    if len(matrices) == 1:  # the piece of a suggested change: no stacking to pay for
        return [invert(matrices[0])]
    stack = np.stack(matrices)
    try:
        inverses = np.linalg.inv(stack)
    except np.linalg.LinAlgError:  # one is singular: find which, one by one
        found = []
        for a in matrices:
            try:
                found.append(np.linalg.inv(a))
            except np.linalg.LinAlgError:
                found.append(np.full(a.shape, np.inf))
        inverses = np.stack(found)
    # an infinite condition number (a singular matrix, an overflow) is refused below
    with np.errstate(over="ignore", invalid="ignore"):
        condition = (np.abs(stack).sum(axis=1).max(axis=1)
                     * np.abs(inverses).sum(axis=1).max(axis=1))
    trusted = np.isfinite(condition) & (condition <= MAX_CONDITION)
    return [inverse if ok else None for inverse, ok in zip(inverses, trusted.tolist())]


def invert(a: np.ndarray) -> np.ndarray | None:
    """The inverse of one matrix, None as :func:`_inverses` says."""
    try:
        inverse = np.linalg.inv(a)
    except np.linalg.LinAlgError:
        return None
    with np.errstate(over="ignore", invalid="ignore"):  # inf or nan is refused below
        condition = float(np.abs(a).sum(axis=0).max()) * float(np.abs(inverse).sum(axis=0).max())
    return inverse if math.isfinite(condition) and condition <= MAX_CONDITION else None


def read_inverse(system: System, inverse: np.ndarray | None, solution: Solution) -> None:
    """The sensitivities of ``system``'s outputs from its nominal inverse."""
    status = solution.status
    if inverse is None:
        for k in system.component.opamps:
            if status[k] == "ok":
                status[k] = "unsolvable"
        return
    system.inverse = inverse
    rows = list(system.out_rows.values())
    x = (inverse[rows] @ system.rhs).tolist()  # Python floats from here on
    conductances = [g for g in system.conductance.tolist() if g > 0]
    ohms = max(1.0, 1.0 / min(conductances)) if conductances else 1.0
    for k, values in zip(system.out_rows, x):
        gain = max([1.0] + [abs(v) for (_, source), v in zip(system.columns, values)
                            if source == "vos"])
        for (j, source), value in zip(system.columns, values):
            if source == "unknown":
                if abs(value) > 1e-12:
                    solution.tainted[k] = True
                continue
            # Python floats: an overflow gives inf, without numpy's warning
            scale = gain if source == "vos" else gain * ohms
            if abs(value) > NOISE * scale:
                solution.sensitivity[k][(j, source)] = value


def _too_large(network: Network, component: Component, unknowns: int,
               solution: Solution) -> None:
    refs = []
    for k in component.opamps:
        if solution.status[k] == "ok":
            solution.status[k] = "too-large"
        part = network.opamps[k].unit.part
        refs.append(part.ref if part.unit_count == 1 else f"{part.ref}/{part.unit}")
    shown = ", ".join(refs[:8]) + (f" and {len(refs) - 8} more" if len(refs) > 8 else "")
    solution.notes.append(f"the DC network of {shown} has {unknowns} unknowns, more than the "
                          f"{MAX_UNKNOWNS} the solver takes: not analysed")
