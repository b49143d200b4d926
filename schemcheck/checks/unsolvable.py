"""``stage-unsolvable``: a stage whose DC network could not be solved. The solve fails
only where the network has no single solution (a singular matrix): never silently."""

from __future__ import annotations

from schemcheck.checks.context import StageContext
from schemcheck.model import Finding


def _why(ctx: StageContext, k: int) -> str:
    network = ctx.network
    op = network.opamps[k]
    if op.plus == op.minus:
        return f"its two inputs are on one net ({op.plus}), so its output is not defined"
    together = next((s.component.opamps for s in ctx.solution.systems
                     if k in s.component.opamps), [])
    others = [ctx.name(j) for j in together if j != k]
    loop = f" (with {', '.join(others)})" if others else ""
    return (f"its DC network{loop} has no single solution: a loop of op-amps or sources with "
            "nothing to set its level, or figures too far apart to solve")


def check_unsolvable(ctx: StageContext) -> list[Finding]:
    findings = []
    for k, status in enumerate(ctx.solution.status):
        if status != "unsolvable":
            continue
        ref, unit, sheet = ctx.who(k)
        findings.append(Finding(
            "stage-unsolvable", "warning", ref, unit,
            f"{ctx.name(k)} is not analysed: {_why(ctx, k)}",
            "check the stage's wiring by hand (inputs shorted together, outputs tied, a "
            "loop with no resistor to set it)", sheet,
            data={"net_plus": ctx.network.opamps[k].plus,
                  "net_minus": ctx.network.opamps[k].minus}, **ctx.ids(k)))
    return findings
