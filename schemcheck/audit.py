"""The main job: one design in, every op-amp stage's DC error budget and findings out.

Pure: the netlist, the parts library (already loaded) and the settings come in; the
caller does the I/O.
"""

from __future__ import annotations

import dataclasses
import functools
import math
from collections.abc import Mapping
from dataclasses import replace
from typing import Any

import numpy as np

from schemcheck import checks
from schemcheck.assumptions import design_assumptions
from schemcheck.checks.bias_resistor import compensation_resistor
from schemcheck.checks.context import StageContext
from schemcheck.checks.parameters import missing_by_part
from schemcheck.circuit.values import ValueRules
from schemcheck.engine import split, sweep
from schemcheck.engine.budget import StageBudget, monte_carlo_histograms, stage_budget
from schemcheck.engine.chain import driven_by
from schemcheck.engine.coverage import Omission, excluded_sources, omissions
from schemcheck.engine.dcerror import Solution, solve
from schemcheck.engine.histogram import Binned
from schemcheck.engine.montecarlo import monte_carlo_run
from schemcheck.engine.network import Network, build_network
from schemcheck.engine.params import OpampParams, ParameterError, at_temperature, resolve
from schemcheck.engine.partmatch import PartsLibrary, sources_line
from schemcheck.engine.stages import OpampUnit, SkippedAmplifier, amplifier_name, recognise
from schemcheck.engine.topology import label
from schemcheck.engine.travel import Setting, Travel, travels
from schemcheck.model import Finding, Netlist
from schemcheck.results import (
    AmbiguousMatch,
    Compensation,
    Contributor,
    DesignResult,
    ErrorSplit,
    Estimate,
    Histogram,
    LibraryMatch,
    LibrarySource,
    MissingPart,
    NotAnalysed,
    ParamsUsed,
    PartRequirements,
    Sensitivity,
    StageResult,
    TemperatureCurve,
    Upstream,
)
from schemcheck.settings import Settings
from schemcheck.units import ValueFormatError, format_si, parse_quantity

#: The audit's result for one design (the name the library has always used).
DesignAudit = DesignResult


@functools.cache
def _field_names(cls: type) -> tuple[str, ...]:
    return tuple(spec.name for spec in dataclasses.fields(cls))


_LEAVES = frozenset((str, int, bool, type(None)))


def _non_finite(value: Any, where: str, found: list[str]) -> None:
    """Name in ``found`` every figure of ``value`` (a results object) that is not finite:
    JSON has no NaN or Infinity, and such a figure means nothing (it is written as null)."""
    kind = type(value)
    if kind is float or isinstance(value, float):
        if not math.isfinite(value):
            found.append(where)
        return
    if kind is list:
        items: Any = enumerate(value)
        path = "{where}[{key}]"
    elif kind is dict:
        items, path = value.items(), "{where}.{key}"
    elif dataclasses.is_dataclass(value) and not isinstance(value, type):
        items = ((name, getattr(value, name)) for name in _field_names(type(value)))
        path = "{where}.{key}" if where else "{key}"
    elif isinstance(value, dict):
        items, path = value.items(), "{where}.{key}"
    elif isinstance(value, list):
        items, path = enumerate(value), "{where}[{key}]"
    else:
        return
    for key, item in items:
        child = type(item)
        if child in _LEAVES or (child is float and math.isfinite(item)):
            continue  # most of a result: nothing to look into
        _non_finite(item, path.format(where=where, key=key), found)


def _budget_limit(netlist_part, settings: Settings, problems: list[str]) -> float | None:
    text = netlist_part.field("DC_Budget")
    if text:
        try:
            return abs(parse_quantity(text, "volt", what=f"field DC_Budget of "
                                                          f"{netlist_part.ref}").value)
        except ValueFormatError as error:
            problems.append(str(error))
    return settings.default_budget


