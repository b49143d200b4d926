"""Command-line options -> settings overrides (they win over a settings file)."""

from __future__ import annotations

from typing import Any

from schemcheck.errors import ParseError
from schemcheck.units import ValueFormatError, parse_quantity, parse_temperature_range


def options_to_overrides(*, temp: str | None = None, parts: str | None = None,
                         budget: str | None = None, samples: int | None = None,
                         seed: int | None = None,
                         estimate_missing: bool | None = None,
                         mc_solve: str | None = None) -> dict[str, Any]:
    """Settings values given on the command line (they override the settings file)."""
    changes: dict[str, Any] = {}
    given: list[str] = []
    if temp is not None:
        changes["temp_range"] = parse_temperature_range(temp)
        given.append("temp_range")
    if parts is not None:  # laid over the project's library, not instead of it
        changes["command_line_parts"] = parts
    if budget is not None:
        try:
            changes["default_budget"] = abs(parse_quantity(budget, "volt", what="--budget").value)
        except ValueFormatError as error:
            raise ParseError(str(error)) from None
        given.append("default_budget")
    if samples is not None:
        changes["mc_samples"] = samples
    if seed is not None:
        changes["seed"] = seed
    if estimate_missing:
        changes["estimate_missing"] = True
    if mc_solve is not None:
        changes["mc_solve"] = mc_solve
    if given:
        changes["given"] = tuple(given)
    return changes
