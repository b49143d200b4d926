"""Which stages the drawing lets the tool analyse, and why not the others (pure).

An assumption must never create a defect the drawing does not have. A stage is *not
analysed*, with the reason, where:

* its DC network touches a part whose value could not be read (``unreadable-value``);
* an input has no DC path, or the output none back to the - input, through what the tool
  models, but one may run through a part it does not model: a transistor, a diode, a
  switch or multiplexer, a connector or open jumper (a cable or a jumper may close it),
  an amplifier that is not analysed, an integrated circuit's pin (``dc-path-unknown``);
* nothing at all leads from its output back to its - input, not even a capacitor: an
  open-loop use (a comparator, or an amplifier with internal gain drawn as an op-amp;
  ``open-loop``), whatever its inputs are wired to: an op-amp part used so, with both
  inputs on DC paths, is a comparator use (info); anything else a warning;
* an input has no DC path but a capacitor and an analog switch on it: a sample-and-hold
  (``hold-droop``: the bias current discharges the hold capacitor; a resistor to ground
  would destroy the hold);
* its DC feedback may close only through a part it does not model and a supply rail (a
  regulator whose pass transistor makes that rail): the loop is outside the model
  (``dc-path-unknown``).

A no-bias-path or no-DC-feedback stage whose missing path could only be a capacitor (or
nothing) keeps its error: that is a defect of the drawing.
"""

from __future__ import annotations

import re
from collections import deque
from dataclasses import dataclass

from schemcheck.engine.dcerror import Solution
from schemcheck.engine.network import Network, Unreadable
from schemcheck.engine.stages import described_as_opamp

#: Net names of ground (a transistor cannot make them): GND, AGND, GNDA, 0, VSS, earth.
_GROUND = re.compile(r"^(?:[ADPS]?GND\w*|GND\w*|0|V?SS\w*|[AD]VSS\w*|EARTH\w*|CHASSIS\w*|"
                     r"COM)$", re.I)
#: Kinds (in words) of the parts that switch a hold capacitor.
_SWITCHES = ("analog switch or multiplexer",)


@dataclass(frozen=True, slots=True)
class Hold:
    """A sample-and-hold input: the held net, the hold capacitors (to nets outside the
    input's resistive region) with their total capacitance in farads (None where a value
    could not be read), and the switches that reach it."""

    side: str  # "+" or "-"
    net: str
    capacitors: tuple[str, ...]
    capacitance_f: float | None
    switches: tuple[str, ...]


@dataclass(frozen=True, slots=True)
class Omission:
    """Stage ``k`` (index into ``Network.opamps``) is not analysed."""

    k: int
    rule: str  # "unreadable-value", "dc-path-unknown", "open-loop"
    reason: str  # short, for the not-analysed list
    detail: str  # the finding's message after the stage's name
    parts: tuple[str, ...] = ()
    unreadable: Unreadable | None = None
    severity: str = "warning"
    hold: Hold | None = None
    #: the stage's topology label (set by the caller)
    topology: str = ""


def omissions(network: Network, solution: Solution) -> list[Omission]:
    """The stages of ``network`` that cannot be analysed, each with why."""
    found: list[Omission] = []
    for k, status in enumerate(solution.status):
        touched = _unreadable_in_reach(network, k)
        if touched is not None:
            found.append(Omission(
                k, "unreadable-value",
                f"{touched.ref} {touched.field} {touched.text!r} could not be read "
                f"({touched.why})",
                f"its DC network runs through {touched.ref}, whose {touched.field} "
                f"{touched.text!r} could not be read ({touched.why})",
                (touched.ref,), touched))
        elif status == "no-bias-path":
            loop = _open_loop(network, solution, k)
            found.extend([loop] if loop is not None
                         else _bias_through_unmodelled(network, solution, k))
        elif status == "no-dc-feedback":
            found.extend(_feedback_through_unmodelled(network, solution, k))
    return found


