"""Where a stage's output error comes from, and what part would keep it in budget (pure).

For op-amp k's output with sensitivities ``s_vos`` (V/V), ``s_ib+`` and ``s_ib-`` (V/A) to
its own sources, and the budget's decomposition Ib+ = Ib + Ios/2, Ib- = Ib - Ios/2:

* the own terms at 25 °C are those of the worst case (:mod:`schemcheck.engine.budget`):
  ``|s_vos|·Vos``, ``|s_ib|·Ib`` with ``s_ib = s_ib+ + s_ib-``, ``|s_ios|·Ios`` with
  ``s_ios = (s_ib+ - s_ib-)/2``; they add up to the stage's own worst case. What each bias
  current gives alone (``s_ib+·Ib``, ``s_ib-·Ib``, signed) shows which input's resistance
  the Ib term comes from;
* every other op-amp j whose sources reach the output feeds it with the gain
  ``s_k(j, Vos) / s_j(j, Vos)`` (the output's change per volt of j's output, for j's own
  error) and a worst-case share (j's terms through k's sensitivities);
* part requirements against a budget B: upstream op-amps take their worst case at the
  worse end of the range, U; what is left, A = B - U, is spent on the stage's own terms at
  their largest over the range. Each alone: ``Vos < A/|s_vos|`` (Vos with its drift to the
  end of the range farthest from 25 °C), ``Ib < A/|s_ib|``, ``Ios < A/|s_ios|``; an even
  split gives each term that reaches the output ``A/n``.
"""

from __future__ import annotations

from dataclasses import dataclass

from schemcheck.engine.budget import reaching
from schemcheck.engine.dcerror import Solution
from schemcheck.engine.params import OpampParams, at_temperature


@dataclass(frozen=True, slots=True)
class Coefficients:
    """Output error per unit of each own source: V/V for Vos, V/A for the currents."""

    vos: float
    ib_plus: float
    ib_minus: float

    @property
    def ib(self) -> float:
        """V/A; 0 where Ib+ and Ib- cancel to rounding (equal resistances at both inputs)."""
        return _clean(self.ib_plus + self.ib_minus, max(abs(self.ib_plus), abs(self.ib_minus)))

    @property
    def ios(self) -> float:
        """V/A; 0 where the two terms cancel to rounding."""
        return _clean((self.ib_plus - self.ib_minus) / 2.0,
                      max(abs(self.ib_plus), abs(self.ib_minus)))


#: a sum below this share of its terms is rounding noise (like -2e-15 of 1e5) and is 0
RELATIVE_ZERO = 1e-9


def _clean(value: float, scale: float) -> float:
    """``value``, or exactly 0.0 where it is rounding noise next to ``scale``; never -0.0."""
    return 0.0 if abs(value) <= RELATIVE_ZERO * scale else value + 0.0


@dataclass(frozen=True, slots=True)
class OwnTerms:
    """The stage's own worst-case terms at 25 °C, volts."""

    vos_v: float
    ib_v: float
    ios_v: float
    ib_plus_v: float  # s_ib+ · Ib, signed
    ib_minus_v: float  # s_ib- · Ib, signed


@dataclass(frozen=True, slots=True)
class Feed:
    """One other op-amp whose sources reach this output."""

    opamp: int
    gain: float | None  # V/V from its output to this one; None where it has no defined output
    worst_case_v: float | None  # its share at 25 °C; None without its parameters


@dataclass(frozen=True, slots=True)
class Requirements:
    """The largest own parameters that keep the stage within ``budget_v``.

    Volts and amperes, maxima over the temperature range; None where a source does not
    reach the output (no limit)."""

    budget_v: float
    upstream_v: float | None  # upstream worst case at the worse end; None: not all known
    upstream_unknown: tuple[int, ...]  # op-amps feeding this one without figures
    available_v: float  # budget minus the known upstream share
    delta_t_c: float  # the range's largest distance from 25 °C (Vos drifts over it)
    vos_alone_v: float | None
    ib_alone_a: float | None
    ios_alone_a: float | None
    vos_split_v: float | None
    ib_split_a: float | None
    ios_split_a: float | None
    part_vos_v: float | None  # the part's largest over the range, where known
    part_ib_a: float | None
    part_ios_a: float | None
    part_within: bool | None


def coefficients(solution: Solution, k: int) -> Coefficients | None:
    """Op-amp k's sensitivities to its own sources; None when its output is undefined."""
    own = solution.own(k)
    if own is None:
        return None
    return Coefficients(own["vos"] + 0.0, own["ib_plus"] + 0.0, own["ib_minus"] + 0.0)


