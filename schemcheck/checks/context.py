"""What every rule reads: the network, the solution and per-stage figures."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

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
        """The stage identifier (``U4/2``), the same in every output."""
        return self.network.opamps[k].unit.name

    def ids(self, k: int) -> dict[str, Any]:
        """The keyword arguments that tie a finding to op-amp k's stage."""
        unit = self.network.opamps[k].unit
        return {"channel": unit.channel, "stage": unit.name}
