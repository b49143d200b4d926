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
  ``open-loop``).

A no-bias-path or no-DC-feedback stage whose missing path could only be a capacitor (or
nothing) keeps its error: that is a defect of the drawing.
"""

from __future__ import annotations

from collections import deque
from dataclasses import dataclass

from schemcheck.engine.dcerror import Solution
from schemcheck.engine.network import Network, Unreadable


@dataclass(frozen=True, slots=True)
class Omission:
    """Stage ``k`` (index into ``Network.opamps``) is not analysed."""

    k: int
    rule: str  # "unreadable-value", "dc-path-unknown", "open-loop"
    reason: str  # short, for the not-analysed list
    detail: str  # the finding's message after the stage's name
    parts: tuple[str, ...] = ()
    unreadable: Unreadable | None = None


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
            found.extend(_bias_through_unmodelled(network, solution, k))
        elif status == "no-dc-feedback":
            found.extend(_feedback_through_unmodelled(network, k))
    return found


def _unreadable_in_reach(network: Network, k: int) -> Unreadable | None:
    """The first unreadable part in stage k's DC network: reached from its inputs through
    resistors and unreadable parts, not through fixed nets or op-amp outputs."""
    if not network.unreadable:
        return None
    op = network.opamps[k]
    stops = set(network.fixed) | {o.out for o in network.opamps}
    by_net: dict[str, list[Unreadable]] = {}
    for part in network.unreadable:
        for net in part.nets:
            by_net.setdefault(net, []).append(part)
    seen = {op.plus, op.minus}
    queue = deque(seen)
    while queue:
        net = queue.popleft()
        if net in stops:
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
        through = ", ".join([f"{ref} ({network.kinds.get(ref, 'part')})" for ref in parts]
                            + [f"{leaf}, which the tool does not model" for leaf in leaves])
        return [Omission(k, "dc-path-unknown",
                         f"the {side} input's DC bias can only come through {through}",
                         f"the {side} input (net {net}) gets its DC bias, if any, only "
                         f"through {through}: the tool does not know that part's DC "
                         "behaviour", tuple(parts))]
    del op
    return []


def _feedback_through_unmodelled(network: Network, k: int) -> list[Omission]:
    op = network.opamps[k]
    if op.minus not in network.fixed and op.out not in network.fixed:
        path = _path(network, k, unmodelled=True, capacitors=False)
        if path is not None:
            through = ", ".join(f"{ref} ({network.kinds.get(ref, 'part')})" for ref in path)
            return [Omission(k, "dc-path-unknown", f"DC feedback can only run through {through}",
                             f"its DC feedback, if any, runs only through {through}: the tool "
                             "does not know that part's DC behaviour", tuple(path))]
        if _path(network, k, unmodelled=True, capacitors=True) is not None:
            return []  # feedback through capacitors only: a real no-dc-feedback defect
    return [Omission(k, "open-loop", "open loop: nothing leads from the output back to the "
                     "- input",
                     "nothing leads from its output back to its - input, not even a "
                     "capacitor: an open-loop use (a comparator, or an amplifier with internal "
                     "gain drawn as an op-amp), not an op-amp gain stage")]


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
    by_out = {o.out: o for j, o in enumerate(network.opamps) if j != k}
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
        upstream = by_out.get(net)
        if upstream is not None:  # another stage's output: its error comes from its inputs
            nexts = [upstream.plus, upstream.minus]
        else:
            nexts = [r.b if r.a == net else r.a for r in network.resistors_at(net)]
        for other in nexts:
            if other not in seen:
                seen.add(other)
                queue.append(other)
    return found