def audit_netlist(netlist: Netlist, settings: Settings,
                  library: PartsLibrary | Mapping[str, Mapping[str, Any]] | None = None
                  ) -> DesignResult:
    """Audit every op-amp stage of ``netlist`` (``library``: the parts libraries read,
    or one plain mapping of entries)."""
    library = PartsLibrary.of(library)
    result = DesignResult(file=netlist.source, settings=settings.describe(),
                          errors=list(netlist.errors),
                          warnings=list(netlist.warnings),
                          parts_libraries=[LibrarySource(**s.to_dict()) for s in library.sources])
    units, skipped = recognise(netlist.parts)
    network, solution, omitted = _analysable(netlist, units, skipped, settings)
    promoted = {op.unit.key for op in network.opamps if op.symbol == "comparator"}
    promoted.update(unit.key for unit, _ in omitted)
    for s in skipped:
        if s.unit is None or s.unit.key not in promoted:
            result.not_analysed.append(NotAnalysed(s.part.ref, s.part.unit, s.part.sheet,
                                                   s.part.value, s.reason,
                                                   amplifier_name(s.part)))
    for unit in network.unused:
        how = network.spares.get(unit.key, "spare, output not connected")
        result.not_analysed.append(NotAnalysed(
            unit.part.ref, unit.part.unit, unit.part.sheet, unit.part.value,
            f"unused amplifier ({how})", unit.name, unit.channel, "spare"))
    for unit, omission in omitted:
        result.not_analysed.append(NotAnalysed(unit.part.ref, unit.part.unit, unit.part.sheet,
                                               unit.part.value, omission.reason, unit.name,
                                               unit.channel, omission.topology))
    problems = list(network.problems)
    params: list[OpampParams] = []
    resolved: dict[tuple[Any, ...], OpampParams] = {}  # what reads alike resolves alike
    for op in network.opamps:
        part = op.unit.part
        # everything resolve reads of a part (its reference only names it in an error);
        # the fields in their order, as a field is looked up by the first of its spellings
        key = (part.value, part.lib_id, part.description, part.keywords,
               tuple((k, v) for k, v in part.fields.items() if k.casefold() != "reference"))
        p = resolved.get(key)
        if p is None:
            try:
                p = resolved[key] = resolve(part, library, estimate=settings.estimate_missing)
            except ParameterError as error:
                problems.append(str(error))
                p = OpampParams(source={"error": str(error)})
        params.append(p)
        op.aol = p.aol
    # overflow and 0/0 give inf and nan, which are caught below: no warning about them
    with np.errstate(all="ignore"):
        if any(p.aol for p in params):
            solution = solve(network)  # the finite gains change the figures
        problems.extend(solution.notes)
        budgets = [stage_budget(solution, k, params, settings.temp_range)
                   for k in range(len(network.opamps))]
        mc_run = monte_carlo_run(network, solution, params, settings.temp_range,
                                 settings.mc_samples, settings.seed, settings.mc_solve)
        mc = dict(mc_run.bounds)
        histograms: dict[int, Binned] | None = None  # None: no charts asked for
        if settings.charts:
            histograms = (monte_carlo_histograms(network, solution, params, settings.temp_range,
                                                 settings.mc_samples, settings.seed)
                          if settings.mc_samples > 0 else {})
        ranges = travels(network, solution)
        budget_at: dict[int, str] = {}
        for k, travel in ranges.items():
            worse = _worse_end(travel, k, params, settings, budgets[k])
            if worse is not None:
                budgets[k], setting = worse
                budget_at[k] = setting.describe()
                if settings.mc_samples > 0 and k in mc:
                    mc[k] = monte_carlo_run(setting.network, setting.solution, params,
                                            settings.temp_range, settings.mc_samples,
                                            settings.seed, settings.mc_solve).bounds.get(k)
    # a figure that overflowed is no figure: the checks and the report see None
    for budget in budgets:
        for name in ("worst_case_own_v", "worst_case_total_v", "rss_own_v", "rss_v",
                     "worst_case_over_temp_v"):
            value = getattr(budget, name)
            if value is not None and not math.isfinite(value):
                setattr(budget, name, None)
        if not all(math.isfinite(c["worst_case_v"]) for c in budget.contributors):
            budget.contributors = []
    for k, value in mc.items():
        if value is not None and not math.isfinite(value):
            mc[k] = None
    limits = [_budget_limit(op.unit.part, settings, problems) for op in network.opamps]
    ctx = StageContext(network, solution, params, budgets, limits, settings.temp_range,
                       settings.estimate_missing)
    findings: list[Finding] = []
    findings.extend(checks.check_outputs_tied(ctx))
    findings.extend(_omission_finding(unit, omission, library, settings)
                    for unit, omission in omitted)
    findings.extend(_comparator_findings(network))
    for rule_check in (checks.check_bias_path, checks.check_feedback, checks.check_unsolvable,
                       checks.check_spare_units, checks.check_parameters,
                       checks.check_part_match, checks.check_estimates,
                       checks.check_bias_resistor, checks.check_bias_resistance,
                       checks.check_budget):
        findings.extend(rule_check(ctx))
    sheet_file: dict[tuple[str, int | None], str] = {
        (op.unit.part.ref, op.unit.part.unit): op.unit.part.source_file for op in network.opamps}
    sheet_file.update({(u.part.ref, u.part.unit): u.part.source_file for u, _ in omitted})
    findings = [replace(f, file=sheet_file.get((f.ref, f.unit)) or netlist.source)
                for f in findings]
    locations = netlist.error_locations or ((netlist.source, None, None),) * len(netlist.errors)
    unreadable = [Finding("unreadable-design", "error", "", None, error,
                          "fix or re-save the file in the schematic editor", file=file,
                          line=line, column=column)
                  for error, (file, line, column) in zip(netlist.errors, locations)]
    result.findings = [f for f in unreadable + findings if f.rule not in settings.disabled_rules]
    excludes = [excluded_sources(network, k) for k in range(len(network.opamps))]
    result.stages = [_stage_result(ctx, mc, k) for k in range(len(network.opamps))]
    for k, stage in enumerate(result.stages):
        span = ranges.get(k)
        stage.noise_gain_range = [span.noise_gain_low, span.noise_gain_high] if span else None
        stage.budget_at = budget_at.get(k)
        stage.excludes = excludes[k]
        stage.monte_carlo_samples = mc_run.samples.get(k)
    _chain_and_charts(ctx, mc, histograms, result.stages)
    for stage in result.stages:
        dropped: list[str] = []
        _non_finite(stage, "", dropped)
        if dropped:
            problems.append(f"{stage.id}: no finite value for {', '.join(dropped)} (the "
                            "network is numerically singular or a parameter lies far out of "
                            "range); reported as null")
    result.assumptions = design_assumptions(network, netlist.parts, params,
                                            {s.part.ref for s in skipped}, problems)
    result.assumptions += _stage_notes(network, solution, ranges, budget_at, excludes, omitted)
    result.assumptions += mc_run.notes
    if library.sources:
        result.assumptions.append(sources_line(library.sources))
    result.missing_parameters = [
        MissingPart(value, list(missing), len(opamps),
                    [network.opamps[k].unit.name for k in opamps])
        for (value, missing), opamps in missing_by_part(ctx).items()]
    return result


