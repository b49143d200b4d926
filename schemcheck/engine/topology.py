"""Name each stage's topology for the report (pure). The label never changes a number.

Judged from the DC network (resistors, sources, other op-amps) and where the fitted
capacitors sit, in this order:

* ``comparator (open loop)``: nothing at all leads from the output back to the - input
  (not even through a part the tool does not model and a rail it may make);
* ``integrator``: a capacitor from the output to the - input and no resistive path
  between them (a capacitor not fitted is not in the network, so it does not count);
* ``composite loop``: the feedback to the - input runs around another op-amp too;
* ``Sallen-Key low-pass`` / ``Sallen-Key high-pass``, ``(unity gain)`` or ``(with gain)``:
  the + input fed through two resistors with a capacitor to ground and one to the output
  (low-pass), or through two capacitors with a resistor to ground and one to the output
  (high-pass);
* ``buffer``: the output on the - input, or a DC noise gain of 1 with nothing else;
  ``DC follower (AC-grounded gain network)``: noise gain 1 at DC, the gain network's foot
  on a capacitor to ground; ``DC follower (AC-coupled input)``: noise gain 1 at DC, the
  input resistor reached through a capacitor;
* ``transimpedance``: the + input quiet, a photodiode or current source at the - input and
  no resistor from the - input to a source;
* ``multiple-feedback filter``: a node joined to the - input and to the output with
  capacitors on it (the input reaching it, not the - input);
* with the + input quiet (on a rail, or only resistors to rails): ``inverting`` (one source
  resistor at the - input; ``inverting (T-network)`` where the feedback is a T),
  ``inverting summer`` (two or more), ``non-inverting`` (the - input's network ends on
  rails only: a gain stage of a reference rail);
* with a signal at the + input: ``in-amp input pair`` (the gain resistor joins the - input
  to another op-amp's - input whose + input has a signal too), ``difference`` (a source
  resistor at the - input as well), ``non-inverting``;
* ``other``.

A noise gain of 1 is never labelled inverting.
"""

from __future__ import annotations

from collections import deque

from schemcheck.engine.coverage import path_through_rail
from schemcheck.engine.network import Network

INTEGRATOR = "integrator"
OPEN_LOOP = "comparator (open loop)"
_UNITY = 1e-6  # a noise gain within this share of 1 is a unity-gain (DC follower) stage


class _View:
    """What the labels read of the network around op-amp k."""

    def __init__(self, network: Network, k: int) -> None:
        self.network = network
        self.k = k
        self.op = network.opamps[k]
        self.fixed = network.fixed
        self.lookup = network.lookup()
        self.outputs = self.lookup.outputs
        self.caps = self.lookup.capacitors

    def through(self, net: str) -> list[str]:
        """The outputs of the other op-amps with an input on ``net``."""
        return [out for j, out in self.lookup.inputs.get(net, ()) if j != self.k]

    def rail(self, net: str) -> bool:
        return self.fixed.get(net) == "rail"

    def resistors(self, net: str) -> list[str]:
        """Nets one resistor away from ``net``."""
        return [r.b if r.a == net else r.a for r in self.network.resistors_at(net)]

    def source(self, net: str) -> bool:
        """A net that sets its own level: fixed, or another op-amp's output."""
        return net in self.fixed or (net in self.outputs and self.outputs[net] != self.k)

    def region(self, start: str) -> tuple[set[str], set[str]]:
        """Nets joined to ``start`` through resistors (not through sources or this
        op-amp's output), and the sources and outputs that end it."""
        seen = {start}
        ends: set[str] = set()
        queue = deque([start])
        while queue:
            net = queue.popleft()
            for other in self.resistors(net):
                if other == self.op.out or self.source(other):
                    ends.add(other)
                elif other not in seen:
                    seen.add(other)
                    queue.append(other)
        return seen, ends

    def quiet(self, net: str) -> bool:
        """The net sits on a rail, or sees only resistors to rails (no signal)."""
        if self.rail(net):
            return True
        if net in self.fixed or net in self.outputs:
            return False
        _, ends = self.region(net)
        return bool(ends) and all(self.rail(n) for n in ends)

    def reaches(self, start: str, goal: str, *, capacitors: bool, others: bool,
                unmodelled: bool, avoid: str = "") -> bool:
        """A path from ``start`` to ``goal`` through resistors (and capacitors, other
        op-amps from input to output, parts that may conduct), not through fixed nets or
        ``avoid``; without ``others``, not through another op-amp's output either (a
        source)."""
        hubs = self.lookup.conducting if unmodelled else {}
        seen = {start}
        queue = deque([start])
        while queue:
            net = queue.popleft()
            steps = list(self.resistors(net))
            if capacitors:
                steps += self.caps.get(net, [])
            if others:
                steps += self.through(net)
            for nets in hubs.get(net, []):
                steps += list(nets)
            for nxt in steps:
                if nxt == goal:
                    return True
                if nxt in seen or nxt in self.fixed or nxt == avoid or (
                        not others and self.source(nxt)):
                    continue
                seen.add(nxt)
                queue.append(nxt)
        return False


