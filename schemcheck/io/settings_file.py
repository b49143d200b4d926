"""Project settings: ``schemcheck.toml`` beside the design (a name of our own).

    temperature_range = [-40, 85]     # °C
    default_budget = "5mV"            # stages without a DC_Budget field
    default_tolerance = "1%"          # resistors without a Tolerance field
    parts_library = "parts.toml"      # relative to this file
    rules_off = ["missing-parameters"]
    estimate_missing = false          # true: class estimates for missing op-amp figures
    monte_carlo_samples = 10000
    monte_carlo_solve = "update"      # or "full": a full solve per sample (slower)
    seed = 1
    [source_resistance]               # nets driven from outside the design
    BRIDGE = "350"
    [values]                          # values the drawing gives in a form not read
    R13 = "1M"
    hold_time = "1ms"                 # sample-and-hold droop is stated over this time
    [[value_notation]]                # house notations, tried where a Value is not read
    match = '^t(.+)$'                 # a regular expression over the whole Value
    value = '\1'                      # what it means ('t2k' is a 2 kΩ trimmer)

Unknown keys are an error that names the key. Command-line options override the file.
"""

from __future__ import annotations

import math
import re
from dataclasses import replace
from typing import Any

from schemcheck.errors import ParseError
from schemcheck.io.files import read_text, toml_document, toml_error, toml_position
from schemcheck.io.resolve import library_path
from schemcheck.rules import RULES
from schemcheck.settings import MC_SOLVES, Settings
from schemcheck.units import (
    ValueFormatError,
    check_temperature_range,
    parse_quantity,
    parse_resistance,
    parse_time,
    parse_tolerance,
    read_resistance,
)

#: The largest Monte Carlo seed (numpy's generators take any whole number >= 0; 64 bits
#: is what TOML can write).
MAX_SEED = 2**63 - 1
_KEYS = ("temperature_range", "default_budget", "default_tolerance", "parts_library",
         "rules_off", "monte_carlo_samples", "monte_carlo_solve", "seed", "source_resistance",
         "estimate_missing", "values", "value_notation", "hold_time")


def _finite_number(value: Any) -> bool:
    """A TOML integer or float that is finite as a double (a 400-digit integer is not)."""
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        return False
    try:
        return math.isfinite(float(value))
    except OverflowError:
        return False


def load_settings(path: str, base: Settings | None = None) -> Settings:
    """``base`` (or the defaults) with the values of the settings file at ``path``."""
    text = read_text(path)
    data = toml_document(text, path, "a TOML settings file")
    return apply_settings(data, path, base or Settings(), text)