def _analysable(netlist: Netlist, units: list[OpampUnit], skipped: list[SkippedAmplifier],
                settings: Settings) -> tuple[Network, Solution, list[tuple[OpampUnit, Omission]]]:
    """The network of the stages that can be analysed, solved, and the stages left out
    with why. Leaving a stage out can leave another one without its path (a loop through
    both): repeated until nothing more is left out."""
    rules = ValueRules(settings.values, settings.value_notations)
    excluded: dict[tuple[str, int, int | None], str] = {}
    omitted: list[tuple[OpampUnit, Omission]] = []
    while True:
        network = build_network(netlist, units, skipped,
                                default_tolerance=settings.default_tolerance,
                                source_resistance=settings.source_resistance, values=rules,
                                excluded=excluded)
        solution = solve(network)
        found = [replace(o, topology=label(network, o.k, solution.status[o.k]))
                 for o in omissions(network, solution)
                 if network.opamps[o.k].unit.key not in excluded]
        if not found:
            return network, solution, omitted
        for omission in found:
            unit = network.opamps[omission.k].unit
            excluded[unit.key] = omission.reason
            omitted.append((unit, omission))


_SUGGESTIONS = {
    "unreadable-value": "write the value in a notation the tool reads (1M or 1Meg, 4k7, "
                        "2.2 kΩ), or give it in schemcheck.toml under [values]",
    "dc-path-unknown": "check this stage by hand; if that part really carries no DC, the "
                       "stage has a missing DC path",
    "open-loop": "if the part is a comparator or an amplifier with internal gain, set its "
                 "field Opamp=no (or draw it with its own symbol); if it is meant as an op-amp "
                 "stage, it lacks its feedback",
}


