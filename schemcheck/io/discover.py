"""Find the designs under the paths a user gives: files, project folders, folders of
many projects (recursing). A design is a root sheet and every child sheet it uses (as
:mod:`schemcheck.io.resolve` decides), or a netlist exported by the schematic editor;
the root is the sheet no other sheet references, or the one a ``.kicad_pro`` beside it
names (same stem). Child sheets are audited once, through their root; a netlist beside
a schematic of the same stem is its export, not audited twice.
"""

from __future__ import annotations

import os
from collections.abc import Callable
from dataclasses import dataclass

from schemcheck.errors import ParseError
from schemcheck.io.files import check_allowed, regular_file
from schemcheck.io.resolve import (
    child_names,
    child_sheet,
    normalised,
    read_small,
    sheet_files,
    sheet_names,
)

DESIGN_SUFFIXES = (".kicad_sch", ".net", ".xml")
NETLIST_SUFFIXES = (".net", ".xml")


@dataclass(frozen=True, slots=True)
class DesignRef:
    """A design to audit: its root file and every file it is made of."""

    root: str
    files: tuple[str, ...]


def referenced_sheets(path: str, names: Callable[[str], list[str]] = child_names
                      ) -> list[str]:
    """Child sheet files named in ``path`` that exist, resolved as the reader resolves
    them (:func:`schemcheck.io.resolve.child_sheet`), the sheet taken as a root."""
    base = os.path.dirname(normalised(path))
    found = (child_sheet(name, base, base) for name in names(path))
    return [child for child in found if child is not None]


def named_sheets(path: str) -> list[str]:
    """Child sheet files named in ``path``, as paths beside it, whether they exist or not
    (a sheet deleted while still referenced is still one of the design's inputs)."""
    base = os.path.dirname(normalised(path))
    return [normalised(os.path.join(base, name.replace("\\", "/")))
            for name in sheet_names(read_small(path))]


def _allowed_child(written: str, candidate: str, parent: str) -> None:
    # refused before it is looked at when the run is confined (the service)
    check_allowed(candidate, "child sheet file", reference=written, file=parent)


def design_files(root: str, names: Callable[[str], list[str]] = child_names
                 ) -> tuple[str, ...]:
    """The root and, recursively, the child sheets it uses (existing ones); a child sheet
    outside what the run may read is refused (:class:`PathNotAllowedError`) unread."""
    return sheet_files(root, _allowed_child, names)


def _read_once() -> Callable[[str], list[str]]:
    """:func:`child_names` remembered: one search reads each sheet once (it looked at
    each three or four times: which sheets are roots, and each design's files)."""
    known: dict[str, list[str]] = {}

    def names(path: str) -> list[str]:
        found = known.get(path)
        if found is None:
            found = known[path] = child_names(path)
        return found

    return names


def find_designs(paths: list[str]) -> tuple[list[DesignRef], list[ParseError]]:
    """Designs under ``paths`` (sorted, each once) and the paths that hold none: a path
    that does not exist, or a folder with no schematic or exported netlist in it."""
    problems: list[ParseError] = []
    roots: list[str] = []
    names = _read_once()
    for path in paths:
        if os.path.isfile(path):
            roots.append(normalised(path))
        elif os.path.isdir(path):
            found = _roots_in_folder(path, names)
            if not found:
                problems.append(ParseError(
                    "expected a KiCad schematic (.kicad_sch) or a netlist exported by the "
                    "schematic editor (.net, .xml) in this folder or below it, found none",
                    file=path))
            roots.extend(found)
        elif os.path.exists(path):  # a device, FIFO or socket: say what it is
            try:
                regular_file(path, "design file or a folder")
            except ParseError as error:
                problems.append(error)
        else:
            problems.append(ParseError("expected a design file or a folder, found nothing "
                                       "(no such file or folder)", file=path))
    unique = list(dict.fromkeys(roots))
    return [DesignRef(root, design_files(root, names)) for root in unique], problems


def is_exported_netlist(path: str) -> bool:
    """Whether ``path`` starts like a netlist the schematic editor exports: ``(export``
    (S-expression ``.net``) or an XML document whose root is ``<export``."""
    head = read_small(path)[:4096]  # never opens a FIFO or a device
    head = head.removeprefix(b"\xef\xbb\xbf").lstrip()
    if path.endswith(".net"):
        return head.startswith(b"(export")
    return head.startswith(b"<") and b"<export" in head


def _roots_in_folder(folder: str, names: Callable[[str], list[str]] = child_names
                     ) -> list[str]:
    """Root sheets and exported netlists under ``folder``, in folder order. A netlist
    beside a schematic of the same name is that schematic's export: not audited twice."""
    found: list[str] = []
    sheets: list[str] = []
    projects: set[str] = set()
    for directory, subdirs, files in os.walk(folder):
        subdirs[:] = sorted(d for d in subdirs if not d.startswith("."))
        schematics = {name for name in files if name.endswith(".kicad_sch")}
        for name in sorted(files):
            full = normalised(os.path.join(directory, name))
            if name.endswith(".kicad_sch"):
                sheets.append(full)
                found.append(full)
            elif name.endswith(".kicad_pro"):
                projects.add(full[: -len(".kicad_pro")] + ".kicad_sch")
            elif name.endswith(NETLIST_SUFFIXES):
                exported_from = os.path.splitext(name)[0] + ".kicad_sch"
                if exported_from not in schematics and is_exported_netlist(full):
                    found.append(full)
    children = {sheet: referenced_sheets(sheet, names) for sheet in sheets}
    referenced = {child for named in children.values() for child in named}
    candidates = {s for s in sheets if s not in referenced or s in projects}
    # A child found only through its root's folder is part of that root's design too.
    used = {child for root in candidates for child in sheet_files(root, names=names)[1:]}
    roots = {s for s in candidates if s not in used or s in projects}
    # Sheets no root reaches form loops (A -> B -> A, a sheet placing itself). Each loop
    # is audited through its first sheet, whose audit names the loop, instead of the
    # folder silently holding no design.
    reached: set[str] = set()
    for root in [s for s in sheets if s in roots]:
        reached.update(sheet_files(root, names=names))
    for sheet in sheets:
        if sheet in reached:
            continue
        roots.add(sheet)
        pending = [sheet]
        while pending:
            current = pending.pop()
            if current not in reached:
                reached.add(current)
                pending.extend(c for c in children.get(current, ()) if c not in reached)
    return [f for f in found if f in roots or not f.endswith(".kicad_sch")]

