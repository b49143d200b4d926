"""Load a hierarchical KiCad design: the root sheet and every child sheet file it uses.

Each file is read once however many sheet symbols use it. A child that is missing or
malformed is recorded as a problem and the rest of the design is still read.
"""

from __future__ import annotations

import os

from schemcheck.errors import DesignError, ParseError, SchemcheckError
from schemcheck.io import sexpr
from schemcheck.io.files import read_text
from schemcheck.drawing import Design
from schemcheck.io.kicad_sch import read_sheet
from schemcheck.io.resolve import child_sheet, normalised


def _key(path: str) -> str:
    return normalised(path)


def load_design(path: str | os.PathLike[str], text: str | None = None) -> Design:
    """Read the root schematic at ``path`` and, recursively, the child sheets it names.

    ``text`` is the root's content when the caller has already read it. Raises
    :class:`ParseError` when the root itself cannot be read; problems with child sheets
    are collected in ``Design.problems``.
    """
    root_path = os.fspath(path)
    root = read_sheet(read_text(root_path) if text is None else text, root_path)
    design = Design(root=_key(root_path), sheets={_key(root_path): root})
    pending = [root]
    root_dir = os.path.dirname(os.path.abspath(root_path))
    while pending:
        parent = pending.pop()
        parent_dir = os.path.dirname(os.path.abspath(parent.path))
        for sheet in parent.sheets:
            child_path = child_sheet(sheet.file, parent_dir, root_dir)
            link = (_key(parent.path), sheet.index)
            if child_path is None:
                line, column, snippet = sexpr.locate(parent.text, (sheet.index,))
                design.problems.append(ParseError(
                    f"expected the child sheet file {sheet.file!r} of sheet {sheet.name!r}, "
                    "found no such file",
                    file=parent.path, line=line, column=column, snippet=snippet))
                design.children[link] = None
                continue
            key = _key(child_path)
            design.children[link] = key
            if key in design.sheets:
                continue
            try:
                child = read_sheet(read_text(child_path), child_path)
            except ParseError as error:
                design.problems.append(error)
                design.children[link] = None
                continue
            design.sheets[key] = child
            pending.append(child)
    return design


def check_cycles(design: Design) -> None:
    """Raise :class:`DesignError` if a sheet contains itself (directly or not)."""
    state: dict[str, int] = {}

    def visit(key: str, trail: list[str]) -> None:
        state[key] = 1
        sheet = design.sheets[key]
        for child in sheet.sheets:
            target = design.children.get((key, child.index))
            if target is None:
                continue
            if state.get(target) == 1:
                loop = " -> ".join(os.path.basename(k) for k in trail + [key, target])
                raise DesignError(f"{sheet.path}: the sheet hierarchy loops back on itself "
                                  f"({loop}); expected a tree of sheets")
            if target not in state:
                visit(target, trail + [key])
        state[key] = 2

    visit(design.root, [])
