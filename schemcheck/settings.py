"""Audit settings: what the engine assumes where the design does not say."""

from __future__ import annotations

import os
from dataclasses import dataclass, field

#: Stated in every report that uses it.
DEFAULT_TEMP_RANGE = (0.0, 70.0)
DEFAULT_TOLERANCE = 0.01  # 1 % resistors where no Tolerance field is given
DEFAULT_MC_SAMPLES = 10_000
DEFAULT_SEED = 1
#: how each Monte Carlo sample is solved: "update" (one factorisation per network, low-rank
#: updates per sample) or "full" (a full solve per sample, the reference)
MC_SOLVES = ("update", "full")
DEFAULT_HOLD_TIME = 1e-3  # s: the hold time sample-and-hold droop is stated over


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
    parts_library: str | None = None  # the project's (settings file), or the service's
    #: the user-level (team) library, where one exists; set at the I/O edge
    user_parts_library: str | None = None
    #: ``--parts`` on the command line: laid over the project's library
    command_line_parts: str | None = None
    #: fill missing Vos/Ib/Ios/TCVos from class values (opt-in; every such figure marked)
    estimate_missing: bool = False
    #: resistive parts' values by reference, where the drawing's cannot be read
    values: dict[str, str] = field(default_factory=dict)
    #: house notations: (regular expression over a whole Value, what it means)
    value_notations: tuple[tuple[str, str], ...] = ()
    #: keep the figures the HTML report draws (error over temperature, Monte Carlo histogram)
    charts: bool = False
    #: (file, line, column) of the settings-file line naming ``parts_library``, if one did
    parts_library_named_at: tuple[str, int, int] | None = None
    #: which of the values above were set by the user (the rest are defaults)
    given: tuple[str, ...] = ()
    #: seconds: the hold time a sample-and-hold input's droop is stated over
    hold_time: float = DEFAULT_HOLD_TIME

    def parts_libraries(self) -> list[tuple[str, str]]:
        """(origin, path) of every parts library to read, the lowest precedence first:
        the user's, the project's, the command line's (a later one wins)."""
        layers = [("user", self.user_parts_library), ("project", self.parts_library),
                  ("command line", self.command_line_parts)]
        out: list[tuple[str, str]] = []
        for origin, path in layers:
            if path:
                same = os.path.normcase(os.path.abspath(path))
                out = [(o, p) for o, p in out if os.path.normcase(os.path.abspath(p)) != same]
                out.append((origin, path))
        return out

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
            "parts_library": self.command_line_parts or self.parts_library,
            "parts_libraries": [{"origin": origin, "path": path}
                                for origin, path in self.parts_libraries()],
            "estimate_missing": self.estimate_missing,
            "values": dict(self.values),
            "value_notations": [list(pair) for pair in self.value_notations],
            "hold_time_s": self.hold_time,
            "defaults_used": [name for name in ("temp_range", "default_tolerance",
                                                "default_budget") if name not in self.given],
            **({"charts": True} if self.charts else {}),
        }
