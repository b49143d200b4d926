"""Find the designs under the paths a user gives: files, project folders, folders of
many projects (recursing). A design is a root sheet and every child sheet it uses; the
root is the sheet no other sheet references, or the one a ``.kicad_pro`` beside it
names (same stem). Child sheets are audited once, through their root.
"""

from __future__ import annotations

import os
import re
from dataclasses import dataclass

from schemcheck.errors import ParseError

_SHEETFILE = re.compile(rb'\(property\s+"Sheet ?file"\s+"((?:[^"\\]|\\.)*)"')
DESIGN_SUFFIXES = (".kicad_sch", ".net", ".xml")


@dataclass(frozen=True, slots=True)
class DesignRef:
    """A design to audit: its root file and every file it is made of."""

    root: str
    files: tuple[str, ...]


def referenced_sheets(path: str) -> list[str]:
    """Child sheet files named in ``path`` (resolved beside it), by a quick text scan."""
    try:
        with open(path, "rb") as handle:
            data = handle.read()
    except OSError:
        return []
    base = os.path.dirname(os.path.abspath(path))
    out = []
    for match in _SHEETFILE.finditer(data):
        name = match.group(1).decode("utf-8", "replace").replace("\\\\", "\\").replace("\\", "/")
        out.append(os.path.normpath(os.path.join(base, name)))
    return out


def design_files(root: str) -> tuple[str, ...]:
    """The root and, recursively, the child sheets it references (existing ones)."""
    root = os.path.normpath(os.path.abspath(root))
    if not root.endswith(".kicad_sch"):
        return (root,)
    seen = [root]
    pending = [root]
    while pending:
        for child in referenced_sheets(pending.pop()):
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
    referenced: set[str] = set()
    for sheet in sheets:
        referenced.update(referenced_sheets(sheet))
    return [s for s in sheets if s not in referenced or s in projects]
