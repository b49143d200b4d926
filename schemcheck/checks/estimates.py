"""``estimated-parameters``: an op-amp whose figures are class estimates (only when the
user asked for them), not datasheet values."""

from __future__ import annotations

from schemcheck.checks.context import StageContext
from schemcheck.engine.estimates import CLASS_NAMES
from schemcheck.model import Finding
from schemcheck.partdata import DISPLAY


def check_estimates(ctx: StageContext) -> list[Finding]:
    findings = []
    seen: set[tuple[str, int]] = set()
    for k, params in enumerate(ctx.params):
        ref, unit, sheet = ctx.who(k)
        if not params.estimated or (ref, unit) in seen:
            continue
        seen.add((ref, unit))
        kind = params.estimate_class or ""
        names = ", ".join(DISPLAY[name] for name in params.estimated)
        value = ctx.network.opamps[k].unit.part.value
        findings.append(Finding(
            "estimated-parameters", "warning", ref, unit,
            f"{ctx.name(k)} ({value}): {names} marked estimate (class {kind}), the common "
            f"practice order of magnitude for a {CLASS_NAMES.get(kind, kind)} op-amp, not "
            "datasheet figures; its budget is an order of magnitude only",
            f"add the datasheet's figures for {value!r} to the parts library or the symbol",
            sheet))
    return findings
