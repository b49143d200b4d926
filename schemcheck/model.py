"""The connectivity model every later stage reads: parts, their pins, and nets.

Frozen, slotted dataclasses; coordinates never appear here (they stay in the reader).
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field
from functools import lru_cache
from typing import Any

_DIGITS = re.compile(r"(\d+)")


@lru_cache(maxsize=65536)
def natural_key(text: str) -> tuple[Any, ...]:
    """Sort key that orders ``R2`` before ``R10``."""
    return tuple(int(part) if part.isdigit() else part for part in _DIGITS.split(text))


@dataclass(frozen=True, slots=True)
class Pin:
    """One pin of a placed symbol unit.

    ``number`` is the pad number as drawn; ``name`` the pin name (``+``, ``IN-``, ``~``);
    ``electrical_type`` KiCad's pin type (``input``, ``output``, ``power_in``, ``passive``,
    ...); ``unit`` the symbol unit the pin belongs to (0: common to every unit).
    """

    number: str
    name: str
    electrical_type: str
    unit: int = 0
    hidden: bool = False


@dataclass(frozen=True, slots=True)
class Part:
    """One placed symbol unit of one sheet instance (a dual op-amp drawn as two units is
    two Parts with the same reference)."""

    ref: str
    unit: int
    value: str
    lib_id: str
    sheet: str
    fields: dict[str, str] = field(default_factory=dict, hash=False, compare=True)
    pins: tuple[Pin, ...] = ()
    dnp: bool = False
    exclude_from_sim: bool = False
    in_bom: bool = True
    body_style: int = 1
    unit_count: int = 1
    description: str = ""
    keywords: str = ""
    is_power: bool = False
    source_file: str = ""
    uuid: str = ""
    _folded: dict[str, str] | None = field(default=None, compare=False, repr=False)

    def field(self, name: str, default: str | None = None) -> str | None:
        """The field ``name``, matched case-insensitively."""
        folded = self._folded
        if folded is None:
            folded = {}
            for key, value in self.fields.items():
                folded.setdefault(key.casefold(), value)
            object.__setattr__(self, "_folded", folded)
        return folded.get(name.casefold(), default)


@dataclass(frozen=True, slots=True, order=True)
class Node:
    """A pin of a part on a net."""

    ref: str
    pin: str


@dataclass(frozen=True, slots=True)
class Net:
    """A set of connected pins. ``name`` follows the rules in ``connectivity.py``;
    ``named`` is False for a generated name; ``is_global`` for power and global nets."""

    name: str
    nodes: tuple[Node, ...]
    named: bool = True
    is_global: bool = False
    labels: tuple[str, ...] = ()
    #: what gave the name: "power", "global_label", "label", "hierarchical_label", "" (none)
    kind: str = ""


@dataclass(frozen=True, slots=True)
class Netlist:
    """Nets and parts of a whole design (all sheet instances)."""

    nets: tuple[Net, ...]
    parts: tuple[Part, ...]
    source: str = ""
    format: str = ""
    version: str = ""
    files: tuple[str, ...] = ()
    warnings: tuple[str, ...] = ()
    #: files of the design that could not be read, one located message each
    errors: tuple[str, ...] = ()
    #: where each of ``errors`` is: (file, line, column), line and column 1-based or None
    error_locations: tuple[tuple[str, int | None, int | None], ...] = ()

    def to_dict(self) -> dict[str, Any]:
        """The ``schemcheck netlist --format json`` shape."""
        return {
            "source": self.source,
            "format": self.format,
            "version": self.version,
            "files": list(self.files),
            "nets": [
                {
                    "name": net.name,
                    "nodes": [{"ref": n.ref, "pin": n.pin} for n in net.nodes],
                }
                for net in self.nets
            ],
            "parts": [
                {
                    "ref": p.ref,
                    "unit": p.unit,
                    "value": p.value,
                    "lib_id": p.lib_id,
                    "sheet": p.sheet,
                    "fields": dict(p.fields),
                    "dnp": p.dnp,
                    "exclude_from_sim": p.exclude_from_sim,
                    "pins": [
                        {"number": q.number, "name": q.name, "type": q.electrical_type,
                         "hidden": q.hidden}
                        for q in p.pins
                    ],
                }
                for p in self.parts
            ],
            "warnings": list(self.warnings),
            "errors": list(self.errors),
        }

    def net_of(self, ref: str, pin: str) -> Net | None:
        """The net holding pin ``pin`` of ``ref``, or None."""
        for net in self.nets:
            for node in net.nodes:
                if node.ref == ref and node.pin == pin:
                    return net
        return None


SEVERITIES = ("info", "warning", "error")


@dataclass(frozen=True, slots=True)
class Finding:
    """One design defect or observation. ``rule`` ids are part of the interface."""

    rule: str
    severity: str  # "info", "warning", "error"
    ref: str
    unit: int | None
    message: str
    suggestion: str = ""
    sheet: str = ""
    file: str = ""
    #: the finding's numbers as data (SI units, key names say which: ``*_v``, ``*_ohm``,
    #: ``*_a``), so a script need not parse the message
    data: dict[str, Any] = field(default_factory=dict)
    #: the amplifier within the unit where one symbol unit holds several (else None)
    channel: int | None = None
    #: the stage identifier the reports use (``U4/2``; empty for a design-wide finding)
    stage: str = ""
    #: where in ``file`` (1-based), when the finding is about a place in the text
    line: int | None = None
    column: int | None = None

    def to_dict(self) -> dict[str, Any]:
        return {"rule": self.rule, "severity": self.severity, "ref": self.ref,
                "unit": self.unit, "message": self.message, "suggestion": self.suggestion,
                "sheet": self.sheet, "file": self.file, "data": dict(self.data),
                "channel": self.channel, "stage": self.stage, "line": self.line,
                "column": self.column}
