"""The main job: one design in, every op-amp stage's DC error budget and findings out.

Pure: the netlist, the parts library (already loaded) and the settings come in; the
caller does the I/O.
"""

from __future__ import annotations

from dataclasses import replace
from typing import Any, Mapping

from schemcheck import checks
from schemcheck.assumptions import design_assumptions
from schemcheck.engine.budget import monte_carlo, stage_budget
from schemcheck.checks.bias_resistor import compensation_resistor
from schemcheck.checks.context import StageContext
from schemcheck.checks.parameters import missing_by_part
from schemcheck.engine import split, sweep
from schemcheck.engine.chain import driven_by
from schemcheck.engine.histogram import Binned
from schemcheck.engine.dcerror import solve
from schemcheck.model import Finding, Netlist
from schemcheck.results import (
    Compensation, Contributor, DesignResult, ErrorSplit, Histogram, MissingPart, NotAnalysed,
    ParamsUsed, PartRequirements, Sensitivity, StageResult, TemperatureCurve, Upstream,
)
from schemcheck.engine.network import build_network
from schemcheck.engine.params import OpampParams, ParameterError, resolve
from schemcheck.settings import Settings
from schemcheck.engine.stages import amplifier_name, recognise
from schemcheck.engine.topology import label
from schemcheck.units import ValueFormatError, parse_quantity

#: The audit's result for one design (the name the library has always used).
DesignAudit = DesignResult


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
                  library: Mapping[str, Mapping[str, Any]] | None = None) -> DesignResult:
    """Audit every op-amp stage of ``netlist``."""
    library = library or {}
    result = DesignResult(file=netlist.source, settings=settings.describe(),
                         errors=list(netlist.errors))
    units, skipped = recognise(netlist.parts)
    for s in skipped:
        result.not_analysed.append(NotAnalysed(s.part.ref, s.part.unit, s.part.sheet,
                                               s.part.value, s.reason, amplifier_name(s.part)))
    network = build_network(netlist, units, skipped,
                            default_tolerance=settings.default_tolerance,
                            source_resistance=settings.source_resistance)
    for unit in network.unused:
        result.not_analysed.append(NotAnalysed(
            unit.part.ref, unit.part.unit, unit.part.sheet, unit.part.value,
            "unused amplifier (inputs tied to rails or open, output not connected)", unit.name))
    problems = list(network.problems)
    params: list[OpampParams] = []
    for op in network.opamps:
        try:
            p = resolve(op.unit.part, library)
        except ParameterError as error:
            problems.append(str(error))
            p = OpampParams(source={"error": str(error)})
        params.append(p)
        op.aol = p.aol
    solution = solve(network)
    budgets = [stage_budget(solution, k, params, settings.temp_range)
               for k in range(len(network.opamps))]
    histograms: dict[int, Binned] | None = {} if settings.charts else None
    mc = monte_carlo(network, solution, params, settings.temp_range, settings.mc_samples,
                     settings.seed, histograms=histograms) if settings.mc_samples > 0 else {}
    limits = [_budget_limit(op.unit.part, settings, problems) for op in network.opamps]
    ctx = StageContext(network, solution, params, budgets, limits, settings.temp_range)
    findings: list[Finding] = []
    for rule_check in (checks.check_bias_path, checks.check_feedback, checks.check_parameters,
                       checks.check_bias_resistor, checks.check_budget):
        findings.extend(rule_check(ctx))
    for error in netlist.errors:  # a child sheet that could not be read
        findings.insert(0, Finding("unreadable-design", "error", "", None, error,
                                   "fix or re-save the file in the schematic editor"))
    sheet_file = {(op.unit.part.ref, op.unit.part.unit): op.unit.part.source_file
                  for op in network.opamps}
    result.findings = [replace(f, file=sheet_file.get((f.ref, f.unit)) or netlist.source)
                       for f in findings if f.rule not in settings.disabled_rules]
    result.stages = [_stage_result(ctx, mc, k) for k in range(len(network.opamps))]
    _chain_and_charts(ctx, mc, histograms, result.stages)
    result.assumptions = design_assumptions(network, netlist.parts, params,
                                            {s.part.ref for s in skipped}, problems)
    result.missing_parameters = [
        MissingPart(value, list(missing), len(opamps),
                    [network.opamps[k].unit.name for k in opamps])
        for (value, missing), opamps in missing_by_part(ctx).items()]
    return result


_SOURCE_ORDER = ("vos", "ib", "ios", "tcvos", "ib_hot", "ios_hot", "t_hot", "input_type", "aol")


def _ordered(mapping: Mapping[str, Any]) -> dict[str, Any]:
    """``mapping`` in a fixed key order (the parameters' order, then by name)."""
    rank = {name: i for i, name in enumerate(_SOURCE_ORDER)}
    return {k: mapping[k] for k in sorted(mapping, key=lambda k: (rank.get(k, len(rank)), k))}


def _params_used(p: OpampParams) -> ParamsUsed:
    return ParamsUsed(vos=p.vos, ib=p.ib, ios=p.ios, tcvos=p.tcvos, ib_hot=p.ib_hot,
                      ios_hot=p.ios_hot, t_hot=p.t_hot, input=p.input_type, aol=p.aol,
                      ib_either_sign=p.ib_either_sign, typical=_ordered(p.typical),
                      library_entry=p.library_entry, source=_ordered(p.source))


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
    if resistor is not None:
        ideal = resistor.ohms + (r_minus - r_plus)
        return Compensation(resistor.ref, resistor.ohms, ideal if ideal > 0 else None, useful)
    added = r_minus - r_plus
    scale = max(r_minus, r_plus)
    ideal = 0.0 if abs(added) <= 1e-9 * scale else added if added > 0 else None
    return Compensation(None, None, ideal, useful)


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
        value=part.value, topology=label(network, k, status), status=status,
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