def label(network: Network, k: int, status: str, noise_gain: float | None = None) -> str:
    """The topology of op-amp k (``noise_gain``: its DC noise gain where solved)."""
    v = _View(network, k)
    op = v.op
    if op.minus == op.out:
        return _sallen_key(v) or "buffer"
    if op.minus in v.fixed or op.out in v.fixed or not (
            v.reaches(op.out, op.minus, capacitors=True, others=True, unmodelled=True)
            or path_through_rail(network, k) is not None):
        return OPEN_LOOP
    local = v.reaches(op.out, op.minus, capacitors=False, others=False, unmodelled=False)
    if not local and op.minus in v.caps.get(op.out, []):
        return INTEGRATOR
    if _composite(v):
        return "composite loop"
    found = _sallen_key(v)
    if found:
        return found
    region, ends = v.region(op.minus)
    signals = {n for n in ends if n != op.out and not v.rail(n)}
    rails = {n for n in ends if v.rail(n)}
    plus_quiet = v.quiet(op.plus)
    unity = (abs(noise_gain - 1.0) <= _UNITY if noise_gain is not None
             else not signals and not rails)
    current = _current_source(v, region)
    if plus_quiet and current and not signals:
        return "transimpedance"
    if plus_quiet and _multiple_feedback(v):
        return "multiple-feedback filter"
    if unity:
        return _follower(v, region)
    if plus_quiet:
        if len(signals) >= 2:
            return "inverting summer"
        if len(signals) == 1:
            return "inverting (T-network)" if _t_network(v) else "inverting"
        if _t_network(v):
            return "inverting (T-network)"  # its input drawn on a rail
        return "non-inverting" if rails else "other"
    if _in_amp_pair(v, region):
        return "in-amp input pair"
    if signals:
        return "difference"
    if rails:
        return "non-inverting"
    return "other"


def _composite(v: _View) -> bool:
    """The - input is reached from the output around another op-amp (a path that does not
    pass the - input itself before reaching it). Another op-amp's output is a source: a
    path leaves it only where it came through that op-amp."""
    op = v.op
    # states: (net, passed another op-amp, came through an op-amp onto its output)
    start = (op.out, False, True)
    seen = {start}
    queue = deque([start])
    while queue:
        net, passed, driven = queue.popleft()
        if net in v.outputs and not driven:
            continue  # reached another op-amp's output through a resistor: a source
        steps = [(n, passed, False) for n in v.resistors(net)]
        steps += [(n, True, True) for n in v.through(net)]
        for nxt, flag, came in steps:
            if nxt == op.minus:
                if flag:
                    return True
                continue
            if nxt in v.fixed or (nxt, flag, came) in seen or nxt == op.out:
                continue
            seen.add((nxt, flag, came))
            queue.append((nxt, flag, came))
    return False


