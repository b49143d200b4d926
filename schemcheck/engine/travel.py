"""Potentiometers over their travel: the noise-gain range of the stages they set (pure).

The network places every potentiometer at mid-travel. A stage depends on a
potentiometer where moving its wiper to either end changes the stage's own
sensitivities. For such a stage the network is solved again with each potentiometer it
depends on swept over its travel (eleven positions, the others at mid-travel) and, for two
to four of them, at every combination of ends; the noise-gain range is the lowest and
highest noise gain found. An end is taken at 1e-6 of the travel (an exact end is a short
the conductance matrix cannot hold).
"""

from __future__ import annotations

from dataclasses import dataclass, field

from schemcheck.engine.dcerror import Solution, solve
from schemcheck.engine.network import Network, Pot, Resistor

END = 1e-6
SWEEP = tuple(i / 10 for i in range(11))
_CHANGED = 1e-9  # relative change of a sensitivity that makes a stage depend on a pot


@dataclass(slots=True)
class Setting:
    """Wiper positions (0 at the end of the lowest-numbered pin, 1 at the other end) and
    the network solved with them."""

    positions: dict[str, float]
    network: Network
    solution: Solution

    def describe(self) -> str:
        """``RV3 wiper at 0 %`` (0 % at the end of its lowest-numbered pin)."""
        return ", ".join(f"{name} wiper at {t:.0%}" for name, t in sorted(self.positions.items())
                         if abs(t - 0.5) > 1e-12) or "every potentiometer at mid-travel"


@dataclass(slots=True)
class Travel:
    """What the potentiometers do to one stage."""

    pots: tuple[str, ...]
    noise_gain_low: float
    noise_gain_high: float
    settings: list[Setting] = field(default_factory=list)


def _at(network: Network, positions: dict[str, float]) -> Network:
    resistors = list(network.resistors)
    for pot in network.pots:
        t = positions.get(pot.name)
        if t is None:
            continue
        t = min(max(t, END), 1 - END)
        for index, share in ((pot.a, t), (pot.b, 1 - t)):
            if index >= 0:
                old = resistors[index]
                resistors[index] = Resistor(old.ref, old.a, old.b, pot.ohms * share,
                                            old.tolerance, old.tolerance_source)
    return network.with_resistors(resistors)


def _changed(mid: dict[str, float] | None, other: dict[str, float] | None) -> bool:
    if mid is None or other is None:
        return mid is not other
    return any(abs(other[s] - mid[s]) > _CHANGED * max(abs(mid[s]), abs(other[s]), 1e-30)
               for s in mid)


def travels(network: Network, solution: Solution) -> dict[int, Travel]:
    """Per stage that depends on a potentiometer: its noise-gain range over the travel
    and the settings solved to find it."""
    pots = [p for p in network.pots if p.a >= 0 or p.b >= 0]
    if not pots or not network.opamps:
        return {}
    cache: dict[tuple[tuple[str, float], ...], Setting] = {}

    def setting(positions: dict[str, float]) -> Setting:
        key = tuple(sorted(positions.items()))
        found = cache.get(key)
        if found is None:
            variant = _at(network, positions)
            found = cache[key] = Setting(dict(positions), variant, solve(variant))
        return found

    depends: dict[int, list[Pot]] = {}
    for pot in pots:
        ends = [setting({pot.name: t}) for t in (0.0, 1.0)]
        for k in range(len(network.opamps)):
            if solution.status[k] != "ok":
                continue
            if any(_changed(solution.own(k), end.solution.own(k)) for end in ends):
                depends.setdefault(k, []).append(pot)
    out: dict[int, Travel] = {}
    for k, own_pots in depends.items():
        settings = [setting({pot.name: t}) for pot in own_pots for t in SWEEP]
        if 2 <= len(own_pots) <= 4:
            corners: list[dict[str, float]] = [{}]
            for pot in own_pots:
                corners = [dict(c, **{pot.name: t}) for c in corners for t in (0.0, 1.0)]
            settings.extend(setting(c) for c in corners)
        gains = []
        for found in settings:
            own = found.solution.own(k)
            if own is not None:
                gains.append(own["vos"])
        mid = solution.own(k)
        if mid is not None:
            gains.append(mid["vos"])
        if not gains:
            continue
        out[k] = Travel(tuple(p.name for p in own_pots), min(gains), max(gains), settings)
    return out