def _unreadable_in_reach(network: Network, k: int) -> Unreadable | None:
    """The first unreadable part in stage k's DC network: reached from its inputs through
    resistors and unreadable parts, not through fixed nets or op-amp outputs."""
    if not network.unreadable:
        return None
    op = network.opamps[k]
    fixed, outputs = network.fixed, network.lookup().outputs
    by_net: dict[str, list[Unreadable]] = {}
    for part in network.unreadable:
        for net in part.nets:
            by_net.setdefault(net, []).append(part)
    seen = {op.plus, op.minus}
    queue = deque(seen)
    while queue:
        net = queue.popleft()
        if net in fixed or net in outputs:
            continue  # a source or an op-amp output: what hangs on it does not matter here
        if net in by_net:
            return by_net[net][0]
        for resistor in network.resistors_at(net):
            other = resistor.b if resistor.a == net else resistor.a
            if other not in seen:
                seen.add(other)
                queue.append(other)
    return None


def _region(network: Network, net: str) -> set[str]:
    """Nets joined to ``net`` through resistors."""
    seen = {net}
    queue = deque([net])
    while queue:
        here = queue.popleft()
        for resistor in network.resistors_at(here):
            other = resistor.b if resistor.a == here else resistor.a
            if other not in seen:
                seen.add(other)
                queue.append(other)
    return seen


def _bias_through_unmodelled(network: Network, solution: Solution, k: int) -> list[Omission]:
    op = network.opamps[k]
    for sign, net in solution.floating_inputs[k]:
        region = _region(network, net)
        parts = sorted(ref for ref, nets in network.may_conduct.items()
                       if nets & region and nets - region)
        leaves = sorted({network.leaves[n] for n in region if n in network.leaves})
        if not parts and not leaves:
            continue
        side = "non-inverting (+)" if sign == "+" else "inverting (-)"
        hold = _hold(network, sign, net, region, parts)
        if hold is not None:
            switches = ", ".join(f"{ref} ({network.kinds.get(ref, 'part')})"
                                 for ref in hold.switches)
            return [Omission(k, "hold-droop",
                             f"sample-and-hold input: the {side} input is held by "
                             f"{', '.join(hold.capacitors)} through {switches}",
                             f"the {side} input (net {net}) is held by "
                             f"{', '.join(hold.capacitors)} and reached only through "
                             f"{switches}: a sample-and-hold", tuple(parts), hold=hold)]
        through = ", ".join([f"{ref} ({network.kinds.get(ref, 'part')})" for ref in parts]
                            + [f"{leaf}, which the tool does not model" for leaf in leaves])
        return [Omission(k, "dc-path-unknown",
                         f"the {side} input's DC bias can only come through {through}",
                         f"the {side} input (net {net}) gets its DC bias, if any, only "
                         f"through {through}: the tool does not know that part's DC "
                         "behaviour", tuple(parts))]
    del op
    return []


def _hold(network: Network, sign: str, net: str, region: set[str], parts: list[str]
          ) -> Hold | None:
    """The floating input as a sample-and-hold: a capacitor from its region to another net
    and an analog switch reaching it; None where it is not one."""
    switches = tuple(ref for ref in parts if network.kinds.get(ref) in _SWITCHES)
    caps = tuple(sorted({ref for ref, a, b in network.capacitors
                         if (a in region) != (b in region)}))
    if not switches or not caps:
        return None
    values = [network.capacitance.get(ref) for ref in caps]
    total = None if any(v is None for v in values) else sum(v or 0.0 for v in values)
    return Hold(sign, net, caps, total, switches)


def _integrator(network: Network, k: int) -> list[str]:
    op = network.opamps[k]
    return sorted(ref for ref, a, b in network.capacitors if {a, b} == {op.minus, op.out})


