"""Find the designs under the paths a user gives: files, project folders, folders of
many projects (recursing). A design is a root sheet and every child sheet it uses; the
root is the sheet no other sheet references, or the one a ``.kicad_pro`` beside it
names (same stem). Child sheets are audited once, through their root.
"""

from __future__ import annotations

import os
import re
from dataclasses import dataclass

from schemcheck.errors import ParseError, SchemcheckError
from schemcheck.io.files import check_allowed, read_bytes, regular_file

_SHEETFILE = re.compile(rb'\(property\s+"Sheet ?file"\s+"((?:[^"\\]|\\.)*)"')
DESIGN_SUFFIXES = (".kicad_sch", ".net", ".xml")


@dataclass(frozen=True, slots=True)
class DesignRef:
    """A design to audit: its root file and every file it is made of."""

    root: str
    files: tuple[str, ...]


def _references(path: str) -> list[tuple[str, str]]:
    """(name as written, path resolved beside ``path``) of every child sheet file named
    in ``path``, by a quick text scan. A file that cannot be read (not a regular file,
    too large, outside the confinement) names none: its own audit reports why."""
    try:
        data = read_bytes(path)
    except SchemcheckError:
        return []
    base = os.path.dirname(os.path.abspath(path))
    out = []
    for match in _SHEETFILE.finditer(data):
        written = match.group(1).decode("utf-8", "replace").replace("\\\\", "\\")
        out.append((written, os.path.normpath(os.path.join(base, written.replace("\\", "/")))))
    return out


def referenced_sheets(path: str) -> list[str]:
    """Child sheet files named in ``path`` (resolved beside it), by a quick text scan."""
    return [resolved for _, resolved in _references(path)]


def design_files(root: str) -> tuple[str, ...]:
    """The root and, recursively, the child sheets it references (existing ones)."""
    root = os.path.normpath(os.path.abspath(root))
    if not root.endswith(".kicad_sch"):
        return (root,)
    seen = [root]
    pending = [root]
    while pending:
        parent = pending.pop()
        for written, child in _references(parent):
            # refused before it is looked at when the run is confined (the service)
            check_allowed(child, "child sheet file", reference=written, file=parent)
            if child not in seen and os.path.isfile(child):
                seen.append(child)
                pending.append(child)
    return tuple(seen)


def find_designs(paths: list[str]) -> tuple[list[DesignRef], list[ParseError]]:
    """Designs under ``paths`` (sorted, each once) and the paths that do not exist."""
    problems: list[ParseError] = []
    roots: list[str] = []
    for path in paths:
        if os.path.isfile(path):
            roots.append(os.path.normpath(os.path.abspath(path)))
        elif os.path.isdir(path):
            roots.extend(_roots_in_folder(path))
        elif os.path.exists(path):  # a device, FIFO or socket: say what it is
            try:
                regular_file(path, "design file or a folder")
            except ParseError as error:
                problems.append(error)
        else:
            problems.append(ParseError("expected a design file or a folder, found nothing "
                                       "(no such file or folder)", file=path))
    unique = list(dict.fromkeys(roots))
    return [DesignRef(root, design_files(root)) for root in unique], problems


def _roots_in_folder(folder: str) -> list[str]:
    sheets: list[str] = []
    projects: set[str] = set()
    for directory, subdirs, files in os.walk(folder):
        subdirs[:] = sorted(d for d in subdirs if not d.startswith("."))
        for name in sorted(files):
            full = os.path.normpath(os.path.abspath(os.path.join(directory, name)))
            if name.endswith(".kicad_sch"):
                sheets.append(full)
            elif name.endswith(".kicad_pro"):
                projects.add(full[: -len(".kicad_pro")] + ".kicad_sch")
    children = {sheet: referenced_sheets(sheet) for sheet in sheets}
    referenced = {child for named in children.values() for child in named}
    roots = {s for s in sheets if s not in referenced or s in projects}
    # Sheets no root reaches form loops (A -> B -> A, a sheet placing itself). Each loop
    # is audited through its first sheet, whose audit names the loop, instead of the
    # folder silently holding no design.
    reached: set[str] = set()
    for sheet in [s for s in sheets if s in roots] + sheets:
        if sheet in reached:
            continue
        roots.add(sheet)
        pending = [sheet]
        while pending:
            current = pending.pop()
            if current not in reached:
                reached.add(current)
                pending.extend(c for c in children.get(current, ()) if c not in reached)
    return [s for s in sheets if s in roots]
