"""``bias-resistor-mismatch`` and ``bias-resistor-harmful``: advice on the resistances the
inputs see, every piece of it verified by solving the changed network.

From the stage's own sensitivities (exact for any network, finite gain included): the
resistance the + input effectively sees is ``-s_ib+ / s_vos`` and the one the - input sees
``s_ib- / s_vos`` (for the simple stages: Rp and Ri||Rf). The Ib term of the output error
vanishes when the two are equal (bipolar inputs, matched bias currents).

The changes tried, each only where it can be made without harming the circuit:

* the + input's one resistor to a rail at the value that balances the inputs (the nearest
  E96 value);
* that resistor replaced by a wire, unless a signal reaches the + input through a capacitor
  or another part (then the resistor is the input's bias return, its only DC path, and a
  wire would short the signal);
* where the + input sees more than the - input: resistance added in series with the -
  input (for a follower: in the feedback path), and a lower source resistance (the bias
  return, or the one resistor in series with the + input from a source);
* where the - input sees more and the + input has no resistor of its own: resistance added
  in series with the + input.

Parts are added (and a bias return lowered) only for inputs whose bias currents track
(bipolar inputs without internal cancellation, :attr:`OpampParams.bias_currents_matched`):
elsewhere an added resistor cancels nothing and costs noise (common practice).

Each change is solved (:mod:`schemcheck.engine.variants`), except one that could not pass:
no change that keeps the noise gain brings the worst case below the stage's own Vos term
(:func:`own_vos_floor`), and a wire at a + input that holds nothing else leaves the - side's
bias terms (:func:`wired_floor`); both only where no figure of the design is below 0 at
either end of the range. Advice is given only where the
stage's worst case over temperature falls (by at least :data:`WORTHWHILE` for a value,
:data:`WORTH_ADDING` for a part added, :data:`NOT_WORTH_A_PART` for a resistor replaced by
a wire, which is preferred where it does as well as any value), its noise gain is
unchanged and no other stage gets worse by more than :data:`OTHERS_RISE` of its own worst
case (a rise is stated with the advice).
The finding states the worst case before and after. A resistor added unbypassed costs its
thermal noise, sqrt(4kTR) at the top of the temperature range, stated with the advice.
"""

from __future__ import annotations

from dataclasses import dataclass

from schemcheck.checks.context import StageContext
from schemcheck.engine.budget import Figures
from schemcheck.engine.eseries import nearest
from schemcheck.engine.network import Resistor
from schemcheck.engine.params import at_temperature
from schemcheck.engine.variants import Change, Outcome, WhatIf, leaf_input, thermal_noise
from schemcheck.model import Finding
from schemcheck.units import format_si

#: A suggestion must cut the stage's worst case by at least this share to be worth a part
#: change (common practice: smaller gains drown in the parts' spread).
WORTHWHILE = 0.1
#: Adding a part (or lowering a bias return, which moves the input's coupling corner) is
#: suggested where it cuts the worst case by at least half (common practice).
WORTH_ADDING = 0.5
#: Replacing a resistor by a wire is worth saying where it cuts the worst case by this share
#: (a part that only adds error costs nothing to leave out).
NOT_WORTH_A_PART = 0.01
#: Another stage's worst case may rise by this share of its own at most (a stage sharing a
#: summing bus sees a little of the changed stage's input currents); the rise is stated.
OTHERS_RISE = 0.01
#: Relative change of the noise gain that counts as "unchanged".
SAME_GAIN = 1e-6


def _ohms(value: float) -> str:
    return format_si(value, "Ω")


def _values(ideal: float) -> str:
    return f"E96 {_ohms(nearest(ideal, 'E96'))}, E24 {_ohms(nearest(ideal, 'E24'))}"


def _lone_plus_resistor(ctx: StageContext, k: int) -> tuple[Resistor, str | None] | None:
    """The + input's one resistor and why its far end is fixed (None: not fixed), where
    the + input has exactly one."""
    op = ctx.network.opamps[k]
    at_plus = ctx.network.resistors_at(op.plus)
    if len(at_plus) != 1:
        return None
    r = at_plus[0]
    return r, ctx.network.fixed.get(r.b if r.a == op.plus else r.a)


