"""``no-bias-path``: an op-amp input with no DC path for its bias current."""

from __future__ import annotations

from schemcheck.checks.context import StageContext
from schemcheck.model import Finding


def _reached_through(ctx: StageContext, net: str) -> list[str]:
    """Capacitors and open parts that touch the floating region around ``net``."""
    region = {net}
    changed = True
    while changed:
        changed = False
        for r in ctx.network.resistors:
            if (r.a in region) != (r.b in region):
                region.update((r.a, r.b))
                changed = True
    caps = sorted({ref for ref, a, b in ctx.network.capacitors if a in region or b in region})
    opens = sorted(f"{ref} (treated as open)" for ref, nets in ctx.network.open_parts.items()
                   if nets & region)
    return caps + opens


def check_bias_path(ctx: StageContext) -> list[Finding]:
    findings = []
    for k, inputs in enumerate(ctx.solution.floating_inputs):
        ref, unit, sheet = ctx.who(k)
        for sign, net in inputs:
            side = "non-inverting (+)" if sign == "+" else "inverting (-)"
            caps = _reached_through(ctx, net)
            how = (f"it reaches the rest of the circuit only through {', '.join(caps)}"
                   if caps else "nothing gives it a DC path")
            findings.append(Finding(
                "no-bias-path", "error", ref, unit,
                f"the {side} input of {ctx.name(k)} (net {net}) has no DC path for its bias "
                f"current: {how}; the output has no defined DC level",
                "add a resistor from that input to ground or to the bias point to carry the "
                "bias current, sized so that Ib x R stays within the budget",
                sheet, data={"input": sign, "net": net, "through": caps}, **ctx.ids(k)))
    return findings
