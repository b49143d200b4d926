"""What a change of one part would do: the network with one resistor changed, replaced
by a wire, removed or added, solved again (pure).

Advice is given only where solving the changed network shows that it lowers the error
(:mod:`schemcheck.checks.bias_resistor`); the worst case is the budget's own
(:func:`schemcheck.engine.budget.stage_budget`), so the figures before and after are the
ones the report shows for the stage.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace

import numpy as np

from schemcheck.engine.budget import Figures, figures_once, total_at, worst_over_range
from schemcheck.engine.dcerror import (
    Component,
    Piece,
    Solution,
    System,
    invert,
    piece,
    read_inverse,
    solve,
    splice,
)
from schemcheck.engine.network import Network, Resistor
from schemcheck.engine.params import OpampParams, at_temperature

#: Boltzmann's constant, J/K (exact since the 2019 SI redefinition, BIPM SI Brochure 9th ed.)
BOLTZMANN = 1.380649e-23
KELVIN = 273.15


@dataclass(frozen=True, slots=True)
class Change:
    """One change to one part.

    ``kind``: ``value`` (resistor ``ref`` to ``ohms``), ``wire`` (``ref`` replaced by a
    wire), ``remove`` (``ref`` taken out), ``series`` (a new resistor ``ref`` of ``ohms``
    in series with op-amp ``opamp``'s ``pin``, ``+`` or ``-``)."""

    kind: str
    ref: str
    ohms: float = 0.0
    opamp: int = -1
    pin: str = ""


def apply(network: Network, change: Change) -> Network | None:
    """``network`` with ``change`` made; None where it cannot be made (a wire between two
    sources, a resistor that is not there)."""
    if change.kind == "series":
        return _series(network, change)
    found = [i for i, r in enumerate(network.resistors) if r.ref == change.ref]
    if len(found) != 1:
        return None
    index = found[0]
    old = network.resistors[index]
    if change.kind == "value":
        if change.ohms <= 0:
            return None
        resistors = list(network.resistors)
        resistors[index] = replace(old, ohms=change.ohms)
        return network.variant(resistors=resistors)
    if change.kind == "remove":
        return network.variant(resistors=[r for i, r in enumerate(network.resistors)
                                          if i != index])
    if change.kind == "wire":
        return _merge(network, index)
    raise ValueError(f"unknown change {change.kind!r}")


def _merge(network: Network, index: int) -> Network | None:
    """Resistor ``index`` replaced by a wire: its two nets become one."""
    old = network.resistors[index]
    if old.a in network.fixed and old.b in network.fixed:
        return None  # a wire between two sources
    keep, drop = (old.b, old.a) if old.b in network.fixed else (old.a, old.b)

    def net(name: str) -> str:
        return keep if name == drop else name

    resistors = [replace(r, a=net(r.a), b=net(r.b)) for i, r in enumerate(network.resistors)
                 if i != index]
    resistors = [r for r in resistors if r.a != r.b]
    opamps = [replace(op, plus=net(op.plus), minus=net(op.minus), out=net(op.out))
              for op in network.opamps]
    capacitors = [(ref, net(a), net(b)) for ref, a, b in network.capacitors]
    return network.variant(resistors=resistors, opamps=opamps, capacitors=capacitors)


def _series(network: Network, change: Change) -> Network | None:
    if not 0 <= change.opamp < len(network.opamps) or change.ohms <= 0:
        return None
    op = network.opamps[change.opamp]
    old = op.plus if change.pin == "+" else op.minus
    new = f"{old} ({change.ref} at {op.unit.name} {change.pin})"
    opamps = list(network.opamps)
    opamps[change.opamp] = (replace(op, plus=new) if change.pin == "+"
                            else replace(op, minus=new))
    resistors = [*network.resistors, Resistor(change.ref, new, old, change.ohms, 0.01,
                                              "suggested")]
    return network.variant(resistors=resistors, opamps=opamps)


def leaf_input(network: Network, net: str) -> int | None:
    """The op-amp whose + input is all ``net`` holds besides one resistor, or None: the net
    is then a leaf of the network, its voltage -R Ib+ of that op-amp and nothing else."""
    lookup = network.lookup()
    pins = lookup.pins.get(net, [])
    if len(pins) != 1 or len(lookup.resistors.get(net, ())) != 1:
        return None
    op = network.opamps[pins[0]]
    return pins[0] if op.plus == net and net not in (op.minus, op.out) else None


def worst_case(solution: Solution, k: int, params: list[OpampParams],
               temp_range: tuple[float, float], at: Figures = at_temperature) -> float | None:
    """Stage k's worst-case output error over the temperature range (volts): the total
    where every op-amp reaching it has figures, else its own terms alone; None where its
    output is undefined or its own figures are missing. ``at``: the op-amps' figures at a
    temperature (a cache may stand in)."""
    if solution.status[k] != "ok" or not params[k].complete:
        return None
    total = worst_over_range(solution, k, params, temp_range, at)
    if total is not None:
        return total
    low, high = temp_range
    return max(total_at(solution, k, params, temp, high, [k], at) for temp in {low, high})


@dataclass(frozen=True, slots=True)
class Outcome:
    """A change solved: the whole changed network's solution, stage k's status, noise
    gain and worst case after it (volts), and the other stages whose worst case it raises:
    index -> (before, after) in volts (after None where the stage loses its defined
    output)."""

    change: Change
    solution: Solution
    status: str
    noise_gain: float | None
    worst_case_v: float | None
    raised: dict[int, tuple[float, float | None]]


class WhatIf:
    """Changes tried on one solved network; the unchanged worst cases are kept.

    Only the piece of the network a change reaches is solved again (:func:`piece`): the
    other op-amps' figures cannot move, so a change costs the size of its piece, not of
    the sheet. A new value, or a wire in place of a + input's resistor to a rail where the
    input's net holds nothing else, keeps the connections (but that net's): the drawn
    system holding the resistor is changed and inverted afresh."""

    def __init__(self, network: Network, solution: Solution, params: list[OpampParams],
                 temp_range: tuple[float, float]) -> None:
        self.network = network
        self.solution = solution
        self.params = params
        self.temp_range = temp_range
        self._before: dict[int, float | None] = {}
        self._placed: dict[int, tuple[int, int]] | None = None  # resistor -> system, place
        self._pieces: dict[int, Piece] = {}  # resistor index -> the piece it reaches
        #: :func:`at_temperature`, each op-amp's figures worked out once per temperature
        self.figures: Figures = figures_once()
        self._refs: dict[str, list[int]] = {}
        for i, r in enumerate(network.resistors):
            self._refs.setdefault(r.ref, []).append(i)

    def _worst(self, solution: Solution, k: int) -> float | None:
        return worst_case(solution, k, self.params, self.temp_range, self.figures)

    def before(self, k: int) -> float | None:
        """Stage k's worst case as drawn (volts; see :func:`worst_case`)."""
        if k not in self._before:
            self._before[k] = self._worst(self.solution, k)
        return self._before[k]

    def _piece(self, change: Change) -> Piece | None:
        """The piece of the network ``change`` reaches; None where it names no one part."""
        if change.kind == "series":
            if not 0 <= change.opamp < len(self.network.opamps):
                return None
            return piece(self.network, [], [change.opamp])
        found = self._refs.get(change.ref, [])
        if len(found) != 1:
            return None
        if found[0] not in self._pieces:  # each change of one resistor reaches one piece
            r = self.network.resistors[found[0]]
            self._pieces[found[0]] = piece(self.network, [r.a, r.b])
        return self._pieces[found[0]]

    def attempt(self, k: int, change: Change) -> Outcome | None:
        """Solve the network with ``change`` made and measure stage k and every other
        solved stage it reaches again; None where the change cannot be made or does not
        reach stage k (it cannot lower its error)."""
        fast = (self._revalued(change) if change.kind == "value" else
                self._grounded(change) if change.kind == "wire" else None)
        if fast is not None:
            after, reached = fast
        else:
            found = self._piece(change)
            if found is None or k not in found.opamps:
                return None
            local = change
            if change.kind == "series":
                local = replace(change, opamp=found.opamps.index(change.opamp))
            changed = apply(found.network(self.network), local)
            if changed is None:
                return None
            after, reached = splice(self.solution, found.opamps, solve(changed)), found.opamps
        if k not in reached:
            return None
        raised: dict[int, tuple[float, float | None]] = {}
        for j in reached:
            if j == k or self.solution.status[j] != "ok":
                continue
            if (after.status[j] == "ok" and after.tainted[j] == self.solution.tainted[j]
                    and after.sensitivity[j] == self.solution.sensitivity[j]):
                continue  # not reached by the change
            before_j = self.before(j)
            if before_j is None:
                continue
            after_j = self._worst(after, j)
            if after_j is None or after_j > before_j:
                raised[j] = (before_j, after_j)
        own = after.own(k)
        return Outcome(change, after, after.status[k], own["vos"] if own else None,
                       self._worst(after, k), raised)

    def _held(self, ref: str) -> tuple[Resistor, int, int] | None:
        """Resistor ``ref`` (named once), the drawn system holding it and its place there;
        None where no solved system holds it."""
        if self._placed is None:
            self._placed = {id(r): (index, position)
                            for index, system in enumerate(self.solution.systems)
                            for position, r in enumerate(system.component.resistors)}
        found = self._refs.get(ref, [])
        if len(found) != 1:
            return None  # no one part: the full path says so
        resistor = self.network.resistors[found[0]]
        where = self._placed.get(id(resistor))
        if where is None or self.solution.systems[where[0]].inverse is None:
            return None
        return resistor, where[0], where[1]

    def _revalued(self, change: Change) -> tuple[Solution, list[int]] | None:
        """The solution with resistor ``change.ref`` at another value, where the drawn
        network solved the system holding it: the same connections, so the same statuses
        and the same system with one conductance changed, inverted afresh (what
        :func:`solve` of the changed network does, without finding its connections
        again), and the op-amps it reaches. None where that does not apply (the change is
        then solved in full)."""
        held = self._held(change.ref) if 0.0 < change.ohms < math.inf else None
        if held is None:
            return None
        old, index, position = held
        system = self.solution.systems[index]
        conductance = system.conductance.copy()
        conductance[position] = 1.0 / change.ohms
        resistors = list(system.component.resistors)
        resistors[position] = Resistor(old.ref, old.a, old.b, change.ohms, old.tolerance,
                                       old.tolerance_source)
        component = Component(system.component.nets, system.component.opamps, resistors)
        return self._with_system(index, System(
            component, system.base, system.stamps, conductance, system.rhs, system.columns,
            system.out_rows, system.net_rows))

    def _grounded(self, change: Change) -> tuple[Solution, list[int]] | None:
        """The solution with a resistor from a fixed net to a net that holds nothing else
        but one op-amp's + input replaced by a wire: that net joins the fixed one. It was
        a leaf of the network (no DC feedback can pass it, nothing else is grounded
        through it), so the statuses stay and the system loses its row and column and the
        resistor, as :func:`solve` of the changed network builds it; and the op-amps it
        reaches. None where that does not apply (the change is then solved in full)."""
        held = self._held(change.ref)
        if held is None:
            return None
        resistor, index, position = held
        fixed = self.network.fixed
        if (resistor.a in fixed) == (resistor.b in fixed):
            return None
        net = resistor.b if resistor.a in fixed else resistor.a
        k = leaf_input(self.network, net)  # the one resistor there is this one
        system = self.solution.systems[index]
        row = system.net_rows.get(net)
        if k is None or row is None or k not in system.out_rows:
            return None  # not a + input of a solved stage whose output is a row
        keep = [i for i in range(system.base.shape[0]) if i != row]

        def moved(i: int) -> int:
            return i - (i > row) if i >= 0 else -1

        nets = [n for n in system.component.nets if n != net]
        component = Component(nets, system.component.opamps,
                              [r for p, r in enumerate(system.component.resistors)
                               if p != position])
        return self._with_system(index, System(
            component, system.base[np.ix_(keep, keep)],
            [(moved(a), moved(b)) for p, (a, b) in enumerate(system.stamps) if p != position],
            np.delete(system.conductance, position), system.rhs[keep], system.columns,
            {k: moved(r) for k, r in system.out_rows.items()},
            {n: i for i, n in enumerate(nets)}))

    def _with_system(self, index: int, changed: System) -> tuple[Solution, list[int]]:
        """The drawn solution with system ``index`` replaced by ``changed``, solved, and
        the op-amps whose figures that moved."""
        before = self.solution
        after = Solution(list(before.status), list(before.sensitivity), list(before.tainted),
                         list(before.floating_inputs), list(before.systems), list(before.notes))
        for j in changed.component.opamps:
            after.sensitivity[j] = {}
            after.tainted[j] = False
        after.systems[index] = changed
        read_inverse(changed, invert(changed.matrix()), after)
        return after, changed.component.opamps


def thermal_noise(ohms: float, temp_c: float) -> float:
    """A resistor's thermal noise density sqrt(4kTR), V/sqrt(Hz), at ``temp_c`` °C."""
    return math.sqrt(4.0 * BOLTZMANN * (temp_c + KELVIN) * ohms)
