"""Name each stage's topology for the report (pure). The label never changes a number.

buffer, non-inverting, inverting, difference, summing, transimpedance, integrator,
composite/other: judged from what is wired to the two inputs and the feedback path.
"""

from __future__ import annotations

from schemcheck.engine.network import Network


def label(network: Network, k: int, status: str) -> str:
    op = network.opamps[k]
    fixed = network.fixed
    caps = network.capacitors

    def resistors_at(net: str) -> list[tuple[str, float]]:
        return [(r.b if r.a == net else r.a, r.ohms) for r in network.resistors_at(net)]

    def rail(net: str) -> bool:
        return fixed.get(net) == "rail"

    if op.minus == op.out:
        return "buffer"
    minus_links = resistors_at(op.minus)
    feedback = [n for n, _ in minus_links if n == op.out]
    inputs = [n for n, _ in minus_links if n != op.out]
    cap_feedback = any({a, b} == {op.minus, op.out} for _, a, b in caps)
    if status == "no-dc-feedback" and cap_feedback:
        return "integrator"
    if not feedback:
        return "composite/other"
    to_ground = [n for n in inputs if rail(n)]
    signal_inputs = [n for n in inputs if not rail(n)]
    plus_links = resistors_at(op.plus)
    # the + input is quiet when it sits on a rail or sees only resistors to rails
    plus_quiet = rail(op.plus) or (bool(plus_links) and op.plus not in fixed
                                   and all(rail(n) for n, _ in plus_links))
    touched = [ref for ref, nets in network.open_parts.items() if op.minus in nets]
    if not inputs and plus_quiet:
        return "transimpedance" if touched else "composite/other"
    if len(signal_inputs) >= 2 and plus_quiet:
        return "summing"
    if len(signal_inputs) == 1 and not to_ground:
        if plus_quiet:
            return "inverting"
        return "difference"
    if to_ground and not signal_inputs and not plus_quiet:
        return "non-inverting"
    if cap_feedback:
        return "integrator"
    return "composite/other"
