"""Which stages' outputs reach which stages' inputs (pure): the arrows of a chain view.

Stage j feeds stage k when a path of resistors (or no resistor at all: the same net) joins
j's output to k's + or - input without passing through a fixed net (a rail, ground, an
external source) or another op-amp's output (both hold their net's voltage, so what lies
beyond them is fed by them, not by j).
"""

from __future__ import annotations

from collections import deque

from schemcheck.engine.network import Network


def driven_by(network: Network) -> list[list[int]]:
    """Per op-amp k (index into ``network.opamps``): the other op-amps whose outputs reach
    k's inputs, in network order."""
    outputs: dict[str, list[int]] = {}
    for j, op in enumerate(network.opamps):
        outputs.setdefault(op.out, []).append(j)
    result = []
    for k, op in enumerate(network.opamps):
        found: set[int] = set()
        seen = {op.plus, op.minus}
        queue = deque(seen)
        while queue:
            net = queue.popleft()
            if net in outputs:
                found.update(j for j in outputs[net] if j != k)
                continue
            if net in network.fixed:
                continue
            for r in network.resistors_at(net):
                other = r.b if r.a == net else r.a
                if other not in seen:
                    seen.add(other)
                    queue.append(other)
        result.append(sorted(found))
    return result