def _sallen_key(v: _View) -> str:
    """A Sallen-Key low- or high-pass at the + input, or ""."""
    op = v.op
    plus = op.plus
    if plus in v.fixed or plus in v.outputs:
        return ""
    gain = "unity gain" if op.minus == op.out else "with gain"
    if op.minus != op.out:
        _, ends = v.region(op.minus)
        if op.out not in ends or any(n != op.out and not v.rail(n) for n in ends):
            return ""  # not a plain non-inverting gain network at the - input
    res_plus = v.resistors(plus)
    cap_plus = v.caps.get(plus, [])
    # low-pass: + <-R- A -R- input, A -C- output, + -C- ground
    if len(res_plus) == 1 and any(v.rail(n) for n in cap_plus):
        node = res_plus[0]
        if (not v.source(node) and node not in (op.out, op.minus)
                and op.out in v.caps.get(node, [])
                and any(n != plus for n in v.resistors(node))):
            return f"Sallen-Key low-pass ({gain})"
    # high-pass: + <-C- A -C- input, A -R- output, + -R- ground (the bias)
    if res_plus and all(v.rail(n) or v.quiet(n) for n in res_plus) and len(cap_plus) == 1:
        node = cap_plus[0]
        if (not v.source(node) and node not in (op.out, op.minus)
                and op.out in v.resistors(node)
                and any(n != plus for n in v.caps.get(node, []))):
            return f"Sallen-Key high-pass ({gain})"
    return ""


def _follower(v: _View, region: set[str]) -> str:
    """A stage with noise gain 1: a buffer, or a follower at DC whose gain network is
    AC-coupled (to ground: a gain network with its foot on a capacitor; to a signal: an
    AC-coupled input)."""
    op = v.op
    far = [n for net in region if net != op.minus
           for n in v.caps.get(net, []) if n not in region and n != op.out]
    if not far:
        return "buffer"
    if all(v.rail(n) for n in far):
        return "DC follower (AC-grounded gain network)"
    return "DC follower (AC-coupled input)"


def _current_source(v: _View, region: set[str]) -> bool:
    """A part the tool leaves open (a photodiode, a current output) on the - input."""
    del region
    return any(v.op.minus in nets for nets in v.network.open_parts.values())


def _t_network(v: _View) -> bool:
    """The feedback is a T: the - input's resistor toward the output goes to a node that
    has a resistor to the output and one to a rail."""
    op = v.op
    for node in v.resistors(op.minus):
        if node == op.out or v.source(node):
            continue
        others = v.resistors(node)
        if op.out in others and any(v.rail(n) for n in others):
            return True
    return False


def _multiple_feedback(v: _View) -> bool:
    """A node joined (by resistor or capacitor) to both the - input and the output and to
    something else (the input, a rail), with capacitors on it or across the - input and
    output: two of them at least."""
    op = v.op
    minus_links = set(v.resistors(op.minus)) | set(v.caps.get(op.minus, []))
    direct = op.minus in v.caps.get(op.out, [])
    for node in minus_links:
        if node == op.out or v.source(node):
            continue
        links_out = op.out in v.resistors(node) or op.out in v.caps.get(node, [])
        if not links_out:
            continue
        caps = len(v.caps.get(node, [])) + (1 if direct else 0)
        feeds = [n for n in v.resistors(node) + v.caps.get(node, [])
                 if n not in (op.out, op.minus)]
        if caps >= 2 and feeds:
            return True
    return False


def _in_amp_pair(v: _View, region: set[str]) -> bool:
    """The - input's network reaches another op-amp's - input whose + input has a signal
    and whose output feeds back to it: the input pair of an instrumentation amplifier."""
    for j, other in enumerate(v.network.opamps):
        if j == v.k or other.minus not in region:
            continue
        if other.out in v.resistors(other.minus) and not v.quiet(other.plus):
            return True
    return False