def _omission_finding(unit: OpampUnit, omission: Omission, library: PartsLibrary,
                      settings: Settings) -> Finding:
    if omission.hold is not None:
        return _hold_finding(unit, omission, library, settings)
    suggestion = _SUGGESTIONS[omission.rule]
    if omission.unreadable is not None:
        suggestion += f" (for example {omission.unreadable.ref} = \"...\")"
    if omission.rule == "open-loop" and omission.severity == "info":
        suggestion = ("nothing to do if it is meant as a comparator (a comparator part has a "
                      "faster output that needs no compensation); if it is meant as a gain "
                      "stage, it lacks its feedback")
    return Finding(omission.rule, omission.severity, unit.part.ref, unit.part.unit,
                   f"{unit.name} is not analysed: {omission.detail}", suggestion,
                   unit.part.sheet, channel=unit.channel, stage=unit.name)


def _hold_finding(unit: OpampUnit, omission: Omission, library: PartsLibrary,
                  settings: Settings) -> Finding:
    """A sample-and-hold input: the droop rate Ib/C (capacitor law i = C dV/dt) at 25 °C
    and at the top of the range, and the droop over the stated hold time."""
    hold = omission.hold
    assert hold is not None
    try:
        params = resolve(unit.part, library, estimate=settings.estimate_missing)
    except ParameterError:
        params = OpampParams()
    low, high = settings.temp_range
    hold_time = settings.hold_time
    capacitance = hold.capacitance_f
    caps = ", ".join(hold.capacitors)
    data: dict[str, Any] = {"input": hold.side, "net": hold.net,
                            "capacitors": list(hold.capacitors),
                            "capacitance_f": capacitance, "switches": list(hold.switches),
                            "hold_time_s": hold_time, "ib_a": params.ib}
    shown_time = format_si(hold_time, "s")
    if capacitance is None:
        droop = (f"the droop rate Ib/C cannot be given: the value of {caps} could not be "
                 "read")
    elif params.ib is None:
        per_na = 1e-9 / capacitance
        droop = (f"droop rate Ib/C = {format_si(per_na, 'V/s')} per nA of bias current "
                 f"({format_si(per_na * hold_time, 'V')} per nA over a {shown_time} hold) with "
                 f"{format_si(capacitance, 'F')}; the part's Ib is not known")
        data["droop_v_per_s_per_na"] = per_na
    else:
        hot = at_temperature(params, high, high).ib or params.ib
        rate, rate_hot = params.ib / capacitance, hot / capacitance
        droop = (f"droop rate Ib/C = {format_si(params.ib, 'A')} / "
                 f"{format_si(capacitance, 'F')} = {format_si(rate, 'V/s')} "
                 f"({format_si(rate * hold_time, 'V')} over a {shown_time} hold) at 25 °C")
        if rate_hot > rate * (1 + 1e-9):
            droop += (f", {format_si(rate_hot, 'V/s')} "
                      f"({format_si(rate_hot * hold_time, 'V')}) at {high:g} °C")
        data.update({"droop_v_per_s": rate, "droop_v": rate * hold_time, "ib_hot_a": hot,
                     "droop_hot_v_per_s": rate_hot, "droop_hot_v": rate_hot * hold_time,
                     "temp_hot_c": high})
    del low
    return Finding(
        "hold-droop", "warning", unit.part.ref, unit.part.unit,
        f"{unit.name} is not analysed: {omission.detail}; while the switch is open its bias "
        f"current discharges the hold capacitor: {droop}",
        "check the droop against the hold time and the accuracy needed; do not add a resistor "
        "from that input to ground (it would discharge the hold): a part with lower Ib "
        "(FET input) or a larger hold capacitor lowers the droop", unit.part.sheet,
        data=data, channel=unit.channel, stage=unit.name)