def compensation_resistor(ctx: StageContext, k: int) -> Resistor | None:
    """The one resistor from the + input to a rail, when that is all the + input has."""
    found = _lone_plus_resistor(ctx, k)
    return found[0] if found is not None and found[1] == "rail" else None


def coupled_input(ctx: StageContext, net: str) -> list[str]:
    """Parts through which a signal reaches ``net`` other than resistors: capacitors to
    anything but a rail, and parts the tool does not model."""
    network = ctx.network
    found = sorted(ref for ref, a, b in network.capacitors
                   if net in (a, b) and network.fixed.get(b if a == net else a) != "rail")
    found += sorted(ref for ref, nets in network.may_conduct.items() if net in nets)
    return found


@dataclass(slots=True)
class _Candidate:
    outcome: Outcome
    action: str  # change-value, replace-with-wire, add-series-minus, add-series-plus, lower
    ideal: float  # the exact value that balances (ohms; the E96 value is what is solved)


class _Stage:
    """The advice for one stage."""

    def __init__(self, ctx: StageContext, whatif: WhatIf, k: int, floors: bool) -> None:
        self.ctx = ctx
        self.whatif = whatif
        self.k = k
        own = ctx.solution.own(k) or {}
        self.s_vos, self.s_p, self.s_m = own["vos"], own["ib_plus"], own["ib_minus"]
        self.r_plus = -self.s_p / self.s_vos + 0.0
        self.r_minus = self.s_m / self.s_vos + 0.0
        self.before = whatif.before(k) or 0.0
        self.op = ctx.network.opamps[k]
        self.floors = floors  # every term of every worst case is never negative
        self.floor = own_vos_floor(ctx, k, self.s_vos, whatif.figures) if floors else 0.0

    def attempt(self, change: Change, action: str, ideal: float, cut: float,
                floor: float = 0.0) -> _Candidate | None:
        """``change`` solved and judged; ``floor``: what the change is known to leave at
        least (volts; the own-Vos floor holds for every change)."""
        if max(self.floor, floor) >= self.before * (1.0 - cut):
            return None  # the change cannot cut the error that far: not worth solving
        outcome = self.whatif.attempt(self.k, change)
        if (outcome is None or outcome.worst_case_v is None or outcome.noise_gain is None
                or outcome.status != "ok"):
            return None
        if abs(outcome.noise_gain - self.s_vos) > SAME_GAIN * abs(self.s_vos):
            return None  # it would change what the stage does
        if any(after is None or after - before > OTHERS_RISE * before
               for before, after in outcome.raised.values()):
            return None  # another stage gets worse
        if outcome.worst_case_v >= self.before * (1.0 - cut) or \
                outcome.worst_case_v >= self.before * (1.0 - 1e-9):
            return None
        return _Candidate(outcome, action, ideal)


def _figures_never_negative(ctx: StageContext, whatif: WhatIf) -> bool:
    """Whether every op-amp's Vos, Ib and Ios are at least 0 at both ends of the range:
    the floors below rest on every term of a worst case being at least 0, which a figure
    extrapolated past its hot value can break (then every change is solved)."""
    low, high = ctx.temp_range
    for params in ctx.params:
        for temp in (low, high):
            p = whatif.figures(params, temp, high)
            if any(v is not None and not v >= 0.0 for v in (p.vos, p.ib, p.ios)):
                return False
    return True


def own_vos_floor(ctx: StageContext, k: int, noise_gain: float,
                  figures: Figures = at_temperature) -> float:
    """What no suggestion can bring stage k's worst case below: its own Vos through its
    noise gain, at the worse end of the range (volts). A suggestion must keep the noise
    gain (within SAME_GAIN), and the worst case adds that term to others that are never
    negative, so a change whose cut the floor forbids need not be solved."""
    low, high = ctx.temp_range
    vos = max(figures(ctx.params[k], temp, high).vos or 0.0 for temp in (low, high))
    return abs(noise_gain) * (1.0 - SAME_GAIN) * vos * (1.0 - 1e-12)


