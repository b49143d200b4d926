"""``no-dc-feedback``: the stage's DC gain is unbounded."""

from __future__ import annotations

from schemcheck.checks.context import StageContext
from schemcheck.model import Finding


def check_feedback(ctx: StageContext) -> list[Finding]:
    findings = []
    for k, status in enumerate(ctx.solution.status):
        if status != "no-dc-feedback":
            continue
        ref, unit, sheet = ctx.who(k)
        op = ctx.network.opamps[k]
        caps = sorted(c for c, a, b in ctx.network.capacitors if {a, b} == {op.minus, op.out})
        how = (f"the feedback goes only through {', '.join(caps)}" if caps
               else "no resistor or other op-amp leads from the output back to the - input")
        findings.append(Finding(
            "no-dc-feedback", "error", ref, unit,
            f"{ctx.name(k)} has no DC feedback ({how}): its DC gain is unbounded and its "
            "output drifts to a rail",
            "add a resistor across the feedback capacitor (or another DC path to the - input) "
            "to set the DC gain; if this is a comparator, set the field Opamp=no",
            sheet, data={"net_minus": op.minus, "net_out": op.out, "through": caps},
            **ctx.ids(k)))
    return findings