def _feedback_through_unmodelled(network: Network, solution: Solution, k: int
                                 ) -> list[Omission]:
    op = network.opamps[k]
    caps = _integrator(network, k)
    held = (f"an integrator ({', '.join(caps)} from its output to its - input) inside a loop "
            if caps else "")
    if op.minus not in network.fixed and op.out not in network.fixed:
        path = _path(network, k, unmodelled=True, capacitors=False)
        if path is not None:
            through = ", ".join(f"{ref} ({network.kinds.get(ref, 'part')})" for ref in path)
            if held:
                return [Omission(k, "dc-path-unknown",
                                 f"an integrator whose DC loop closes only through {through}",
                                 f"it is {held}that closes only through {through}: the loop "
                                 "is outside the model", tuple(path))]
            return [Omission(k, "dc-path-unknown", f"DC feedback can only run through {through}",
                             f"its DC feedback, if any, runs only through {through}: the tool "
                             "does not know that part's DC behaviour", tuple(path))]
        rail = path_through_rail(network, k)
        if rail is not None:
            parts, net = rail
            through = ", ".join(f"{ref} ({network.kinds.get(ref, 'part')})" for ref in parts)
            what = f"it is {held}that" if held else "its DC feedback"
            return [Omission(k, "dc-path-unknown",
                             f"DC feedback may close only through {through} and the rail {net}"
                             " (a regulator loop)",
                             f"{what} may close only through {through} and the supply rail "
                             f"{net} (a regulator whose pass element makes that rail): the "
                             "loop is outside the model", tuple(parts))]
        if _path(network, k, unmodelled=True, capacitors=True) is not None:
            return []  # feedback through capacitors only: a real no-dc-feedback defect
    return [_open_loop_omission(network, solution, k)]


def _open_loop(network: Network, solution: Solution, k: int) -> Omission | None:
    """Stage k as an open-loop use where nothing at all (not even a capacitor, a part the
    tool does not model or a rail a transistor may make) leads from its output back to its -
    input."""
    op = network.opamps[k]
    if op.minus == op.out:
        return None
    if op.minus not in network.fixed and op.out not in network.fixed and (
            _path(network, k, unmodelled=True, capacitors=True) is not None
            or path_through_rail(network, k) is not None):
        return None
    return _open_loop_omission(network, solution, k)


def _open_loop_omission(network: Network, solution: Solution, k: int) -> Omission:
    unit = network.opamps[k].unit
    floating = solution.floating_inputs[k]
    holds = []
    for sign, net in floating:
        region = _region(network, net)
        parts = sorted(ref for ref, nets in network.may_conduct.items()
                       if nets & region and nets - region)
        holds.append(_hold(network, sign, net, region, parts))
    if floating and all(holds) and described_as_opamp(unit.part):
        held = "; ".join(f"its {h.side} input (net {h.net}) is held by "
                         f"{', '.join(h.capacitors)} through {', '.join(h.switches)}"
                         for h in holds if h is not None)
        return Omission(k, "open-loop", "comparator use (open loop) of a held input",
                        "it is an op-amp used open loop as a comparator (nothing leads from "
                        f"its output back to its - input) and {held}: a sample-and-hold; the "
                        "held level droops by Ib/C while the switch is open",
                        severity="info")
    if floating:
        sides = " and ".join(f"{'+' if sign == '+' else '-'} input (net {net})"
                             for sign, net in floating)
        return Omission(k, "open-loop", "open loop, and an input with no DC path",
                        "nothing leads from its output back to its - input, not even a "
                        f"capacitor: an open-loop use, and its {sides} has no DC path: check "
                        "what drives it")
    if described_as_opamp(unit.part):
        return Omission(k, "open-loop", "comparator use (open loop)",
                        "it is an op-amp used open loop as a comparator (nothing leads from its "
                        "output back to its - input): not a gain stage, its DC error is not "
                        "budgeted", severity="info")
    return Omission(k, "open-loop", "open loop: nothing leads from the output back to the "
                    "- input",
                    "nothing leads from its output back to its - input, not even a "
                    "capacitor: an open-loop use (a comparator, or an amplifier with internal "
                    "gain drawn as an op-amp), not an op-amp gain stage")


