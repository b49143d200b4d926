"""``bias-resistor-mismatch`` and ``bias-resistor-harmful``.

From the stage's own sensitivities (exact for any network, finite gain included):
the resistance the + input effectively sees is ``-s_ib+ / s_vos`` and the one the -
input sees ``s_ib- / s_vos`` (for the simple stages: Rp and Ri||Rf). The Ib term of the
output error vanishes when the two are equal.
"""

from __future__ import annotations

from schemcheck.engine.eseries import nearest
from schemcheck.model import Finding
from schemcheck.units import format_si
from schemcheck.checks.context import StageContext

MATCH_BAND = 1.2  # common practice: within 20 % counts as matched
SIGNIFICANT = 0.1  # the Ib term must be at least this share of the stage's worst case


def _worst(s_vos: float, s_p: float, s_m: float, vos: float, ib: float, ios: float) -> float:
    return abs(s_vos) * vos + abs(s_p + s_m) * ib + abs(s_p - s_m) / 2 * ios


def _ohms(value: float) -> str:
    return format_si(value, "Ω")


def _values(ideal: float) -> str:
    if ideal <= 0:  # a follower: the - input sees the output, 0 Ω
        return "a wire, no resistor"
    return f"E96 {_ohms(nearest(ideal, 'E96'))}, E24 {_ohms(nearest(ideal, 'E24'))}"


def compensation_resistor(ctx: StageContext, k: int):
    """The one resistor from the + input to a rail, when that is all the + input has."""
    op = ctx.network.opamps[k]
    at_plus = ctx.network.resistors_at(op.plus)
    if len(at_plus) != 1:
        return None
    r = at_plus[0]
    other = r.b if r.a == op.plus else r.a
    return r if ctx.network.fixed.get(other) == "rail" else None


def check_bias_resistor(ctx: StageContext) -> list[Finding]:
    findings = []
    for k, status in enumerate(ctx.solution.status):
        own = ctx.solution.own(k)
        params = ctx.params[k]
        if own is None or not params.complete or own["vos"] == 0:
            continue
        s_vos, s_p, s_m = own["vos"], own["ib_plus"], own["ib_minus"]
        r_plus = -s_p / s_vos
        r_minus = s_m / s_vos
        ref, unit, sheet = ctx.who(k)
        name = ctx.name(k)
        comp = compensation_resistor(ctx, k)
        vos, ib, ios = params.vos, params.ib, params.ios
        if not params.bias_currents_matched:
            if comp is None or r_plus <= 0:
                continue
            added = abs(s_p) * ib
            why = ("FET-input" if params.is_fet else
                   "zero-drift (chopper)"
                   if params.input_type == "chopper" else
                   "internally bias-cancelled (Ib of either polarity)" if params.ib_either_sign
                   else f"Ios ({format_si(ios, 'A')}) not much smaller than Ib")
            findings.append(Finding(
                "bias-resistor-harmful", "warning", ref, unit,
                f"{comp.ref} ({_ohms(comp.ohms)}) at the + input of {name} is a bias-"
                f"compensation resistor, but the part is {why}: its bias currents do not "
                f"track, so the resistor cancels nothing and adds up to {format_si(added, 'V')} "
                "of output error at 25 °C (Ib+ x Rp x noise gain), more when hot",
                f"replace {comp.ref} with 0 Ω (or a wire); keep it only if it also protects the "
                "input, and then budget its error", sheet,
                data={"resistor": comp.ref, "resistor_ohm": comp.ohms,
                      "added_error_v": added}, **ctx.ids(k)))
            continue
        worst = _worst(s_vos, s_p, s_m, vos, ib, ios)
        if r_plus > 0.01 * r_minus:
            ratio = r_plus / r_minus if r_minus > 0 else float("inf")
            bias_term = abs(s_p + s_m) * ib
            if 1 / MATCH_BAND <= ratio <= MATCH_BAND or bias_term < SIGNIFICANT * worst:
                continue
            if ctx.network.opamps[k].minus == ctx.network.opamps[k].out:
                # A follower: its - input sees nothing. Common practice: a resistor equal
                # to what the + input sees, from the output to the - input, balances the
                # bias currents and leaves the gain at 1.
                ideal = r_plus  # the feedback resistor to add
                what = f"{name} is a unity-gain buffer"
                fix = (f"add {_ohms(r_plus)} ({_values(r_plus)}) between the output and the - "
                       "input (the buffer's gain stays 1) so both inputs see the same "
                       "resistance")
            elif comp is not None:
                ideal = comp.ohms + (r_minus - r_plus)
                if ideal <= 0:
                    continue
                what = (f"{comp.ref} ({_ohms(comp.ohms)}) at the + input of {name} is meant to "
                        "cancel the bias-current error")
                fix = f"change {comp.ref} to {_ohms(ideal)} ({_values(ideal)})"
            elif r_minus > 0:
                ideal = r_minus
                what = f"the + input of {name} sees {_ohms(r_plus)} through its network"
                fix = (f"make the + input see {_ohms(ideal)} ({_values(ideal)}) so the bias "
                       "currents cancel")
            else:
                continue  # no resistance to match the + input to: no value to suggest
            findings.append(Finding(
                "bias-resistor-mismatch", "warning", ref, unit,
                f"{what}, but the + input sees {_ohms(r_plus)} and the - input "
                f"{_ohms(r_minus)}: the mismatch leaves {format_si(bias_term, 'V')} of Ib error "
                "at the output", fix, sheet,
                data={"resistance_plus_ohm": r_plus, "resistance_minus_ohm": r_minus,
                      "bias_error_v": bias_term, "suggested_ohm": ideal,
                      "resistor": comp.ref if comp is not None else None}, **ctx.ids(k)))
        elif r_minus > 0:
            improved = _worst(s_vos, s_p - r_minus * s_vos, s_m, vos, ib, ios)
            if improved < 0.5 * worst:
                findings.append(Finding(
                    "bias-resistor-mismatch", "info", ref, unit,
                    f"{name}: a resistor of {_ohms(r_minus)} in series with the + input would "
                    f"cut the worst-case error from {format_si(worst, 'V')} to "
                    f"{format_si(improved, 'V')} (the bias currents of this part are matched)",
                    f"add {_ohms(r_minus)} ({_values(r_minus)}) in series with the + input, "
                    "bypassed with a capacitor if noise matters", sheet,
                    data={"resistance_minus_ohm": r_minus, "worst_case_v": worst,
                          "worst_case_after_v": improved, "suggested_ohm": r_minus},
                    **ctx.ids(k)))
    return findings
