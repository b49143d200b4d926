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
from collections.abc import Callable
from dataclasses import dataclass, field

import numpy as np

from schemcheck.engine.dcerror import Solution
from schemcheck.engine.histogram import Binned, histogram
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


def error_terms(solution: Solution, k: int, j: int, p: AtTemperature) -> list[float] | None:
    """Op-amp j's Vos, Ib and Ios terms at op-amp k's output at their worst signs (volts),
    with j's figures ``p``; None where a figure is missing."""
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
    own = error_terms(solution, k, k, at25[k])
    if own is not None:
        budget.worst_case_own_v = sum(own)
        budget.rss_own_v = math.sqrt(sum(t * t for t in own))
    if solution.tainted[k]:
        return budget
    total: list[float] = []
    for j in sources:
        terms = error_terms(solution, k, j, at25[j])
        if terms is None:  # an op-amp without parameters reaches this output
            budget.contributors = []
            return budget
        total.extend(terms)
        budget.contributors.append({"opamp": j, "worst_case_v": sum(terms)})
    budget.worst_case_total_v = sum(total)
    budget.rss_v = math.sqrt(sum(t * t for t in total))
    budget.worst_case_over_temp_v, budget.worst_temp_c = _over_range(
        solution, k, params, temp_range, sources)
    return budget


#: the figures of an op-amp at a temperature, given the top of the range
#: (:func:`schemcheck.engine.params.at_temperature`, or a cache of it)
Figures = Callable[[OpampParams, float, float], AtTemperature]


def figures_once() -> Figures:
    """:func:`at_temperature` remembered: each op-amp's figures worked out once per
    temperature, for one run (keyed by the parameters' identity: they must live as long)."""
    held: dict[tuple[int, float, float], AtTemperature] = {}

    def figures(params: OpampParams, temp: float, top: float) -> AtTemperature:
        key = (id(params), temp, top)
        found = held.get(key)
        if found is None:
            found = held[key] = at_temperature(params, temp, top)
        return found

    return figures


def worst_over_range(solution: Solution, k: int, params: list[OpampParams],
                     temp_range: tuple[float, float], at: Figures = at_temperature
                     ) -> float | None:
    """:attr:`StageBudget.worst_case_over_temp_v` of op-amp k alone (volts): None where
    k is not solved, an undefined output reaches it, or an op-amp reaching it has no
    figures."""
    if solution.status[k] != "ok" or solution.tainted[k]:
        return None
    sources = reaching(solution, k)
    if not all(params[j].complete for j in sources):
        return None
    return _over_range(solution, k, params, temp_range, sources, at)[0]


def _over_range(solution: Solution, k: int, params: list[OpampParams],
                temp_range: tuple[float, float], sources: list[int],
                at: Figures = at_temperature) -> tuple[float, float]:
    """The worst-case total at op-amp k's output at the worse end of the range, and that
    end (the top where both are equal)."""
    low, high = temp_range
    return max(((total_at(solution, k, params, temp, high, sources, at), temp)
                for temp in sorted({low, high}, reverse=True)), key=lambda pair: pair[0])


def total_at(solution: Solution, k: int, params: list[OpampParams], temp: float,
             range_top: float, sources: list[int] | None = None,
             at: Figures = at_temperature) -> float:
    """Worst-case total at op-amp k's output at ``temp`` (incomplete parts count 0)."""
    value = 0.0
    for j in reaching(solution, k) if sources is None else sources:
        terms = error_terms(solution, k, j, at(params[j], temp, range_top))
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


def monte_carlo_histograms(network: Network, solution: Solution, params: list[OpampParams],
                           temp_range: tuple[float, float], samples: int, seed: int,
                           chunk_values: int = 4_000_000) -> dict[int, Binned]:
    """The sampled output errors of every solved op-amp, binned, for the HTML report's
    histograms. Sampled afresh with every sample solved in full (so at most
    :data:`HISTOGRAM_SAMPLES` samples, bounded work), the parameters drawn as for the
    bound (Gaussian with the maximum as 3 sigma, truncated there)."""
    samples = min(samples, HISTOGRAM_SAMPLES)
    rng = np.random.default_rng(seed)
    out: dict[int, Binned] = {}
    groups: dict[int, list] = {}
    for system in solution.systems:
        ops = system.component.opamps
        if (any(solution.status[k] == "unsolvable" for k in ops) or not system.out_rows
                or system.base.shape[0] > HISTOGRAM_MAX_UNKNOWNS):
            continue
        groups.setdefault(system.base.shape[0], []).append(system)
    for size, systems in sorted(groups.items()):
        try:
            errors = _group_errors(network, solution, params, systems, size, temp_range,
                                   samples, rng, chunk_values)
        except np.linalg.LinAlgError:
            continue  # a sample without a solution: no histogram (the bound says why)
        for g, system in enumerate(systems):
            incomplete = {j for j in system.component.opamps if not params[j].complete}
            for column, k in enumerate(system.out_rows):
                if not (solution.status[k] != "ok" or solution.tainted[k]
                        or any(j in incomplete for j in reaching(solution, k))):
                    out[k] = histogram(errors[g][:, column])
    return out


