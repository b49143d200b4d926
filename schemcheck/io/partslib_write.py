"""Write or update one entry of the parts library, keeping the rest of the file and
its comments as they are (tomlkit edits the document in place)."""

from __future__ import annotations

import difflib
import os

import tomlkit

from schemcheck.errors import ParseError
from schemcheck.units import format_si
from schemcheck.io.files import read_text, write_text


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