def path_through_rail(network: Network, k: int) -> tuple[list[str], str] | None:
    """A path from op-amp k's output to its - input that enters a supply rail (not ground)
    only from a part the tool does not model (a pass transistor making that rail) and
    leaves it through resistors: (the unmodelled parts on it, the rail), or None."""
    op = network.opamps[k]
    if op.minus in network.fixed or op.out in network.fixed:
        return None
    hubs: dict[str, list[str]] = {}
    for ref, nets in network.may_conduct.items():
        for net in nets:
            hubs.setdefault(net, []).append(ref)
    rails = {net for net, why in network.fixed.items()
             if why == "rail" and not _GROUND.match(net.rsplit("/", 1)[-1])}
    through: dict[str, set[str]] = {}
    for j, other in enumerate(network.opamps):
        if j != k:
            for pin in (other.plus, other.minus):
                through.setdefault(pin, set()).add(other.out)
    # states: (net, entered a rail yet)
    start = (op.out, "")
    parent: dict[tuple[str, str], tuple[tuple[str, str], str]] = {}
    seen = {start}
    queue = deque([start])
    while queue:
        state = queue.popleft()
        net, rail = state
        steps: list[tuple[str, str]] = []
        for resistor in network.resistors_at(net):
            steps.append((resistor.b if resistor.a == net else resistor.a, ""))
        if net not in network.fixed:
            steps.extend((n, "") for n in through.get(net, ()))
            for ref in hubs.get(net, ()):
                steps.extend((n, ref) for n in network.may_conduct[ref] if n != net)
        for nxt, ref in steps:
            if nxt in network.fixed:
                if rail or nxt not in rails or not ref:
                    continue  # a rail is entered once, and only from an unmodelled part
                new = (nxt, nxt)
            else:
                new = (nxt, rail)
            if new in seen:
                continue
            seen.add(new)
            parent[new] = (state, ref)
            if nxt == op.minus and new[1]:
                refs = []
                node = new
                while node != start:
                    node, ref_on = parent[node]
                    if ref_on:
                        refs.append(ref_on)
                return sorted(set(refs)), new[1]
            queue.append(new)
    return None


def _path(network: Network, k: int, *, unmodelled: bool, capacitors: bool
          ) -> list[str] | None:
    """The parts that may conduct on a path from op-amp k's output to its - input (an
    empty list for a path of resistors and op-amps), or None where there is none. Fixed
    nets are not passed."""
    op = network.opamps[k]
    hubs: dict[str, list[str]] = {}
    if unmodelled:
        for ref, nets in network.may_conduct.items():
            for net in nets:
                hubs.setdefault(net, []).append(ref)
    caps: dict[str, list[str]] = {}
    if capacitors:
        for _, a, b in network.capacitors:
            caps.setdefault(a, []).append(b)
            caps.setdefault(b, []).append(a)
    through: dict[str, set[str]] = {}
    for j, other in enumerate(network.opamps):
        if j != k:
            for pin in (other.plus, other.minus):
                through.setdefault(pin, set()).add(other.out)
    parent: dict[str, tuple[str, str]] = {}
    seen = {op.out}
    queue = deque([op.out])
    while queue:
        net = queue.popleft()
        steps: list[tuple[str, str]] = []
        for resistor in network.resistors_at(net):
            steps.append((resistor.b if resistor.a == net else resistor.a, ""))
        steps.extend((n, "") for n in through.get(net, ()))
        steps.extend((n, "") for n in caps.get(net, ()))
        for ref in hubs.get(net, ()):
            steps.extend((n, ref) for n in network.may_conduct[ref] if n != net)
        for nxt, ref in steps:
            if nxt in seen or nxt in network.fixed:
                continue
            seen.add(nxt)
            parent[nxt] = (net, ref)
            if nxt == op.minus:
                refs = []
                node = nxt
                while node != op.out:
                    node, ref_on = parent[node]
                    if ref_on:
                        refs.append(ref_on)
                return sorted(set(refs))
            queue.append(nxt)
    return None


def excluded_sources(network: Network, k: int) -> list[str]:
    """Amplifiers that are not analysed whose outputs feed stage k (through resistors and
    other analysed stages): its totals leave out their error."""
    op = network.opamps[k]
    drivers = network.lookup().drivers
    found: list[str] = []
    seen = {op.plus, op.minus}
    queue = deque(seen)
    while queue:
        net = queue.popleft()
        driver = network.driven_by.get(net)
        if driver and driver not in found:
            found.append(driver)
        if net in network.fixed or net == op.out:
            continue  # a source, or the stage's own output (an ideal source for its load)
        others = [j for j in drivers.get(net, ()) if j != k]
        if others:  # another stage's output: its error comes from its inputs
            upstream = network.opamps[others[-1]]
            nexts = [upstream.plus, upstream.minus]
        else:
            nexts = [r.b if r.a == net else r.a for r in network.resistors_at(net)]
        for other in nexts:
            if other not in seen:
                seen.add(other)
                queue.append(other)
    return found
