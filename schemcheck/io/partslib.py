"""Read the parts library: a TOML file of op-amp DC parameters, every entry validated.

The format is documented in the README (section "Parts library"). In short::

    [parts."LX1612"]
    description = "JFET-input op-amp (invented)"
    aliases = ["LX1612-S"]
    input = "jfet"             # bipolar | bipolar-compensated | jfet | cmos | chopper
    vos = { typ = "0.5mV", max = "2mV" }
    ib = { typ = "10pA", max = "50pA" }
    ios = "25pA"               # a bare value is the maximum
    tcvos = { typ = "3uV/°C" } # typical only: used, and marked so in every report
    ib_hot = { max = "5nA" }
    t_hot = 85                 # °C at which the hot values apply
    aol = "110dB"

The reader returns the entries as written (strings as in the file) once they have been
checked; turning them into numbers for the engine is
:func:`schemcheck.engine.params.from_library`'s job. An empty string means "not given"
(what ``schemcheck parts skeleton`` writes for figures still to be filled).
"""

from __future__ import annotations

import os
import re
from typing import Any, TypedDict

from schemcheck.errors import ParseError
from schemcheck.io.files import read_text, toml_document
from schemcheck.partdata import ENTRY_KEYS, FIGURES, INPUT_TYPES, LIMIT_KEYS, parse_figure
from schemcheck.units import HOTTEST_C, ValueFormatError, format_si, parse_gain

USER_LIBRARY_NAME = "parts.toml"


def user_library_path() -> str:
    """Where the user-level (team) library lives: ``parts.toml`` in the user config
    folder (platformdirs; on Linux ``$XDG_CONFIG_HOME/schemcheck/parts.toml``)."""
    from platformdirs import user_config_dir

    return os.path.join(user_config_dir("schemcheck", appauthor=False), USER_LIBRARY_NAME)


def load_parts_library(path: str | os.PathLike[str]) -> dict[str, dict[str, Any]]:
    """The ``parts`` table of the library at ``path``, every entry checked.

    Raises :class:`ParseError` naming the file, the line where it can be found, the
    entry and the key, and what was expected."""
    name = os.fspath(path)
    text = read_text(name)
    data = toml_document(text, name, "a TOML parts library")
    unknown = sorted(set(data) - {"parts"})
    if unknown:
        raise ParseError(f"unknown top-level key {unknown[0]!r} (expected [parts.\"NAME\"] "
                         "tables)", file=name, **_where(text, None, unknown[0]))
    parts = data.get("parts", {})
    if not isinstance(parts, dict):
        raise ParseError("expected a [parts] table of entries", file=name)
    claimed: dict[str, str] = {}
    for entry_name, entry in parts.items():
        if not isinstance(entry, dict):
            raise ParseError(f"expected [parts.\"{entry_name}\"] to be a table", file=name,
                             **_where(text, None, entry_name))
        problem = entry_problem(entry_name, entry)
        if problem is not None:
            key, message = problem
            raise ParseError(f"entry {entry_name!r}{f', key {key!r}' if key else ''}: {message}",
                             file=name, **_where(text, entry_name, key))
        for alias in [entry_name, *entry.get("aliases", ())]:
            other = claimed.get(alias.casefold())
            if other is not None and other != entry_name:
                raise ParseError(f"entry {entry_name!r}, key 'aliases': {alias!r} already names "
                                 f"entry {other!r} (each name or alias must be unique)",
                                 file=name, **_where(text, entry_name, "aliases"))
            claimed[alias.casefold()] = entry_name
    return parts


