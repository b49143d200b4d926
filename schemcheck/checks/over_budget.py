"""``over-budget``: the worst case over temperature exceeds the stage's budget."""

from __future__ import annotations

from schemcheck.model import Finding
from schemcheck.units import format_si
from schemcheck.checks.context import StageContext


def check_budget(ctx: StageContext) -> list[Finding]:
    findings = []
    for k, budget in enumerate(ctx.budgets):
        limit = ctx.budget_limits[k]
        worst = budget.worst_case_over_temp_v
        if limit is None or worst is None or worst <= limit:
            continue
        ref, unit, sheet = ctx.who(k)
        low, high = ctx.temp_range
        findings.append(Finding(
            "over-budget", "error", ref, unit,
            f"{ctx.name(k)}: worst-case output error {format_si(worst, 'V')} over "
            f"{low:g} to {high:g} °C (at {budget.worst_temp_c:g} °C) exceeds its budget "
            f"{format_si(limit, 'V')}",
            "reduce the noise gain or the resistances the inputs see, or choose a part with "
            "lower Vos and bias currents; the contributors are listed with the stage",
            sheet, data={"worst_case_over_temp_v": worst, "budget_v": limit,
                         "worst_temp_c": budget.worst_temp_c}))
    return findings