def apply_settings(data: dict[str, Any], path: str, base: Settings,
                   text: str | None = None) -> Settings:
    """``base`` with the values of ``data`` (the settings file at ``path``, whose ``text``
    locates an error's line and column when given)."""

    def located(message: str, key: str) -> ParseError:
        if text is None:
            return ParseError(message, file=path)
        return toml_error(message, path, text, (), key)

    def bad(key: str, expected: str) -> ParseError:
        shown = repr(data[key])
        shown = shown if len(shown) <= 80 else shown[:77] + "..."
        return located(f"key {key!r}: expected {expected}, found {shown}", key)

    unknown = sorted(set(data) - set(_KEYS))
    if unknown:
        raise located(f"unknown key {unknown[0]!r} (expected one of {', '.join(_KEYS)})",
                      unknown[0])
    changes: dict[str, Any] = {}
    given = set(base.given)
    if "temperature_range" in data:
        value = data["temperature_range"]
        if (not isinstance(value, list) or len(value) != 2
                or not all(_finite_number(v) for v in value)):
            raise bad("temperature_range", "[MIN, MAX] in °C, two finite numbers")
        try:
            check_temperature_range(float(value[0]), float(value[1]), repr(value))
        except ValueFormatError as error:
            raise located(f"key 'temperature_range': {error}", "temperature_range") from None
        changes["temp_range"] = (float(value[0]), float(value[1]))
        given.add("temp_range")
    current = ""
    try:
        if "default_budget" in data:
            current = "default_budget"
            changes["default_budget"] = abs(parse_quantity(str(data["default_budget"]), "volt",
                                                           what="default_budget").value)
            given.add("default_budget")
        if "default_tolerance" in data:
            current = "default_tolerance"
            changes["default_tolerance"] = parse_tolerance(str(data["default_tolerance"]),
                                                           "default_tolerance")
            given.add("default_tolerance")
        if "source_resistance" in data:
            current = "source_resistance"
            table = data["source_resistance"]
            if not isinstance(table, dict):
                raise bad("source_resistance", "a table of NET = \"ohms\"")
            resistances = {}
            for net, value in table.items():
                ohms = parse_resistance(str(value), f"source_resistance.{net}")
                if ohms is None or ohms < 0:
                    raise bad("source_resistance", "resistances in ohms")
                resistances[str(net)] = ohms
            changes["source_resistance"] = resistances
        if "values" in data:
            changes["values"] = _values(data["values"], bad)
        if "value_notation" in data:
            changes["value_notations"] = _notations(data["value_notation"], bad)
        if "hold_time" in data:
            changes["hold_time"] = parse_time(str(data["hold_time"]), "hold_time")
    except ValueFormatError as error:
        raise located(str(error), current) from None
    if "parts_library" in data:
        if not isinstance(data["parts_library"], str):
            raise bad("parts_library", "a file path")
        changes["parts_library"] = library_path(path, data["parts_library"])
        where = toml_position(text, (), "parts_library") if text is not None else None
        changes["parts_library_named_at"] = (path, *where) if where else None
    if "rules_off" in data:
        rules = data["rules_off"]
        if not isinstance(rules, list) or any(not isinstance(r, str) or r not in RULES
                                              for r in rules):
            raise bad("rules_off", f"a list of rule ids ({', '.join(RULES)})")
        changes["disabled_rules"] = tuple(rules)
    if "monte_carlo_samples" in data:
        value = data["monte_carlo_samples"]
        if isinstance(value, bool) or not isinstance(value, int) or not 0 <= value <= 1_000_000:
            raise bad("monte_carlo_samples", "a whole number from 0 to 1000000")
        changes["mc_samples"] = value
    if "estimate_missing" in data:
        if not isinstance(data["estimate_missing"], bool):
            raise bad("estimate_missing", "true or false")
        changes["estimate_missing"] = data["estimate_missing"]
    if "monte_carlo_solve" in data:
        if data["monte_carlo_solve"] not in MC_SOLVES:
            raise bad("monte_carlo_solve", " or ".join(f'"{m}"' for m in MC_SOLVES))
        changes["mc_solve"] = data["monte_carlo_solve"]
    if "seed" in data:
        seed = data["seed"]
        if isinstance(seed, bool) or not isinstance(seed, int) or not 0 <= seed <= MAX_SEED:
            raise bad("seed", f"a whole number from 0 to {MAX_SEED}")
        changes["seed"] = seed
    return replace(base, **changes, given=tuple(sorted(given)))


def _values(table: Any, bad: Any) -> dict[str, str]:
    if not isinstance(table, dict) or not all(isinstance(v, str) for v in table.values()):
        raise bad("values", 'a table of REFERENCE = "value" (like R13 = "1M")')
    for ref, text in table.items():
        read_resistance(text, f"values.{ref}", taper=True)
    return {str(ref): text for ref, text in table.items()}


def _notations(items: Any, bad: Any) -> tuple[tuple[str, str], ...]:
    expected = "an array of tables with 'match' (a regular expression) and 'value'"
    if not isinstance(items, list):
        raise bad("value_notation", expected)
    out = []
    for item in items:
        if (not isinstance(item, dict) or set(item) != {"match", "value"}
                or not all(isinstance(v, str) for v in item.values())):
            raise bad("value_notation", expected)
        try:
            re.compile(item["match"])
        except re.error as error:
            raise bad("value_notation", f"a valid regular expression ({error})") from None
        out.append((item["match"], item["value"]))
    return tuple(out)