def _comparator_findings(network: Network) -> list[Finding]:
    out = []
    for op in network.opamps:
        if op.symbol != "comparator":
            continue
        part = op.unit.part
        out.append(Finding(
            "comparator-symbol", "warning", part.ref, part.unit,
            f"{op.unit.name} ({part.value}) is drawn with a comparator symbol "
            f"({part.lib_id}, {op.unit.out.electrical_type.replace('_', '-')} output) but "
            "wired with negative DC feedback, so it is analysed as an op-amp stage: either "
            "the symbol is wrong or the circuit will not work as drawn",
            "if the part is an op-amp, draw it with an op-amp symbol; a comparator is not "
            "meant to run with negative feedback", part.sheet, channel=op.unit.channel,
            stage=op.unit.name))
    return out


def _worse_end(travel: Travel, k: int, params: list[OpampParams], settings: Settings,
               mid: StageBudget) -> tuple[StageBudget, Setting] | None:
    """The stage's budget at the potentiometer setting that gives the largest worst case
    over temperature, where that is larger than at mid-travel."""
    best: tuple[StageBudget, Setting] | None = None
    worst = mid.worst_case_over_temp_v
    if worst is None:
        return None
    for setting in travel.settings:
        if setting.solution.status[k] != "ok":
            continue
        budget = stage_budget(setting.solution, k, params, settings.temp_range)
        value = budget.worst_case_over_temp_v
        if value is not None and value > worst * (1 + 1e-12):
            worst, best = value, (budget, setting)
    return best


def _stage_notes(network: Network, solution: Solution, ranges: Mapping[int, Travel],
                 budget_at: Mapping[int, str], excludes: list[list[str]],
                 omitted: list[tuple[OpampUnit, Omission]]) -> list[str]:
    """Values that could not be read and that no analysed stage depends on (a stage's
    noise-gain range and what its totals exclude are in the stage itself)."""
    out = []
    used = {o.unreadable.ref for _, o in omitted if o.unreadable is not None}
    for part in network.unreadable:
        if part.ref not in used:
            out.append(f"{part.ref} {part.field} {part.text!r} could not be read "
                       f"({part.why}); no analysed stage depends on it")
    return out


_SOURCE_ORDER = ("vos", "ib", "ios", "tcvos", "ib_hot", "ios_hot", "t_hot", "input_type", "aol")


def _ordered(mapping: Mapping[str, Any]) -> dict[str, Any]:
    """``mapping`` in a fixed key order (the parameters' order, then by name)."""
    rank = {name: i for i, name in enumerate(_SOURCE_ORDER)}
    return {k: mapping[k] for k in sorted(mapping, key=lambda k: (rank.get(k, len(rank)), k))}


