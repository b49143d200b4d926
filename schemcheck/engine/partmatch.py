"""Which parts-library entry describes a placed op-amp (pure).

Order of the keys tried, each against entry names and ``aliases`` (case-insensitively):

1. the symbol's Value (unless empty or ``~``);
2. a part-number field: ``MPN``, ``Part Number``, ``PartNumber``, ``Part_Number``,
   ``Manufacturer_Part_Number``, ``Manufacturer Part Number`` (field names matched
   case-insensitively);
3. the symbol name of the lib_id (``Lib:LX1612`` -> ``LX1612``), only when the Value is
   empty or ``~``;
4. the family: each of those keys is shortened one ordering-code suffix at a time,
   following :data:`SUFFIX_TABLE`, and every shorter form is tried (the longest first).
   An entry thus applies to every longer part number of its family, never the other way
   round.

When no key matches but entries of the library share the part's family (their names
shorten to the same root, like ``LX1612A`` and ``LX1612B`` for ``LX1612CD``), or two
keys of one part reach different entries by family, the match is ambiguous: nothing is
used and the audit warns (rule ``ambiguous-part-match``).

Libraries are layered: entries of a later library replace same-named entries of an
earlier one, and its names and aliases win over theirs.
"""

from __future__ import annotations

import re
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

from schemcheck.model import Part

PART_NUMBER_FIELDS = ("MPN", "Part Number", "PartNumber", "Part_Number",
                      "Manufacturer_Part_Number", "Manufacturer Part Number")

#: Ordering-code suffixes, stripped from the end of a part number in this order (each
#: stage repeatable where marked). Common practice of op-amp ordering codes; the table
#: and its names are ours. Letters match case-insensitively; ``x`` stands for a grade or
#: temperature letter left open (``LX1612AxD``).
SUFFIX_TABLE: tuple[tuple[str, str, bool, str], ...] = (
    # (stage, regular expression at the end, repeatable, examples)
    ("reel or packing", r"[/\-#,](?:T&R|TR|T|REEL\d*|RL\d*|R\d+|PBF|NOPB|LF|G4|E4)$|\+$",
     True, "/TR, -REEL7, -RL, #PBF, /NOPB, +"),
    ("reel after a package code", r"(?<=[A-Z])[RT]$", False, "the R of DR, DGKR"),
    ("package", r"(?:DBV|DCK|DGK|DDA|DRB|DB|DW|PW|SO|D|N|P|S|M|Z)$", False,
     "D, DR, DGK, DBV, PW, N, P, S, SO, M, Z"),
    ("temperature range", r"[CIEMX]$", False, "C, I, E, M, x"),
    ("grade", r"[ABC]$", False, "A, B, C"),
)
_COMPILED = [(stage, re.compile(pattern, re.IGNORECASE), repeat)
             for stage, pattern, repeat, _ in SUFFIX_TABLE]
_FIRST_DIGITS = re.compile(r"\d+")


def family_chain(key: str) -> list[str]:
    """``key`` and its shorter forms, one suffix stripped at a time (``LX1612AIDR`` ->
    ``LX1612AIDR, LX1612AID, LX1612AI, LX1612A, LX1612``). Nothing is stripped from a
    key without digits, nor from its first run of digits or what comes before it."""
    text = key.strip()
    chain = [text]
    digits = _FIRST_DIGITS.search(text)
    if digits is None:
        return chain
    keep = digits.end()
    for _, pattern, repeat in _COMPILED:
        while True:
            match = pattern.search(text)
            if match is None or match.start() < keep or match.start() == 0:
                break
            text = text[:match.start()]
            chain.append(text)
            if not repeat:
                break
    return chain


def family(key: str) -> str:
    """The family root of a part number: :func:`family_chain`'s shortest form."""
    return family_chain(key)[-1]


@dataclass(frozen=True, slots=True)
class LibrarySource:
    """One library read: ``origin`` (``user``, ``project``, ``command line``), the path as
    shown in reports, and how many entries it holds."""

    origin: str
    path: str
    entries: int

    def to_dict(self) -> dict[str, Any]:
        return {"origin": self.origin, "path": self.path, "entries": self.entries}


@dataclass(slots=True)
class PartsLibrary:
    """Validated entries of one or more libraries, layered (later ones win), indexed by
    name and alias."""

    entries: dict[str, Mapping[str, Any]] = field(default_factory=dict)
    origin: dict[str, LibrarySource | None] = field(default_factory=dict)
    sources: list[LibrarySource] = field(default_factory=list)
    #: folded name or alias -> (entry name, the name or alias as written)
    index: dict[str, tuple[str, str]] = field(default_factory=dict)
    _canonical: dict[str, str] = field(default_factory=dict)
    _families: dict[str, set[str]] | None = None

    @classmethod
    def layered(cls, layers: Iterable[tuple[LibrarySource | None,
                                            Mapping[str, Mapping[str, Any]]]]) -> PartsLibrary:
        library = cls()
        for source, entries in layers:
            library.add(entries, source)
        return library

    @classmethod
    def of(cls, library: PartsLibrary | Mapping[str, Mapping[str, Any]] | None) -> PartsLibrary:
        """``library`` as a :class:`PartsLibrary` (a plain mapping is one unnamed layer)."""
        if isinstance(library, PartsLibrary):
            return library
        return cls.layered([(None, library or {})])

    def add(self, entries: Mapping[str, Mapping[str, Any]], source: LibrarySource | None) -> None:
        """Lay ``entries`` over what is there."""
        self._families = None
        if source is not None:
            self.sources.append(source)
        for name, entry in entries.items():
            old = self._canonical.get(name.casefold())
            if old is not None and old != name:
                del self.entries[old]
                self.origin.pop(old, None)
                for key, (target, written) in list(self.index.items()):
                    if target == old:
                        self.index[key] = (name, written)
            self._canonical[name.casefold()] = name
            self.entries[name] = entry
            self.origin[name] = source
        for name, entry in entries.items():
            for alias in entry.get("aliases", ()) or ():
                self.index[str(alias).strip().casefold()] = (name, str(alias).strip())
        for name in entries:
            self.index[name.casefold()] = (name, name)

    def lookup(self, key: str) -> tuple[str, str] | None:
        """(entry name, name or alias as written) for ``key``, or None."""
        return self.index.get(key.strip().casefold())

    def family_members(self, root: str) -> list[str]:
        """Entries whose name or an alias has the family root ``root``."""
        if self._families is None:
            self._families = {}
            for target, written in self.index.values():
                self._families.setdefault(family(written).casefold(), set()).add(target)
        return sorted(self._families.get(root.casefold(), ()))

    def __len__(self) -> int:
        return len(self.entries)

    def __bool__(self) -> bool:
        return bool(self.entries)


