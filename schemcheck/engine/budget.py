"""DC error budgets per stage from the sensitivities (pure, numpy).

For the output of stage k and each op-amp j whose sources reach it:

* ``s_ib = s_ib+ + s_ib-`` and ``s_ios = (s_ib+ - s_ib-) / 2`` (Ib+ = Ib + Ios/2,
  Ib- = Ib - Ios/2);
* worst case: every source at its worst sign, ``|s_vos|·Vos + |s_ib|·Ib + |s_ios|·Ios``;
* RSS: the root of the sum of the squares of the same terms;
* over temperature: the worst case at each end of the operating range (parameters by
  :func:`schemcheck.params.at_temperature`), the larger one;
* Monte Carlo (seeded, vectorised; :mod:`schemcheck.engine.montecarlo`): resistors
  uniform within their tolerance; every Vos, Ib and Ios Gaussian with the datasheet
  maximum as 3 sigma, truncated at that maximum, and a random sign; the 99.7th
  percentile of the output error's magnitude, at the worse end of the range.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

from schemcheck.engine.dcerror import Solution
from schemcheck.engine.network import Network
from schemcheck.engine.params import AtTemperature, OpampParams, at_temperature

@dataclass(slots=True)
class StageBudget:
    """All figures of one stage, volts; None where they cannot be computed."""

    worst_case_own_v: float | None = None
    worst_case_total_v: float | None = None
    rss_own_v: float | None = None
    rss_v: float | None = None
    worst_case_over_temp_v: float | None = None
    worst_temp_c: float | None = None
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
    sources = reaching(solution, k)
    at25 = {j: at_temperature(params[j], 25.0, high) for j in sources}
    own = _terms(solution, k, k, at25[k])
    if own is not None:
        budget.worst_case_own_v = sum(own)
        budget.rss_own_v = math.sqrt(sum(t * t for t in own))
    if solution.tainted[k]:
        return budget
    total: list[float] = []
    for j in sources:
        terms = _terms(solution, k, j, at25[j])
        if terms is None:  # an op-amp without parameters reaches this output
            budget.contributors = []
            return budget
        total.extend(terms)
        budget.contributors.append({"opamp": j, "worst_case_v": sum(terms)})
    budget.worst_case_total_v = sum(total)
    budget.rss_v = math.sqrt(sum(t * t for t in total))
    budget.worst_case_over_temp_v, budget.worst_temp_c = max(
        ((total_at(solution, k, params, temp, high, sources), temp)
         for temp in sorted({low, high}, reverse=True)), key=lambda pair: pair[0])
    return budget


def total_at(solution: Solution, k: int, params: list[OpampParams], temp: float,
             range_top: float, sources: list[int] | None = None) -> float:
    """Worst-case total at op-amp k's output at ``temp`` (incomplete parts count 0)."""
    value = 0.0
    for j in reaching(solution, k) if sources is None else sources:
        terms = _terms(solution, k, j, at_temperature(params[j], temp, range_top))
        value += sum(terms or [])
    return value


def monte_carlo(network: Network, solution: Solution, params: list[OpampParams],
                temp_range: tuple[float, float], samples: int, seed: int,
                solve: str = "update") -> dict[int, float | None]:
    """99.7th-percentile output error of every solved op-amp, volts (see
    :mod:`schemcheck.engine.montecarlo`, whose ``monte_carlo_run`` also says how many
    samples were used and why fewer)."""
    from schemcheck.engine.montecarlo import monte_carlo_run

    return monte_carlo_run(network, solution, params, temp_range, samples, seed, solve).bounds
