"""The main job: one design in, every op-amp stage's DC error budget and findings out.

Pure: the netlist, the parts library (already loaded) and the settings come in; the
caller does the I/O.
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace
from typing import Any, Mapping

from schemcheck import checks
from schemcheck.engine.budget import StageBudget, stage_budget
from schemcheck.checks.context import StageContext
from schemcheck.engine.dcerror import Solution, solve
from schemcheck.engine.montecarlo import MonteCarloRun, monte_carlo_run
from schemcheck.model import Finding, Netlist, natural_key
from schemcheck.engine.network import Network, build_network
from schemcheck.engine.params import OpampParams, ParameterError, resolve
from schemcheck.run.settings import Settings
from schemcheck.engine.stages import recognise
from schemcheck.engine.topology import label
from schemcheck.units import ValueFormatError, parse_quantity

CAUTION = ("These figures come from the schematic as drawn and the part data given; they "
           "do not replace a review by a qualified engineer or the applicable standards.")


@dataclass(slots=True)
class DesignAudit:
    file: str
    stages: list[dict[str, Any]] = field(default_factory=list)
    findings: list[Finding] = field(default_factory=list)
    assumptions: list[str] = field(default_factory=list)
    not_analysed: list[dict[str, Any]] = field(default_factory=list)
    settings: dict[str, Any] = field(default_factory=dict)
    errors: list[str] = field(default_factory=list)

    def to_dict(self) -> dict[str, Any]:
        return {"file": self.file, "stages": self.stages,
                "findings": [f.to_dict() for f in self.findings],
                "assumptions": self.assumptions, "not_analysed": self.not_analysed,
                "settings": self.settings, "errors": self.errors, "caution": CAUTION}


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
                  library: Mapping[str, Mapping[str, Any]] | None = None) -> DesignAudit:
    """Audit every op-amp stage of ``netlist``."""
    library = library or {}
    result = DesignAudit(file=netlist.source, settings=settings.describe(),
                         errors=list(netlist.errors))
    units, skipped = recognise(netlist.parts)
    for s in skipped:
        result.not_analysed.append({"ref": s.part.ref, "unit": s.part.unit, "sheet": s.part.sheet,
                                    "value": s.part.value, "reason": s.reason})
    network = build_network(netlist, units, skipped,
                            default_tolerance=settings.default_tolerance,
                            source_resistance=settings.source_resistance)
    for unit in network.unused:
        result.not_analysed.append({"ref": unit.part.ref, "unit": unit.part.unit,
                                    "sheet": unit.part.sheet, "value": unit.part.value,
                                    "reason": "unused amplifier (inputs tied to rails or open, "
                                              "output not connected)"})
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
    problems.extend(solution.notes)
    budgets = [stage_budget(solution, k, params, settings.temp_range)
               for k in range(len(network.opamps))]
    mc = monte_carlo_run(network, solution, params, settings.temp_range, settings.mc_samples,
                         settings.seed, settings.mc_solve)
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
    result.stages = [_stage_dict(network, solution, params, budgets, mc, limits, k)
                     for k in range(len(network.opamps))]
    result.assumptions = _assumptions(network, solution, settings, params) + mc.notes + [
        f"problem: {p}" for p in problems]
    if skipped:
        result.assumptions.append("amplifiers recognised but not analysed (listed under "
                                  "not_analysed) are treated as open at DC")
    return result


def _params_dict(p: OpampParams) -> dict[str, Any]:
    return {"vos": p.vos, "ib": p.ib, "ios": p.ios, "tcvos": p.tcvos, "ib_hot": p.ib_hot,
            "ios_hot": p.ios_hot, "t_hot": p.t_hot, "input": p.input_type, "aol": p.aol,
            "ib_either_sign": p.ib_either_sign, "typical": dict(p.typical),
            "library_entry": p.library_entry, "source": dict(p.source)}


def _stage_dict(network: Network, solution: Solution, params: list[OpampParams],
                budgets: list[StageBudget], mc: MonteCarloRun,
                limits: list[float | None], k: int) -> dict[str, Any]:
    op = network.opamps[k]
    part = op.unit.part
    status = solution.status[k]
    own = solution.own(k)
    budget = budgets[k]
    noise_gain = own["vos"] if own else None
    worst = budget.worst_case_over_temp_v
    limit = limits[k]
    contributors = [{"ref": network.opamps[c["opamp"]].unit.part.ref,
                     "unit": network.opamps[c["opamp"]].unit.part.unit,
                     "worst_case_v": c["worst_case_v"]} for c in budget.contributors]
    return {
        "ref": part.ref, "unit": part.unit, "channel": op.unit.channel, "sheet": part.sheet,
        "value": part.value, "topology": label(network, k, status), "status": status,
        "nets": {"plus": op.plus, "minus": op.minus, "out": op.out},
        "noise_gain": noise_gain,
        "sensitivity": own if own else {"vos": None, "ib_plus": None, "ib_minus": None},
        "resistance_plus_ohm": (-own["ib_plus"] / own["vos"]) if own and own["vos"] else None,
        "resistance_minus_ohm": (own["ib_minus"] / own["vos"]) if own and own["vos"] else None,
        "params": _params_dict(params[k]),
        "worst_case_own_v": budget.worst_case_own_v,
        "worst_case_total_v": budget.worst_case_total_v,
        "rss_own_v": budget.rss_own_v,
        "rss_v": budget.rss_v,
        "worst_case_over_temp_v": worst,
        "worst_temp_c": budget.worst_temp_c,
        "monte_carlo_v": mc.bounds.get(k),
        "monte_carlo_samples": mc.samples.get(k),
        "rti_v": (worst / abs(noise_gain)) if worst is not None and noise_gain else None,
        "budget_v": limit,
        "within_budget": (worst <= limit) if worst is not None and limit is not None else None,
        "depends_on_undefined_output": solution.tainted[k],
        "contributors": contributors,
    }


def _assumptions(network: Network, solution: Solution, settings: Settings,
                 params: list[OpampParams]) -> list[str]:
    low, high = settings.temp_range
    given = set(settings.given)
    out = [
        f"operating temperature {low:g} to {high:g} °C"
        + ("" if "temp_range" in given else " (default)"),
        "capacitors are open and inductors/ferrite beads short at DC",
        "op-amps are ideal (infinite open-loop gain) unless an Aol is given; Vos in series "
        "with the + input; Ib+ and Ib- flow into the pins",
        f"resistors without a Tolerance field: ±{settings.default_tolerance:.2%}"
        + ("" if "default_tolerance" in given else " (default)"),
        "Monte Carlo: resistors uniform within tolerance; Vos, Ib, Ios Gaussian with the "
        f"maximum as 3 sigma, truncated at the maximum, and random sign; {settings.mc_samples} "
        f"samples, seed {settings.seed}; 99.7 % bound at the worse end of the temperature range",
        "without hot values, FET-input bias currents double every 10 °C and bipolar ones "
        "are flat; hot values apply at the part's T_hot or else at the top of the range",
        "referred-to-input figures divide the output error by the noise gain",
        "worst-case and RSS figures use nominal resistor values; resistor tolerances enter "
        "the Monte Carlo",
    ]
    out.extend(network.assumptions)
    opens = {}
    near = set()
    for op in network.opamps:
        near.update((op.plus, op.minus, op.out))
    for r in network.resistors:
        if r.a in near or r.b in near:
            near.update((r.a, r.b))
    for ref, nets in sorted(network.open_parts.items()):
        touched = sorted(nets & near)
        if touched:
            opens[ref] = touched
    if opens:
        out.append("treated as open at DC where they touch an analysed net: "
                   + ", ".join(f"{ref} ({', '.join(nets)})" for ref, nets in opens.items()))
    defaults: dict[str, set[str]] = {}
    for k, p in enumerate(params):
        for name, src in p.source.items():
            if src.startswith("default") and name in ("ios", "tcvos"):
                defaults.setdefault(f"{name} {src}", set()).add(network.opamps[k].unit.part.ref)
    for what, refs in sorted(defaults.items()):
        names = sorted(refs, key=natural_key)
        shown = ", ".join(names[:12]) + (f" and {len(names) - 12} more" if len(names) > 12 else "")
        out.append(f"default parameter value used: {what} for {shown}")
    return out