def _params_used(p: OpampParams) -> ParamsUsed:
    return ParamsUsed(vos=p.vos, ib=p.ib, ios=p.ios, tcvos=p.tcvos, ib_hot=p.ib_hot,
                      ios_hot=p.ios_hot, t_hot=p.t_hot, input=p.input_type, aol=p.aol,
                      ib_either_sign=p.ib_either_sign, typical=_ordered(p.typical),
                      library_entry=p.library_entry, source=_ordered(p.source),
                      typical_only=list(p.typical_only),
                      estimate=(Estimate(p.estimate_class or "", list(p.estimated))
                                if p.estimated else None),
                      match=LibraryMatch(**p.match.to_dict()) if p.match is not None else None,
                      ambiguous_match=(AmbiguousMatch(p.ambiguity.key,
                                                      list(p.ambiguity.candidates),
                                                      p.ambiguity.reason)
                                       if p.ambiguity is not None else None))


def _resistances(c: split.Coefficients | None) -> tuple[float | None, float | None]:
    """R+ and R-, the DC resistance each input sees (ohms), from the own sensitivities."""
    if c is None or c.vos == 0.0:
        return None, None
    return -c.ib_plus / c.vos + 0.0, c.ib_minus / c.vos + 0.0


def _compensation(ctx: StageContext, k: int, r_plus: float | None,
                  r_minus: float | None) -> Compensation | None:
    if r_plus is None or r_minus is None:
        return None
    p = ctx.params[k]
    useful = p.bias_currents_matched if p.complete else None
    resistor = compensation_resistor(ctx, k)
    scale = max(r_minus, r_plus)
    # the + input sees more and no resistor there can be lowered enough: the - side
    minus = r_plus - r_minus if r_plus - r_minus > 1e-9 * scale else None
    if resistor is not None:
        ideal = resistor.ohms + (r_minus - r_plus)
        return Compensation(resistor.ref, resistor.ohms, ideal if ideal > 0 else None, useful,
                            minus if ideal <= 0 else None)
    added = r_minus - r_plus
    to_add = 0.0 if abs(added) <= 1e-9 * scale else added if added > 0 else None
    return Compensation(None, None, to_add, useful, minus if to_add is None else None)


def _split(ctx: StageContext, k: int, upstream: list[Upstream]) -> ErrorSplit | None:
    if ctx.solution.status[k] != "ok":
        return None
    budget = ctx.budgets[k]
    terms = split.own_terms(ctx.solution, k, ctx.params[k])
    known = [u.worst_case_v for u in upstream]
    upstream_v = None if None in known or ctx.solution.tainted[k] else sum(
        (v for v in known if v is not None), 0.0)
    drift = None
    if budget.worst_case_over_temp_v is not None and budget.worst_case_total_v is not None:
        drift = budget.worst_case_over_temp_v - budget.worst_case_total_v
    if terms is None:
        return ErrorSplit(upstream_v=upstream_v, drift_v=drift,
                          worst_temp_c=budget.worst_temp_c)
    return ErrorSplit(terms.vos_v, terms.ib_v, terms.ios_v, terms.ib_plus_v, terms.ib_minus_v,
                      upstream_v, drift, budget.worst_temp_c)


def _requirements(ctx: StageContext, k: int) -> PartRequirements | None:
    need = split.requirements(ctx.solution, k, ctx.params, ctx.temp_range,
                              ctx.budget_limits[k])
    if need is None:
        return None
    return PartRequirements(
        need.budget_v, need.upstream_v, [ctx.name(j) for j in need.upstream_unknown],
        need.available_v, need.delta_t_c, need.vos_alone_v, need.ib_alone_a,
        need.ios_alone_a, need.vos_split_v, need.ib_split_a, need.ios_split_a,
        need.part_vos_v, need.part_ib_a, need.part_ios_a, need.part_within)