@dataclass(frozen=True, slots=True)
class Match:
    """How a part found its entry. ``by``: ``value``, ``part-number``, ``lib_id``,
    ``family``; ``field``: where the key came from (``Value``, the part-number field's
    name, ``lib_id``); ``key``: the key as written on the symbol; ``matched``: the entry
    name or alias it met (a shortened form for a family match)."""

    entry: str
    by: str
    field: str
    key: str
    matched: str
    library: str | None = None

    @property
    def via_alias(self) -> bool:
        return self.matched.casefold() != self.entry.casefold()

    def describe(self) -> str:
        """``library:LX1612`` plus how it was found (nothing added for a Value equal to
        the entry's name)."""
        where = "" if self.field == "Value" else (
            "lib_id symbol " if self.field == "lib_id" else f"{self.field} ")
        alias = f" (alias {self.matched})" if self.via_alias else ""
        if self.by == "family":
            how = f" via family of {where}{self.key}{alias}"
        elif self.by == "value" and not self.via_alias:
            how = ""
        elif self.by == "value":
            how = f" via alias {self.matched}"
        else:
            how = f" via {where}{self.key}{alias}"
        return f"library:{self.entry}{how}"

    def to_dict(self) -> dict[str, Any]:
        return {"entry": self.entry, "by": self.by, "field": self.field, "key": self.key,
                "matched": self.matched, "library": self.library}


@dataclass(frozen=True, slots=True)
class Ambiguity:
    """No entry used because several fit: ``candidates`` entry names, ``reason`` for people."""

    key: str
    candidates: tuple[str, ...]
    reason: str


def match_keys(part: Part) -> list[tuple[str, str, str]]:
    """(by, field, key) in the order they are tried."""
    keys: list[tuple[str, str, str]] = []
    value = (part.value or "").strip()
    usable_value = value not in ("", "~")
    if usable_value:
        keys.append(("value", "Value", value))
    for name in PART_NUMBER_FIELDS:
        text = part.field(name)
        if text and text.strip() and text.strip() != "~":
            keys.append(("part-number", name, text.strip()))
    if not usable_value and ":" in part.lib_id:
        symbol = part.lib_id.split(":", 1)[1].strip()
        if symbol:
            keys.append(("lib_id", "lib_id", symbol))
    return keys


def match_part(part: Part, library: PartsLibrary) -> tuple[Match | None, Ambiguity | None]:
    """The entry for ``part`` (see the module's docstring), or why none was chosen."""
    if not library:
        return None, None
    keys = match_keys(part)
    for by, field_name, key in keys:
        hit = library.lookup(key)
        if hit is not None:
            return _match(library, hit, by, field_name, key), None
    by_family: list[Match] = []
    for _, field_name, key in keys:
        for shorter in family_chain(key)[1:]:
            hit = library.lookup(shorter)
            if hit is not None:
                by_family.append(_match(library, hit, "family", field_name, key))
                break
    entries = sorted({m.entry for m in by_family})
    if len(entries) == 1:
        return by_family[0], None
    if len(entries) > 1:
        described = ", ".join(f"{m.field} {m.key} by family to {m.entry}" for m in by_family)
        return None, Ambiguity(keys[0][2], tuple(entries), f"its keys lead to different "
                               f"entries ({described})")
    for _, _, key in keys:
        root = family(key)
        members = library.family_members(root)
        if members:
            listed = " or ".join(members) if len(members) <= 2 else (
                ", ".join(members[:-1]) + " or " + members[-1])
            kind = "another variant" if len(members) == 1 else "other variants"
            return None, Ambiguity(key, tuple(members), f"by its family {root} it could be "
                                   f"{listed} ({kind}, whose figures may not apply)")
    return None, None


def _match(library: PartsLibrary, hit: tuple[str, str], by: str, field_name: str,
           key: str) -> Match:
    entry, written = hit
    source = library.origin.get(entry)
    return Match(entry, by, field_name, key, written, source.path if source else None)


def sources_line(sources: Sequence[LibrarySource]) -> str:
    """The report's line listing the libraries read."""
    listed = "; ".join(f"{s.origin} {s.path} ({s.entries} "
                       f"entr{'y' if s.entries == 1 else 'ies'})" for s in sources)
    return f"parts libraries read (a later one wins): {listed}"