def wired_floor(ctx: StageContext, st: _Stage, comp: Resistor) -> float:
    """What stage k's worst case is at least with ``comp`` (its + input's one resistor, to
    a rail) replaced by a wire, where that input's net holds nothing else but the input
    (volts; 0 where it does): the net is then a leaf whose voltage is -R Ib+ alone, so the
    wire removes the Ib+ terms and nothing else. What is left of the stage's own terms is
    noise gain x Vos + |s_ib-| Ib + |s_ib-| / 2 Ios at each end of the range (the other
    op-amps' terms only add to it)."""
    if not st.floors or leaf_input(ctx.network, st.op.plus) != st.k:
        return 0.0
    low, high = ctx.temp_range
    floor = 0.0
    for temp in (low, high):
        p = st.whatif.figures(ctx.params[st.k], temp, high)
        if p.vos is None or p.ib is None or p.ios is None:
            return 0.0
        floor = max(floor, abs(st.s_vos) * p.vos + abs(st.s_m) * p.ib
                    + abs(st.s_m) / 2 * p.ios)
    return floor * (1.0 - 1e-6)  # a margin for the rounding of the solve


def _scope(ctx: StageContext, k: int) -> str:
    low, high = ctx.temp_range
    own = ctx.budgets[k].worst_case_over_temp_v is None
    return (f"{'own ' if own else ''}worst case over {low:g} to {high:g} °C")


def _noise(ctx: StageContext, ohms: float) -> tuple[float, str]:
    top = ctx.temp_range[1]
    density = thermal_noise(ohms, top)
    return density, (f"unbypassed, {_ohms(ohms)} adds its thermal noise, "
                     f"{density * 1e9:.3g} nV/√Hz at {top:g} °C")


def check_bias_resistor(ctx: StageContext) -> list[Finding]:
    findings = []
    whatif = WhatIf(ctx.network, ctx.solution, ctx.params, ctx.temp_range)
    floors = _figures_never_negative(ctx, whatif)
    for k in range(len(ctx.network.opamps)):
        own = ctx.solution.own(k)
        if own is None or not ctx.params[k].complete or own["vos"] == 0:
            continue
        stage = _Stage(ctx, whatif, k, floors)
        if stage.before <= 0:
            continue
        finding = _advise(ctx, stage)
        if finding is not None:
            findings.append(finding)
    return findings


def _advise(ctx: StageContext, st: _Stage) -> Finding | None:
    k, op = st.k, st.op
    comp = compensation_resistor(ctx, k)
    coupling = coupled_input(ctx, op.plus) if comp is not None else []
    candidates: list[_Candidate] = []
    wire: _Candidate | None = None
    ideal = comp.ohms + (st.r_minus - st.r_plus) if comp is not None else 0.0
    if comp is not None:
        if ideal > 0:
            found = st.attempt(Change("value", comp.ref, nearest(ideal, "E96")),
                               "change-value", ideal, WORTHWHILE)
            if found is not None:
                candidates.append(found)
        if not coupling:
            wire = st.attempt(Change("wire", comp.ref), "replace-with-wire", 0.0,
                              NOT_WORTH_A_PART, wired_floor(ctx, st, comp))
    gap = st.r_plus - st.r_minus
    scale = max(st.r_plus, st.r_minus)
    matched = ctx.params[k].bias_currents_matched  # adding parts pays only where Ib tracks
    if gap > 1e-9 * scale and ideal <= 0 and matched:  # nothing at the + input balances
        found = st.attempt(Change("series", "Radd", nearest(gap, "E96"), k, "-"),
                           "add-series-minus", gap, WORTH_ADDING)
        if found is not None:
            candidates.append(found)
    elif -gap > 1e-9 * scale and comp is None and matched:
        found = st.attempt(Change("series", "Radd", nearest(-gap, "E96"), k, "+"),
                           "add-series-plus", -gap, WORTH_ADDING)
        if found is not None:
            candidates.append(found)
    source = comp if comp is not None and coupling else _series_source(ctx, k) \
        if comp is None else None
    if source is not None and gap > 0 and matched:
        lower = _lower_bias_return(ctx, st, source)
        if lower is not None:
            candidates.append(lower)
    options = sorted(candidates, key=_after)
    if comp is not None and wire is not None and all(
            _after(wire) <= _after(c) * (1.0 + NOT_WORTH_A_PART) for c in options):
        return _harmful(ctx, st, comp, wire)  # as good as any value: the part adds nothing
    if not options:
        return None
    return _mismatch(ctx, st, comp, coupling, options)


