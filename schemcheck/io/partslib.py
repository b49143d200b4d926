"""Read the parts library: a TOML file of op-amp DC parameters.

Format (names of our own)::

    # typical and maximum at 25 °C; hot values at t_hot (°C)
    [parts."OPX-1"]
    aliases = ["OPX1A"]
    input = "bipolar"          # bipolar | jfet | cmos
    vos = { typ = "0.3mV", max = "1mV" }
    ib = { typ = "20nA", max = "80nA" }
    ios = { typ = "2nA", max = "10nA" }
    tcvos = { max = "5uV/°C" }
    ib_hot = { max = "150nA" }
    t_hot = 85
    aol = "100dB"

An entry matches a symbol by its part-number field (``MPN``, ``Part Number``) or its
value, case-insensitively, or by one of its aliases.
"""

from __future__ import annotations

import os
from typing import Any

from schemcheck.engine.params import ParameterError, from_library
from schemcheck.io.files import read_text, toml_document, toml_error

_ENTRY_KEYS = {"aliases", "input", "vos", "ib", "ios", "tcvos", "ib_hot", "ios_hot", "t_hot",
               "aol", "ib_either_sign", "description", "rule", "measured"}


def load_parts_library(path: str | os.PathLike[str]) -> dict[str, dict[str, Any]]:
    """The ``parts`` table of the library at ``path``, every entry checked."""
    name = os.fspath(path)
    text = read_text(name)
    data = toml_document(text, name, "a TOML parts library")
    parts = data.get("parts", {})
    if not isinstance(parts, dict):
        raise toml_error("expected a [parts] table of entries", name, text, (), "parts")
    for entry_name, entry in parts.items():
        if not isinstance(entry, dict):
            raise toml_error(f"expected [parts.\"{entry_name}\"] to be a table", name, text,
                             ("parts",), entry_name)
        unknown = sorted(set(entry) - _ENTRY_KEYS)
        if unknown:
            raise toml_error(f"parts.\"{entry_name}\": unknown key {unknown[0]!r} (expected one "
                             f"of {', '.join(sorted(_ENTRY_KEYS))})", name, text,
                             ("parts", entry_name), unknown[0])
        try:
            from_library(entry_name, entry)
        except ParameterError as error:
            raise toml_error(str(error), name, text, ("parts", entry_name), error.key) from None
    return parts