def entry_problem(entry_name: str, entry: dict[str, Any]) -> tuple[str | None, str] | None:
    """The first problem of one entry as (key, message), or None when it is valid."""
    unknown = sorted(set(entry) - set(ENTRY_KEYS))
    if unknown:
        return unknown[0], f"unknown key (expected one of {', '.join(ENTRY_KEYS)})"
    for name in FIGURES:
        if name in entry:
            problem = _figure_problem(name, entry[name])
            if problem is not None:
                return problem
    if "input" in entry:
        value = entry["input"]
        if not isinstance(value, str) or (value.strip() and value.strip().lower()
                                          not in INPUT_TYPES):
            return "input", f"expected {' | '.join(INPUT_TYPES)}, found {value!r}"
    if "aliases" in entry:
        aliases = entry["aliases"]
        if not isinstance(aliases, list) or not all(isinstance(a, str) and a.strip()
                                                    for a in aliases):
            return "aliases", f"expected a list of part numbers, found {aliases!r}"
    if "t_hot" in entry:
        value = entry["t_hot"]
        if value != "" and (isinstance(value, bool) or not isinstance(value, (int, float))
                            or not 25 < value <= HOTTEST_C):
            return "t_hot", (f"expected a temperature in °C above 25 and at most "
                             f"{HOTTEST_C:g} (like 85), found {value!r}")
    if "aol" in entry and entry["aol"] != "":
        try:
            parse_gain(str(entry["aol"]))
        except ValueFormatError as error:
            return "aol", str(error)
    if "ib_either_sign" in entry and not isinstance(entry["ib_either_sign"], bool):
        return "ib_either_sign", f"expected true or false, found {entry['ib_either_sign']!r}"
    for key in ("description", "rule", "measured"):
        if key in entry and not isinstance(entry[key], str):
            return key, f"expected a string, found {entry[key]!r}"
    return None


def _figure_problem(name: str, raw: Any) -> tuple[str, str] | None:
    limits = raw if isinstance(raw, dict) else {"max": raw}
    unknown = sorted(set(limits) - set(LIMIT_KEYS))
    if unknown:
        return name, f"unknown key {unknown[0]!r} (expected typ, max)"
    values: dict[str, float] = {}
    for limit, text in limits.items():
        key = f"{name}.{limit}" if isinstance(raw, dict) else name
        if isinstance(text, bool) or not isinstance(text, (str, int, float)):
            return key, f"expected a value like {FIGURES[name].example!r}, found {text!r}"
        if text == "":
            continue
        try:
            values[limit] = abs(parse_figure(name, str(text), name).value)
        except ValueFormatError as error:
            return key, str(error)
    if "typ" in values and "max" in values and values["max"] < values["typ"]:
        unit = FIGURES[name].unit
        return name, (f"max ({format_si(values['max'], unit)}) is below typ "
                      f"({format_si(values['typ'], unit)})")
    return None


def _header_pattern(entry_name: str) -> re.Pattern[str]:
    quoted = re.escape(entry_name)
    return re.compile(r'^\s*\[\s*parts\s*\.\s*(?:"' + quoted + r'"|\'' + quoted + r'\'|'
                      + quoted + r')\s*\]')


class _Where(TypedDict):
    """The ``line`` and ``column`` keywords of a :class:`ParseError`."""

    line: int | None
    column: int | None


def _where(text: str, entry_name: str | None, key: str | None) -> _Where:
    """``line`` and ``column`` (1-based) of ``key`` in entry ``entry_name``, for an error."""
    line = _key_line(text, entry_name, key)
    if line is None:
        return {"line": None, "column": None}
    row = text.splitlines()[line - 1]
    return {"line": line, "column": len(row) - len(row.lstrip()) + 1}


def _key_line(text: str, entry_name: str | None, key: str | None) -> int | None:
    """Best-effort line of ``key`` in entry ``entry_name`` (or of the entry's header)."""
    lines = text.splitlines()
    start = 0
    if entry_name is not None:
        header = _header_pattern(entry_name)
        for number, line in enumerate(lines):
            if header.match(line):
                start = number
                break
        else:
            return None
        if key is None:
            return start + 1
    if key is None:
        return None
    head = key.split(".")[0]
    pattern = re.compile(r'^\s*(?:"' + re.escape(head) + r'"|' + re.escape(head) + r')\s*[.=]')
    for number in range(start + (1 if entry_name is not None else 0), len(lines)):
        if entry_name is not None and number > start and lines[number].lstrip().startswith("["):
            break
        if pattern.match(lines[number]):
            return number + 1
    return start + 1 if entry_name is not None else None