#: The histograms' samples at most, and the largest network they are drawn for.
HISTOGRAM_SAMPLES = 20_000
HISTOGRAM_MAX_UNKNOWNS = 200


def _group_errors(network: Network, solution: Solution, params: list[OpampParams], systems: list,
                  size: int, temp_range: tuple[float, float], samples: int,
                  rng: np.random.Generator, chunk_values: int) -> np.ndarray:
    """Output errors (systems, samples, outputs) of same-size systems, solved stacked."""
    low, high = temp_range
    count = len(systems)
    n_res = max(len(s.stamps) for s in systems)
    n_col = max(len(s.columns) for s in systems)
    n_out = max(len(s.out_rows) for s in systems)
    base = np.stack([s.base for s in systems])  # (G, n, n)
    rhs = np.zeros((count, size, n_col))
    nominal = np.zeros((count, n_res))
    tolerance = np.zeros((count, n_res))
    # stamp pattern of every resistor slot: +1 on the diagonal, -1 off it, 0 for fixed nets
    stamps = np.zeros((count, n_res, size, size))
    out_rows = np.zeros((count, n_out), dtype=int)
    sigma = np.zeros((count, n_col))  # 3-sigma = maximum at the group's temperature
    kind = np.full((count, n_col), 3)  # 0 vos, 1 ib_plus, 2 ib_minus, 3 none
    owner = np.zeros((count, n_col), dtype=int)  # column's op-amp, within the group
    opamp_index: dict[int, int] = {}
    ios_max: list[float] = []  # per op-amp of the group, at its system's temperature
    for g, system in enumerate(systems):
        rhs[g, :, :len(system.columns)] = system.rhs
        for r, ((i, j), cond, part) in enumerate(zip(system.stamps, system.conductance,
                                                     system.component.resistors)):
            nominal[g, r] = cond
            tolerance[g, r] = part.tolerance
            for a, b, sign in ((i, i, 1.0), (j, j, 1.0), (i, j, -1.0), (j, i, -1.0)):
                if a >= 0 and b >= 0:
                    stamps[g, r, a, b] += sign
        out_rows[g, :len(system.out_rows)] = list(system.out_rows.values())
        solved = [k for k in system.out_rows if solution.status[k] == "ok"]
        temp = max(sorted({low, high}, reverse=True),
                   key=lambda t: sum(total_at(solution, k, params, t, high) for k in solved))
        for c, (j, source) in enumerate(system.columns):
            if source == "unknown":
                continue
            p = at_temperature(params[j], temp, high)
            if j not in opamp_index:
                opamp_index[j] = len(opamp_index)
                ios_max.append(p.ios or 0.0)
            owner[g, c] = opamp_index[j]
            kind[g, c] = ("vos", "ib_plus", "ib_minus").index(source)
            sigma[g, c] = (p.vos if source == "vos" else p.ib) or 0.0
    ios_sigma = np.array(ios_max)
    out = np.empty((count, samples, n_out))
    per_chunk = max(1, chunk_values // max(1, count * size * size))
    for start in range(0, samples, per_chunk):
        n = min(per_chunk, samples - start)
        spread = rng.uniform(-1.0, 1.0, size=(count, n, n_res))
        g_values = nominal[:, None, :] / (1.0 + spread * tolerance[:, None, :])
        a = np.einsum("gsr,grij->gsij", g_values, stamps)
        a += base[:, None]
        unit = rng.normal(size=(3, n, len(opamp_index)))  # vos, ib, ios per op-amp
        outside = np.abs(unit) > 3.0  # truncated at the maximum (3 sigma), as the bound's
        while outside.any():
            unit[outside] = rng.normal(size=int(outside.sum()))
            outside = np.abs(unit) > 3.0
        draws = np.empty((4, n, len(opamp_index)))
        draws[0] = unit[0]
        ios = unit[2] * (ios_sigma / 3.0)
        draws[1] = unit[1]
        draws[2] = unit[1]
        draws[3] = 0.0
        values = draws[kind, :, owner]  # (G, cols, n)
        values = values * (sigma / 3.0)[:, :, None]
        ios_part = ios[:, owner].transpose(1, 2, 0) / 2.0  # (G, cols, n)
        values = values + np.where((kind == 1)[:, :, None], ios_part, 0.0)
        values = values - np.where((kind == 2)[:, :, None], ios_part, 0.0)
        b = np.ascontiguousarray(np.einsum("gcs,gnc->gsn", values, rhs))
        x = np.linalg.solve(a, b[..., None])[..., 0]  # (G, n, size)
        out[:, start:start + n] = np.take_along_axis(x, out_rows[:, None, :], axis=2)
    return out