def _raised(ctx: StageContext, outcome: Outcome) -> tuple[str, dict]:
    """The other stages the change makes (a little) worse, in words and as data."""
    if not outcome.raised:
        return "", {}
    words = ", ".join(f"{ctx.name(j)}'s from {format_si(before, 'V')} to "
                      f"{format_si(after, 'V')}" for j, (before, after) in
                      sorted(outcome.raised.items()))
    return (f" (it raises {words} a little: they share part of its input network)",
            {"others_raised_v": {ctx.name(j): (after or 0.0) - before
                                 for j, (before, after) in sorted(outcome.raised.items())}})


def _after(candidate: _Candidate) -> float:
    return candidate.outcome.worst_case_v or 0.0


def _series_source(ctx: StageContext, k: int) -> Resistor | None:
    """The one resistor at the + input where it comes from a source (a connector, a driven
    net): the input's source resistance."""
    found = _lone_plus_resistor(ctx, k)
    return found[0] if found is not None and found[1] not in (None, "rail") else None


def _lower_bias_return(ctx: StageContext, st: _Stage, comp: Resistor) -> _Candidate | None:
    """The bias-return resistor lowered: to the largest E24 value that keeps the stage
    within its budget where it has one and is over it, else to a tenth of its value."""
    limit = ctx.budget_limits[st.k]
    if limit is not None and st.before > limit:
        value = nearest(comp.ohms, "E24")
        best = None
        for _ in range(60):
            value = nearest(value / 1.1, "E24")
            if value < 10.0:
                break
            found = st.attempt(Change("value", comp.ref, value), "lower", value, WORTH_ADDING)
            if found is not None and (found.outcome.worst_case_v or 0.0) <= limit:
                best = found
                break
        if best is not None:
            return best
    value = nearest(comp.ohms / 10.0, "E24")
    return st.attempt(Change("value", comp.ref, value), "lower", value, WORTH_ADDING)


def _harmful(ctx: StageContext, st: _Stage, comp: Resistor, wire: _Candidate) -> Finding:
    k, params = st.k, ctx.params[st.k]
    ref, unit, sheet = ctx.who(k)
    after = wire.outcome.worst_case_v or 0.0
    rise, rise_data = _raised(ctx, wire.outcome)
    if not params.bias_currents_matched:
        why = ("the part is " + ("FET-input" if params.is_fet else
                                 "zero-drift (chopper)" if params.input_type == "chopper" else
                                 "internally bias-cancelled (Ib of either polarity)"
                                 if params.ib_either_sign else
                                 f"one whose Ios ({format_si(params.ios, 'A')}) is not much "
                                 f"smaller than Ib") +
               ": its bias currents do not track, so the resistor cancels nothing")
    else:
        why = (f"the + input sees {_ohms(st.r_plus)} and the - input {_ohms(st.r_minus)}: "
               "it unbalances the inputs more than it balances them")
    return Finding(
        "bias-resistor-harmful", "warning", ref, unit,
        f"{comp.ref} ({_ohms(comp.ohms)}) at the + input of {ctx.name(k)} is a bias-"
        f"compensation resistor, but {why}; solved again with {comp.ref} replaced by a wire, "
        f"the {_scope(ctx, k)} falls from {format_si(st.before, 'V')} to "
        f"{format_si(after, 'V')}{rise}",
        f"replace {comp.ref} with 0 Ω (a wire); keep it only if it also protects the input, "
        "and then budget its error", sheet,
        data={"resistor": comp.ref, "resistor_ohm": comp.ohms,
              "added_error_v": st.before - after, "action": "replace-with-wire",
              "suggested_ohm": 0.0, "worst_case_v": st.before, "worst_case_after_v": after,
              **rise_data},
        **ctx.ids(k))


