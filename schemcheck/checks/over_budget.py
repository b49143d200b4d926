"""``over-budget``: the worst case over temperature exceeds the stage's budget.

The suggestion names the largest share of the error (the own Vos, Ib or Ios term, an
upstream stage, or the drift to the worse end of the range), so the fix starts there.
"""

from __future__ import annotations

from schemcheck.checks.context import StageContext
from schemcheck.engine.split import feeds, own_terms
from schemcheck.model import Finding
from schemcheck.units import format_si


def _largest(ctx: StageContext, k: int) -> tuple[str, str, float] | None:
    """(kind, advice, volts) of the largest share of op-amp k's worst case."""
    budget = ctx.budgets[k]
    shares: list[tuple[str, str, float]] = []
    terms = own_terms(ctx.solution, k, ctx.params[k])
    gain = ctx.solution.sensitivity[k].get((k, "vos"), 0.0)
    if terms is not None:
        shares += [
            ("Vos", f"the Vos term (noise gain {gain:.4g}): lower the noise gain or choose a "
                    "part with lower Vos", terms.vos_v),
            ("Ib", "the bias-current term: make the + and - inputs see equal resistances "
                   "(bipolar parts), lower them, or choose a part with lower Ib", terms.ib_v),
            ("Ios", "the offset-current term: lower the resistances the inputs see, or choose "
                    "a part with lower Ios", terms.ios_v)]
    for feed in feeds(ctx.solution, k, ctx.params):
        if feed.worst_case_v is not None:
            name = ctx.name(feed.opamp)
            carried = f" with a gain of {feed.gain:.4g}" if feed.gain is not None else ""
            shares.append((name, f"the error of {name} carried{carried}: lower that stage's "
                                 "error first", feed.worst_case_v))
    if budget.worst_case_over_temp_v is not None and budget.worst_case_total_v is not None:
        shares.append(("drift", f"the drift to {budget.worst_temp_c:g} °C: choose a part with "
                                "lower TCVos and hot bias currents",
                       budget.worst_case_over_temp_v - budget.worst_case_total_v))
    return max(shares, key=lambda s: s[2]) if shares else None


def check_budget(ctx: StageContext) -> list[Finding]:
    findings = []
    for k, budget in enumerate(ctx.budgets):
        limit = ctx.budget_limits[k]
        worst = budget.worst_case_over_temp_v
        if limit is None or worst is None or worst <= limit:
            continue
        ref, unit, sheet = ctx.who(k)
        low, high = ctx.temp_range
        largest = _largest(ctx, k)
        if largest is None:
            advice = ("reduce the noise gain or the resistances the inputs see, or choose a "
                      "part with lower Vos and bias currents")
        else:
            advice = (f"the largest share, {format_si(largest[2], 'V')}, is {largest[1]}; the "
                      "stage's split and part requirements are listed with it")
        findings.append(Finding(
            "over-budget", "error", ref, unit,
            f"{ctx.name(k)}: worst-case output error {format_si(worst, 'V')} over "
            f"{low:g} to {high:g} °C (at {budget.worst_temp_c:g} °C) exceeds its budget "
            f"{format_si(limit, 'V')}",
            advice, sheet,
            data={"worst_case_over_temp_v": worst, "budget_v": limit,
                  "worst_temp_c": budget.worst_temp_c,
                  "largest_source": largest[0] if largest else None,
                  "largest_source_v": largest[2] if largest else None}, **ctx.ids(k)))
    return findings