def _stage_result(ctx: StageContext, mc: dict[int, float | None], k: int) -> StageResult:
    network, solution = ctx.network, ctx.solution
    op = network.opamps[k]
    part = op.unit.part
    status = solution.status[k]
    c = split.coefficients(solution, k)
    budget = ctx.budgets[k]
    noise_gain = c.vos if c else None
    worst = budget.worst_case_over_temp_v
    limit = ctx.budget_limits[k]
    contributors = [Contributor(network.opamps[item["opamp"]].unit.part.ref,
                                network.opamps[item["opamp"]].unit.part.unit,
                                item["worst_case_v"], network.opamps[item["opamp"]].unit.name)
                    for item in budget.contributors]
    upstream = [Upstream(network.opamps[f.opamp].unit.name, network.opamps[f.opamp].unit.part.ref,
                         network.opamps[f.opamp].unit.part.unit,
                         network.opamps[f.opamp].unit.channel, f.gain, f.worst_case_v)
                for f in split.feeds(solution, k, ctx.params)]
    r_plus, r_minus = _resistances(c)
    sensitivity = (Sensitivity(c.vos, c.ib_plus, c.ib_minus, c.ib + 0.0, c.ios + 0.0)
                   if c else Sensitivity())
    return StageResult(
        ref=part.ref, unit=part.unit, channel=op.unit.channel, sheet=part.sheet,
        value=part.value, topology=label(network, k, status, c.vos if c else None),
        status=status,
        nets={"plus": op.plus, "minus": op.minus, "out": op.out},
        noise_gain=noise_gain,
        sensitivity=sensitivity,
        resistance_plus_ohm=r_plus,
        resistance_minus_ohm=r_minus,
        params=_params_used(ctx.params[k]),
        worst_case_own_v=budget.worst_case_own_v,
        worst_case_total_v=budget.worst_case_total_v,
        rss_own_v=budget.rss_own_v,
        rss_v=budget.rss_v,
        worst_case_over_temp_v=worst,
        worst_temp_c=budget.worst_temp_c,
        monte_carlo_v=mc.get(k),
        rti_v=(worst / abs(noise_gain)) if worst is not None and noise_gain else None,
        budget_v=limit,
        within_budget=(worst <= limit) if worst is not None and limit is not None else None,
        depends_on_undefined_output=solution.tainted[k],
        contributors=contributors,
        id=op.unit.name,
        split=_split(ctx, k, upstream),
        upstream=upstream,
        compensation=_compensation(ctx, k, r_plus, r_minus),
        requirements=_requirements(ctx, k),
    )


def _chain_and_charts(ctx: StageContext, mc: dict[int, float | None],
                      histograms: dict[int, Binned] | None, stages: list[StageResult]) -> None:
    """Each stage's feeding stages; with ``histograms`` (charts asked for) its error over
    the temperature range and its Monte Carlo histogram."""
    names = [op.unit.name for op in ctx.network.opamps]
    for stage, feeders in zip(stages, driven_by(ctx.network)):
        stage.driven_by = [names[j] for j in feeders]
    if histograms is None:
        return
    temps = sweep.sweep_temperatures(ctx.temp_range, ctx.params)
    for k, stage in enumerate(stages):
        curve = sweep.stage_sweep(ctx.solution, k, ctx.params, ctx.temp_range, temps)
        bound = mc.get(k)
        at = (sweep.monte_carlo_temperature(ctx.solution, k, ctx.params, ctx.temp_range)
              if bound is not None else None)
        if curve is not None:
            scaled = sweep.scaled_bound(bound, at, curve) if at is not None and bound else None
            stage.over_temperature = TemperatureCurve(
                list(curve.temps_c), list(curve.worst_case_v), list(curve.rss_v), scaled,
                at if scaled is not None else None,
                sweep.MC_RSS_SCALED if scaled is not None else None)
        binned = histograms.get(k)
        if binned is not None:
            stage.histogram = Histogram(list(binned.edges), list(binned.counts), binned.samples,
                                        bound, at)
