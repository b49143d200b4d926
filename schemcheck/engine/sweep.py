"""A stage's error across the operating temperature range (pure, numpy).

For op-amp k's output, the worst case at a temperature T is the budget's
(:mod:`schemcheck.engine.budget`) with every part's figures taken at T
(:func:`schemcheck.engine.params.at_temperature`):
``sum over the op-amps j reaching it of |s_vos|·Vos_j(T) + |s_ib|·Ib_j(T) + |s_ios|·Ios_j(T)``;
the RSS is the root of the sum of the squares of the same terms. Both are evaluated at
evenly spaced temperatures across the range, plus 25 °C and every part's T_hot inside it
(where the curves bend), so the curves are smooth and pass through the figures at the ends
of the range that the budget reports.

The Monte Carlo is sampled at one temperature (:func:`monte_carlo_temperature`). Its
99.7 % bound at the other temperatures is estimated by scaling the sampled bound with the
RSS: with Gaussian sources the output error is Gaussian with sigma = RSS/3 whatever the mix
of sources, so the bound is a fixed multiple of the RSS and only the widths change with
temperature. The resistors' spread (a second-order effect) is carried at the sampled
temperature's proportion. Sampling every temperature would cost one Monte Carlo each.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from schemcheck.engine.budget import error_terms, reaching, total_at
from schemcheck.engine.dcerror import Solution
from schemcheck.engine.params import OpampParams, at_temperature

#: intervals across the range: 2 °C steps over the default 0 to 70 °C
SWEEP_INTERVALS = 35
#: how the Monte Carlo curve is obtained (stated in the results and the report)
MC_RSS_SCALED = "rss-scaled"


@dataclass(frozen=True, slots=True)
class Sweep:
    """Op-amp k's output error at each of ``temps_c`` (°C), volts."""

    temps_c: tuple[float, ...]
    worst_case_v: tuple[float, ...]
    rss_v: tuple[float, ...]

    def rss_at(self, temp_c: float) -> float:
        """The RSS at ``temp_c`` (one of ``temps_c``, or interpolated), volts."""
        return float(np.interp(temp_c, self.temps_c, self.rss_v))


def sweep_temperatures(temp_range: tuple[float, float], params: list[OpampParams],
                       intervals: int = SWEEP_INTERVALS) -> list[float]:
    """Evenly spaced temperatures from one end of the range to the other (°C), with 25 °C
    and each part's T_hot added where they fall inside."""
    low, high = temp_range
    temps = {float(t) for t in np.round(np.linspace(low, high, intervals + 1), 9)}
    for bend in [25.0] + [p.t_hot for p in params if p.t_hot is not None]:
        if low < bend < high:
            temps.add(float(bend))
    return sorted(temps)


def stage_sweep(solution: Solution, k: int, params: list[OpampParams],
                temp_range: tuple[float, float], temps: list[float]) -> Sweep | None:
    """Worst case and RSS of op-amp k's output at each of ``temps`` (°C); None where its
    total is unknown (not solved, fed by an output with no defined DC level, or a part
    reaching it has no Vos, Ib or Ios)."""
    if solution.status[k] != "ok" or solution.tainted[k]:
        return None
    high = temp_range[1]
    sources = reaching(solution, k)
    worst, rss = [], []
    for temp in temps:
        terms: list[float] = []
        for j in sources:
            found = error_terms(solution, k, j, at_temperature(params[j], temp, high))
            if found is None:
                return None
            terms.extend(found)
        worst.append(math.fsum(terms))
        rss.append(math.sqrt(math.fsum(t * t for t in terms)))
    return Sweep(tuple(temps), tuple(worst), tuple(rss))


def monte_carlo_temperature(solution: Solution, k: int, params: list[OpampParams],
                            temp_range: tuple[float, float]) -> float | None:
    """The temperature (°C) at which :func:`schemcheck.engine.budget.monte_carlo` samples
    op-amp k's network: the end of the range where the worst cases of the network's solved
    outputs add up to more (the high end on a tie). None where k is in no solved system."""
    low, high = temp_range
    for system in solution.systems:
        if k not in system.out_rows:
            continue
        solved = [m for m in system.out_rows if solution.status[m] == "ok"]
        return max(sorted({low, high}, reverse=True),
                   key=lambda t: sum(total_at(solution, m, params, t, high) for m in solved))
    return None


def scaled_bound(bound_v: float, at_temp_c: float, sweep: Sweep) -> list[float] | None:
    """The Monte Carlo bound ``bound_v`` (volts, sampled at ``at_temp_c``) carried to each
    temperature of ``sweep`` in proportion to the RSS there; None where the RSS at the
    sampled temperature is 0."""
    anchor = sweep.rss_at(at_temp_c)
    if anchor <= 0.0:
        return None
    return [bound_v * r / anchor for r in sweep.rss_v]
