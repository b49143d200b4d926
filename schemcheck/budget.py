"""DC error budgets per stage from the sensitivities (pure, numpy).

For the output of stage k and each op-amp j whose sources reach it:

* ``s_ib = s_ib+ + s_ib-`` and ``s_ios = (s_ib+ - s_ib-) / 2`` (Ib+ = Ib + Ios/2,
  Ib- = Ib - Ios/2);
* worst case: every source at its worst sign, ``|s_vos|·Vos + |s_ib|·Ib + |s_ios|·Ios``;
* RSS: the root of the sum of the squares of the same terms;
* over temperature: the worst case at each end of the operating range (parameters by
  :func:`schemcheck.params.at_temperature`), the larger one;
* Monte Carlo (seeded, vectorised): resistors uniform within their tolerance; every
  Vos, Ib and Ios Gaussian with the datasheet maximum as 3 sigma and a random sign;
  the 99.7th percentile of the output error's magnitude, at the worse end of the range.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from .dcerror import Solution, output_errors
from .network import Network
from .params import AtTemperature, OpampParams, at_temperature

MC_PERCENTILE = 99.7


@dataclass(slots=True)
class StageBudget:
    """All figures of one stage, volts; None where they cannot be computed."""

    worst_case_own_v: float | None = None
    worst_case_total_v: float | None = None
    rss_own_v: float | None = None
    rss_v: float | None = None
    worst_case_over_temp_v: float | None = None
    worst_temp_c: float | None = None
    monte_carlo_v: float | None = None
    contributors: list[dict] = field(default_factory=list)


def _terms(solution: Solution, k: int, j: int, p: AtTemperature) -> list[float] | None:
    sens = solution.sensitivity[k]
    s_vos = sens.get((j, "vos"), 0.0)
    s_p = sens.get((j, "ib_plus"), 0.0)
    s_m = sens.get((j, "ib_minus"), 0.0)
    if p.vos is None or p.ib is None or p.ios is None:
        return None
    return [abs(s_vos) * p.vos, abs(s_p + s_m) * p.ib, abs(s_p - s_m) / 2 * p.ios]


def reaching(solution: Solution, k: int) -> list[int]:
    """Op-amps whose sources move op-amp k's output (k first)."""
    others = sorted({j for (j, _), v in solution.sensitivity[k].items() if v != 0.0 and j != k})
    return [k] + others


def stage_budget(solution: Solution, k: int, params: list[OpampParams],
                 temp_range: tuple[float, float]) -> StageBudget:
    """Worst case, RSS and over-temperature figures of op-amp k's output."""
    budget = StageBudget()
    if solution.status[k] != "ok":
        return budget
    low, high = temp_range
    at25 = {j: at_temperature(params[j], 25.0, high) for j in reaching(solution, k)}
    own = _terms(solution, k, k, at25[k])
    if own is not None:
        budget.worst_case_own_v = sum(own)
        budget.rss_own_v = math.sqrt(sum(t * t for t in own))
    if solution.tainted[k]:
        return budget
    total: list[float] = []
    for j in reaching(solution, k):
        terms = _terms(solution, k, j, at25[j])
        if terms is None:
            total = []
            break
        total.extend(terms)
        budget.contributors.append({"opamp": j, "worst_case_v": sum(terms)})
    if not total:
        budget.contributors = []
        return budget
    budget.worst_case_total_v = sum(total)
    budget.rss_v = math.sqrt(sum(t * t for t in total))
    worst = max(((total_at(solution, k, params, temp, high), temp)
                 for temp in sorted({low, high}, reverse=True)),
                key=lambda pair: pair[0])
    budget.worst_case_over_temp_v, budget.worst_temp_c = worst
    return budget


def total_at(solution: Solution, k: int, params: list[OpampParams], temp: float,
             range_top: float) -> float:
    """Worst-case total at op-amp k's output at ``temp`` (incomplete parts count 0)."""
    value = 0.0
    for j in reaching(solution, k):
        terms = _terms(solution, k, j, at_temperature(params[j], temp, range_top))
        value += sum(terms or [])
    return value


def monte_carlo(network: Network, solution: Solution, params: list[OpampParams],
                temp_range: tuple[float, float], samples: int, seed: int
                ) -> dict[int, float | None]:
    """99.7th-percentile output error of every solved op-amp, per component."""
    rng = np.random.default_rng(seed)
    low, high = temp_range
    result: dict[int, float | None] = {}
    for system in solution.systems:
        ops = system.component.opamps
        incomplete = {j for j in ops if not params[j].complete}
        # the worse end of the range for this component
        solved = [k for k in system.out_rows if solution.status[k] == "ok"]
        temp = max(sorted({low, high}),
                   key=lambda t: sum(total_at(solution, k, params, t, high) for k in solved))
        at = {j: at_temperature(params[j], temp, high) for j in ops}
        resistors = [network.resistors[i] for i in system.component.resistors]
        nominal = system.conductance
        tol = np.array([r.tolerance for r in resistors])
        spread = rng.uniform(-1.0, 1.0, size=(samples, len(resistors)))
        conductance = nominal / (1.0 + spread * tol)
        values = np.zeros((samples, len(system.columns)))
        by_op: dict[int, tuple[np.ndarray, np.ndarray, np.ndarray]] = {}
        for j in ops:
            p = at[j]
            vos = rng.normal(0.0, (p.vos or 0.0) / 3.0, samples)
            ib = rng.normal(0.0, (p.ib or 0.0) / 3.0, samples)
            ios = rng.normal(0.0, (p.ios or 0.0) / 3.0, samples)
            by_op[j] = (vos, ib + ios / 2.0, ib - ios / 2.0)
        for c, (j, source) in enumerate(system.columns):
            if source == "unknown":
                continue
            index = ("vos", "ib_plus", "ib_minus").index(source)
            values[:, c] = by_op[j][index]
        if any(solution.status[k] == "unsolvable" for k in ops):
            result.update({k: None for k in system.out_rows})
            continue
        try:
            errors = output_errors(system, conductance, values)
        except np.linalg.LinAlgError:
            result.update({k: None for k in system.out_rows})
            continue
        for column, k in enumerate(system.out_rows):
            if solution.status[k] != "ok" or solution.tainted[k]:
                result[k] = None
                continue
            if any(j in incomplete for j in reaching(solution, k)):
                result[k] = None
                continue
            result[k] = float(np.percentile(np.abs(errors[:, column]), MC_PERCENTILE))
    return result