def _describe(ctx: StageContext, st: _Stage, comp: Resistor | None, option: _Candidate
              ) -> tuple[str, str, dict]:
    """(what to do, the note for the message, data) for one verified option."""
    change = option.outcome.change
    follower = st.op.minus == st.op.out
    if option.action == "change-value":
        assert comp is not None
        return (f"change {comp.ref} to {_ohms(option.ideal)} ({_values(option.ideal)})",
                f"with {comp.ref} at {_ohms(change.ohms)} (E96)",
                {"suggested_ohm": option.ideal, "verified_ohm": change.ohms})
    if option.action == "lower":
        what = ("the + input's bias return, so its source resistance) to "
                f"{_ohms(change.ohms)}: the input impedance and the coupling corner move with "
                "it" if comp is not None else
                "in series with the + input: its source resistance) to "
                f"{_ohms(change.ohms)}: whatever it protects or filters moves with it")
        return (f"lower {change.ref} ({what}",
                f"with {change.ref} at {_ohms(change.ohms)}",
                {"suggested_ohm": change.ohms, "verified_ohm": change.ohms})
    density, noise = _noise(ctx, change.ohms)
    where = ("in the feedback path, from the output to the - input" if follower and
             option.action == "add-series-minus" else
             f"in series with the {'-' if option.action == 'add-series-minus' else '+'} input")
    bypass = ("bypassed by a capacitor where the signal or the loop needs it" if
              option.action == "add-series-minus" else
              "bypassed with a capacitor if noise matters")
    return (f"add {_ohms(option.ideal)} ({_values(option.ideal)}) {where}, {bypass} "
            f"({noise})",
            f"with {_ohms(change.ohms)} {where}",
            {"suggested_ohm": option.ideal, "verified_ohm": change.ohms,
             "noise_v_per_rthz": density, "noise_temp_c": ctx.temp_range[1]})


def _mismatch(ctx: StageContext, st: _Stage, comp: Resistor | None, coupling: list[str],
              options: list[_Candidate]) -> Finding:
    k, name = st.k, ctx.name(st.k)
    ref, unit, sheet = ctx.who(k)
    ib = ctx.params[k].ib or 0.0
    bias_term = abs(st.s_p + st.s_m) * ib
    best = options[0]
    fix, note, data = _describe(ctx, st, comp, best)
    suggestion = fix
    alternative: dict = {}
    if len(options) > 1 and {best.action, options[1].action} == {"add-series-minus", "lower"}:
        other_fix, other_note, other_data = _describe(ctx, st, comp, options[1])
        other_after = format_si(options[1].outcome.worst_case_v, "V")
        suggestion += f"; or {other_fix} (worst case {other_after})"
        alternative = {"alternative_action": options[1].action,
                       "alternative_ohm": other_data["verified_ohm"],
                       "alternative_worst_case_after_v": options[1].outcome.worst_case_v}
    sides = (f"the + input sees {_ohms(st.r_plus)} and the - input {_ohms(st.r_minus)}: the "
             f"mismatch leaves {format_si(bias_term, 'V')} of Ib error at the output")
    if best.action == "change-value" and comp is not None and not coupling:
        what = (f"{comp.ref} ({_ohms(comp.ohms)}) at the + input of {name} is meant to cancel "
                f"the bias-current error, but {sides}")
        severity = "warning"
    elif comp is not None and coupling:
        what = (f"{comp.ref} ({_ohms(comp.ohms)}) is the bias return of {name}'s + input "
                f"(its only DC path; the signal comes through {', '.join(coupling)}): {sides}")
        severity = "info"
    else:
        what = f"{name}: {sides}"
        severity = "info"
    rise, rise_data = _raised(ctx, best.outcome)
    return Finding(
        "bias-resistor-mismatch", severity, ref, unit,
        f"{what}; solved again {note}, the {_scope(ctx, k)} falls from "
        f"{format_si(st.before, 'V')} to {format_si(best.outcome.worst_case_v, 'V')}{rise}",
        suggestion, sheet,
        data={"resistance_plus_ohm": st.r_plus, "resistance_minus_ohm": st.r_minus,
              "bias_error_v": bias_term, **data,
              "resistor": best.outcome.change.ref if best.action in
              ("change-value", "lower") else None,
              "action": best.action, "worst_case_v": st.before,
              "worst_case_after_v": best.outcome.worst_case_v, **alternative, **rise_data},
        **ctx.ids(k))
