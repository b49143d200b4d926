"""What every rule reads: the network, the solution and per-stage figures."""

from __future__ import annotations

from dataclasses import dataclass

from schemcheck.engine.budget import StageBudget
from schemcheck.engine.dcerror import Solution
from schemcheck.engine.network import Network
from schemcheck.engine.params import OpampParams


@dataclass(slots=True)
class StageContext:
    network: Network
    solution: Solution
    params: list[OpampParams]
    budgets: list[StageBudget]
    budget_limits: list[float | None]
    temp_range: tuple[float, float]
    estimate_missing: bool = False

    def who(self, k: int) -> tuple[str, int, str]:
        part = self.network.opamps[k].unit.part
        return part.ref, part.unit, part.sheet

    def name(self, k: int) -> str:
        unit = self.network.opamps[k].unit
        suffix = f" unit {unit.part.unit}" if unit.part.unit_count > 1 else ""
        channel = f" amplifier {unit.channel}" if unit.channel else ""
        return f"{unit.part.ref}{suffix}{channel}"
