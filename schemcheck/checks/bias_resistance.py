"""``high-bias-resistance``: a bipolar input whose bias current flows through a large
resistance (over :data:`LARGE_OHMS`) where the bias-current terms alone use most of the
stage's budget (or, without a budget, most of its worst case). The finding names the
resistor and its drop Ib x R (the handbook figure), so the reviewer knows where to start."""

from __future__ import annotations

from collections import deque

from schemcheck.checks.context import StageContext
from schemcheck.engine.network import Resistor
from schemcheck.engine.params import at_temperature
from schemcheck.model import Finding
from schemcheck.units import format_si

LARGE_OHMS = 1e6  # common practice: above 1 MΩ a bipolar input's Ib x R dominates
MOST = 0.5  # "most of the budget"


def _large(ctx: StageContext, net: str) -> list[Resistor]:
    """Resistors over LARGE_OHMS on ``net``'s DC path: the resistive region around it
    (not through sources or op-amp outputs), with the resistors that end it."""
    network = ctx.network
    fixed, outputs = network.fixed, network.lookup().outputs
    seen = {net}
    queue = deque([net])
    found: dict[str, Resistor] = {}
    while queue:
        here = queue.popleft()
        for r in network.resistors_at(here):
            if r.ohms > LARGE_OHMS:
                found[r.ref] = r
            other = r.b if r.a == here else r.a
            if other not in seen and other not in fixed and other not in outputs:
                seen.add(other)
                queue.append(other)
    return sorted(found.values(), key=lambda r: -r.ohms)


def check_bias_resistance(ctx: StageContext) -> list[Finding]:
    findings = []
    low, high = ctx.temp_range
    for k, budget in enumerate(ctx.budgets):
        params = ctx.params[k]
        own = ctx.solution.own(k)
        if (own is None or not params.complete or params.is_fet
                or params.input_type == "chopper"):
            continue
        temp = budget.worst_temp_c if budget.worst_temp_c is not None else high
        at = at_temperature(params, temp, high)
        s_p, s_m = own["ib_plus"], own["ib_minus"]
        bias_v = abs(s_p + s_m) * (at.ib or 0.0) + abs(s_p - s_m) / 2 * (at.ios or 0.0)
        limit = ctx.budget_limits[k]
        worst = budget.worst_case_over_temp_v or budget.worst_case_own_v
        reference = limit if limit is not None else worst
        if not reference or bias_v <= MOST * reference:
            continue
        op = ctx.network.opamps[k]
        large = [(sign, r) for sign, net in (("+", op.plus), ("-", op.minus))
                 for r in _large(ctx, net)]
        if not large:
            continue
        sign, resistor = max(large, key=lambda item: item[1].ohms)
        drop = (at.ib or 0.0) * resistor.ohms
        ref, unit, sheet = ctx.who(k)
        against = (f"{bias_v / limit:.0%} of its budget {format_si(limit, 'V')}"
                   if limit is not None else
                   f"{bias_v / reference:.0%} of its worst case {format_si(reference, 'V')}")
        findings.append(Finding(
            "high-bias-resistance", "warning" if limit is not None else "info", ref, unit,
            f"the {'+' if sign == '+' else '-'} input of {ctx.name(k)} takes its bias current "
            f"through {resistor.ref} ({format_si(resistor.ohms, 'Ω')}): Ib x R = "
            f"{format_si(at.ib, 'A')} x {format_si(resistor.ohms, 'Ω')} = "
            f"{format_si(drop, 'V')} at {temp:g} °C, and the bias-current terms give "
            f"{format_si(bias_v, 'V')} at the output, {against}",
            f"lower {resistor.ref} (and the resistances around it in proportion), balance the "
            "resistances the inputs see, or choose a part with lower Ib (a FET input)",
            sheet, data={"resistor": resistor.ref, "resistor_ohm": resistor.ohms,
                         "input": sign, "ib_a": at.ib, "drop_v": drop,
                         "bias_error_v": bias_v, "temp_c": temp, "budget_v": limit,
                         "worst_case_v": worst}, **ctx.ids(k)))
    return findings
