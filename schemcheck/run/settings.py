"""Audit settings: what the engine assumes where the design does not say."""

from __future__ import annotations

from dataclasses import dataclass, field

#: Stated in every report that uses it.
DEFAULT_TEMP_RANGE = (0.0, 70.0)
DEFAULT_TOLERANCE = 0.01  # 1 % resistors where no Tolerance field is given
DEFAULT_MC_SAMPLES = 10_000
DEFAULT_SEED = 1
#: how each Monte Carlo sample is solved: "update" (one factorisation per network, low-rank
#: updates per sample) or "full" (a full solve per sample, the reference)
MC_SOLVES = ("update", "full")


@dataclass(frozen=True, slots=True)
class Settings:
    temp_range: tuple[float, float] = DEFAULT_TEMP_RANGE
    default_tolerance: float = DEFAULT_TOLERANCE
    default_budget: float | None = None  # volts at the output, or None
    mc_samples: int = DEFAULT_MC_SAMPLES
    seed: int = DEFAULT_SEED
    mc_solve: str = "update"
    source_resistance: dict[str, float] = field(default_factory=dict)  # net -> ohms
    disabled_rules: tuple[str, ...] = ()
    parts_library: str | None = None
    #: which of the values above were set by the user (the rest are defaults)
    given: tuple[str, ...] = ()

    def describe(self) -> dict:
        return {
            "temperature_range_c": list(self.temp_range),
            "default_resistor_tolerance": self.default_tolerance,
            "default_budget_v": self.default_budget,
            "monte_carlo_samples": self.mc_samples,
            "seed": self.seed,
            "monte_carlo_solve": self.mc_solve,
            "source_resistance_ohm": dict(self.source_resistance),
            "disabled_rules": list(self.disabled_rules),
            "parts_library": self.parts_library,
            "defaults_used": [name for name in ("temp_range", "default_tolerance",
                                                "default_budget") if name not in self.given],
        }
