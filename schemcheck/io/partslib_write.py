"""Write or update one entry of the parts library, keeping the rest of the file and
its comments as they are (tomlkit edits the document in place)."""

from __future__ import annotations

import difflib
import os
from typing import Any

import tomlkit

from schemcheck.errors import ParseError
from schemcheck.io.files import read_text, write_text
from schemcheck.units import format_si


def _value(value: float, unit: str) -> str:
    return format_si(value, unit, digits=4).replace(" ", "")


def entry_table(values: dict, rule: str, measured: str):
    """The TOML table of one measured part."""
    table = tomlkit.table()
    table.add(tomlkit.comment("measured on the bench by schemcheck bench"))
    typ, mx = values["vos"]
    table["vos"] = {"typ": _value(typ, "V"), "max": _value(mx, "V")}
    typ, mx = values["ib"]
    sign = "±" if values["ib_either_sign"] else ""
    table["ib"] = {"typ": sign + _value(typ, "A"), "max": sign + _value(mx, "A")}
    table["ib_either_sign"] = bool(values["ib_either_sign"])
    typ, mx = values["ios"]
    table["ios"] = {"typ": _value(typ, "A"), "max": _value(mx, "A")}
    if "tcvos" in values:
        typ, mx = values["tcvos"]
        table["tcvos"] = {"typ": _value(typ, "V") + "/°C", "max": _value(mx, "V") + "/°C"}
    if "ib_hot" in values:
        table["ib_hot"] = {"max": _value(values["ib_hot"][1], "A")}
        table["ios_hot"] = {"max": _value(values["ios_hot"][1], "A")}
        table["t_hot"] = values["t_hot"]
    table["rule"] = rule
    table["measured"] = measured
    for key in list(table.keys()):
        if isinstance(table[key], dict):
            inline = tomlkit.inline_table()
            inline.update(table[key])
            table[key] = inline
    return table


def updated_library(path: str, part: str, values: dict, rule: str, measured: str,
                    input_type: str | None = None) -> tuple[str, str]:
    """(old text, new text) of the library at ``path`` with entry ``part`` written.
    Keys of an existing entry that the bench does not measure (input, aol, aliases,
    description) are kept."""
    old = read_text(path) if os.path.exists(path) else ""
    try:
        document = tomlkit.parse(old)
    except tomlkit.exceptions.ParseError as error:
        raise ParseError(f"expected a TOML parts library: {error}", file=path) from None
    parts = document.get("parts")
    if parts is None:
        parts = tomlkit.table(is_super_table=True)
        document["parts"] = parts
    fresh = entry_table(values, rule, measured)
    existing = parts.get(part)
    if existing is None:
        if input_type:
            fresh["input"] = input_type
        parts[part] = fresh
    else:
        # measured keys replace the old ones whole (with their comments, which spoke of
        # the old figures); the keys the bench does not measure stay as they are
        for key in ("vos", "ib", "ib_either_sign", "ios", "tcvos", "ib_hot", "ios_hot", "t_hot",
                    "rule", "measured"):
            if key in existing:
                del existing[key]
        for key in ("vos", "ib", "ib_either_sign", "ios", "tcvos", "ib_hot", "ios_hot", "t_hot",
                    "rule", "measured"):
            if key in fresh:
                existing[key] = fresh[key]
    return old, tomlkit.dumps(document)


def write_library(path: str, text: str) -> None:
    write_text(path, text)


def diff(old: str, new: str, path: str) -> str:
    return "".join(difflib.unified_diff(old.splitlines(True), new.splitlines(True),
                                        fromfile=path, tofile=f"{path} (updated)"))


SKELETON_HEADER = (
    "Parts library written by schemcheck parts skeleton: one entry per op-amp part number",
    "that had no DC data. Fill the figures from each part's datasheet, at 25 °C unless said:",
    "typ = the typical value, max = the guaranteed maximum magnitude. \"\" means not given.",
    "Where only typ is known, the audit uses it and marks it \"typical only\".",
    "Units: vos V (0.5mV, 50uV); ib, ios A (20nA, 5pA; a leading ± for either polarity);",
    "tcvos V/°C (3uV/°C); ib_hot, ios_hot A at t_hot (°C).",
)


def skeleton_entry(part: dict[str, Any]) -> tomlkit.items.Table:
    """The commented TOML table of one missing part (``part``: one row of
    :func:`schemcheck.run.parts.missing_parts`)."""
    from schemcheck.partdata import FIGURES, INPUT_TYPES

    table = tomlkit.table()
    uses = part["used_by"]
    for use in uses[:5]:
        table.add(tomlkit.comment(f"used by {', '.join(use['units'])} in {use['design']}"))
    if len(uses) > 5:
        table.add(tomlkit.comment(f"and in {len(uses) - 5} more designs"))
    how = f"matched by its {part['field']}"
    if part["other_keys"]:
        how += f" (also carries {', '.join(part['other_keys'])})"
    table.add(tomlkit.comment(how))
    if part["family"].casefold() != part["part"].casefold():
        table.add(tomlkit.comment(f"family key {part['family']}: an entry named "
                                  f"\"{part['family']}\" would match every part number of "
                                  "the family (grades too)"))
    if part.get("ambiguous"):
        table.add(tomlkit.comment(f"the library has {', '.join(part['ambiguous'])} of its "
                                  "family: if one has the same figures, add this part number "
                                  "to its aliases instead"))
    if part.get("description"):
        table.add(tomlkit.comment(f"symbol description: {part['description']}"))
    table.add("description", "")
    table.add("input", part.get("input") or "")
    table["input"].comment(" | ".join(INPUT_TYPES)
                           + ("  (from the symbol: check it)" if part.get("input") else ""))
    for name, figure in FIGURES.items():
        limits = tomlkit.inline_table()
        limits.update({"typ": "", "max": ""})
        table.add(name, limits)
        table[name].comment(f"{figure.meaning}, {figure.unit} (like \"{figure.example}\")")
    table.add(tomlkit.comment("t_hot = 85  # °C at which ib_hot and ios_hot apply"))
    table.add(tomlkit.comment("aliases = []  # other part numbers with the same figures"))
    return table


def skeleton_library(path: str | None, parts: list[dict[str, Any]]) -> tuple[str, str, list[str],
                                                                            list[str]]:
    """(old text, new text, entries added, entries already present) of the library at
    ``path`` (None or a missing file: a new library) with one skeleton entry per part
    not already named there (by an entry name or alias, case-insensitively). The rest of
    the file and its comments are kept."""
    from tomlkit.items import KeyType, SingleKey

    old = read_text(path) if path and os.path.exists(path) else ""
    try:
        document = tomlkit.parse(old)
    except tomlkit.exceptions.ParseError as error:
        raise ParseError(f"expected a TOML parts library: {error}", file=path) from None
    if not old.strip():
        for line in SKELETON_HEADER:
            document.add(tomlkit.comment(line))
        document.add(tomlkit.nl())
    table = document.get("parts")
    if table is None:
        table = tomlkit.table(is_super_table=True)
        document["parts"] = table
    known: set[str] = set()
    for name, entry in table.items():
        known.add(str(name).casefold())
        for alias in (entry.get("aliases", []) if isinstance(entry, dict) else []):
            known.add(str(alias).casefold())
    added, present = [], []
    for part in parts:
        if part["part"].casefold() in known:
            present.append(part["part"])
            continue
        known.add(part["part"].casefold())
        table.add(SingleKey(part["part"], t=KeyType.Basic), skeleton_entry(part))
        added.append(part["part"])
    return old, tomlkit.dumps(document), added, present
