"""The I/O edge of the audit: read files and settings, call the pure engine."""

from __future__ import annotations

from dataclasses import replace
from typing import Any

from . import __version__
from .audit import audit_netlist
from .errors import ParseError
from .settings import Settings
from .units import ValueFormatError, parse_quantity, parse_temperature_range


def options_to_settings(*, temp: str | None = None, parts: str | None = None,
                        budget: str | None = None, samples: int | None = None,
                        seed: int | None = None, base: Settings | None = None) -> Settings:
    """Command-line options over ``base`` (or the defaults)."""
    settings = base or Settings()
    given = set(settings.given)
    changes: dict[str, Any] = {}
    if temp is not None:
        changes["temp_range"] = parse_temperature_range(temp)
        given.add("temp_range")
    if parts is not None:
        changes["parts_library"] = parts
    if budget is not None:
        try:
            changes["default_budget"] = abs(parse_quantity(budget, "volt", what="--budget").value)
        except ValueFormatError as error:
            raise ParseError(str(error)) from None
        given.add("default_budget")
    if samples is not None:
        changes["mc_samples"] = samples
    if seed is not None:
        changes["seed"] = seed
    return replace(settings, **changes, given=tuple(sorted(given)))


def audit_files(paths: list[str], settings: Settings) -> dict[str, Any]:
    """Audit each design file; the report shape of ``schemcheck audit --format json``."""
    from .io.loader import load_netlist
    from .io.partslib import load_parts_library

    library = load_parts_library(settings.parts_library) if settings.parts_library else {}
    designs = []
    for path in paths:
        netlist = load_netlist(path)
        designs.append(audit_netlist(netlist, settings, library).to_dict())
    return {"tool": {"name": "schemcheck", "version": __version__}, "designs": designs}