def own_terms(solution: Solution, k: int, params: OpampParams) -> OwnTerms | None:
    """The own terms of op-amp k at 25 °C; None without its Vos, Ib and Ios."""
    c = coefficients(solution, k)
    if c is None or not params.complete:
        return None
    vos, ib, ios = params.vos or 0.0, params.ib or 0.0, params.ios or 0.0
    return OwnTerms(abs(c.vos) * vos, abs(c.ib) * ib, abs(c.ios) * ios,
                    c.ib_plus * ib + 0.0, c.ib_minus * ib + 0.0)


def _share(solution: Solution, k: int, j: int, vos: float, ib: float, ios: float) -> float:
    sens = solution.sensitivity[k]
    s_vos = sens.get((j, "vos"), 0.0)
    s_p = sens.get((j, "ib_plus"), 0.0)
    s_m = sens.get((j, "ib_minus"), 0.0)
    return abs(s_vos) * vos + abs(s_p + s_m) * ib + abs(s_p - s_m) / 2 * ios


def feeds(solution: Solution, k: int, params: list[OpampParams]) -> list[Feed]:
    """The other op-amps whose sources reach op-amp k's output, largest share first
    (unknown shares last, then in network order)."""
    if solution.status[k] != "ok":
        return []
    out = []
    for j in reaching(solution, k)[1:]:
        gain = None
        own_gain = solution.sensitivity[j].get((j, "vos"), 0.0)
        if solution.status[j] == "ok" and own_gain != 0.0:
            gain = solution.sensitivity[k].get((j, "vos"), 0.0) / own_gain + 0.0
        p = params[j]
        share = None
        if solution.status[j] == "ok" and p.complete:
            share = _share(solution, k, j, p.vos or 0.0, p.ib or 0.0, p.ios or 0.0)
        out.append(Feed(j, gain, share))
    return sorted(out, key=lambda f: (f.worst_case_v is None, -(f.worst_case_v or 0.0)))


def _range_max(params: OpampParams, temp_range: tuple[float, float]) -> tuple[
        float | None, float | None, float | None]:
    """The part's Vos, Ib and Ios at their largest over the range."""
    low, high = temp_range
    temps = {low, high} | ({25.0} if low <= 25.0 <= high else set())
    at = [at_temperature(params, t, high) for t in sorted(temps)]

    def largest(values: list[float | None]) -> float | None:
        return None if any(v is None for v in values) else max(v for v in values if v is not None)

    return (largest([a.vos for a in at]), largest([a.ib for a in at]),
            largest([a.ios for a in at]))


def _upstream(solution: Solution, k: int, params: list[OpampParams],
              temp_range: tuple[float, float]) -> tuple[float, tuple[int, ...]]:
    """The worst case of the known shares of every other op-amp at op-amp k's output, at
    the worse end of the range, and the op-amps feeding it whose share is unknown."""
    low, high = temp_range
    others = reaching(solution, k)[1:]
    unknown = tuple(j for j in others if solution.status[j] != "ok" or not params[j].complete)
    known = [j for j in others if j not in unknown]
    worst = 0.0
    for temp in sorted({low, high}):
        total = 0.0
        for j in known:
            a = at_temperature(params[j], temp, high)
            total += _share(solution, k, j, a.vos or 0.0, a.ib or 0.0, a.ios or 0.0)
        worst = max(worst, total)
    return worst, unknown


def requirements(solution: Solution, k: int, params: list[OpampParams],
                 temp_range: tuple[float, float], budget_v: float | None) -> Requirements | None:
    """What op-amp k's own part must meet for its output to stay within ``budget_v``
    (volts); None without a budget or a defined output. Upstream shares that are unknown
    (no parameters, or an output with no defined DC level) are left out of the budget
    (``upstream_unknown`` says which, and ``upstream_v`` is then None)."""
    c = coefficients(solution, k)
    if c is None or budget_v is None:
        return None
    low, high = temp_range
    known_upstream, unknown = _upstream(solution, k, params, temp_range)
    undefined = solution.tainted[k]
    upstream = None if unknown or undefined else known_upstream
    available = budget_v - known_upstream
    left = max(available, 0.0)
    gains = (abs(c.vos), abs(c.ib), abs(c.ios))
    reach = sum(1 for g in gains if g > 0.0)
    alone = [left / g if g > 0.0 else None for g in gains]
    split = [left / reach / g if g > 0.0 else None for g in gains]
    p = params[k]
    part = _range_max(p, temp_range)
    within = None
    if all(v is not None for v in part):
        own = sum(g * (v or 0.0) for g, v in zip(gains, part))
        within = own <= available
    return Requirements(
        budget_v=budget_v, upstream_v=upstream, upstream_unknown=unknown,
        available_v=available + 0.0,
        delta_t_c=max(abs(low - 25.0), abs(high - 25.0)),
        vos_alone_v=alone[0], ib_alone_a=alone[1], ios_alone_a=alone[2],
        vos_split_v=split[0], ib_split_a=split[1], ios_split_a=split[2],
        part_vos_v=part[0], part_ib_a=part[1], part_ios_a=part[2], part_within=within)
