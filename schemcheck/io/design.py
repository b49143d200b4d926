"""Load a hierarchical KiCad design: the root sheet and every child sheet file it uses.

Each file is read once however many sheet symbols use it. A child that is missing or
malformed is recorded as a problem and the rest of the design is still read. A child
sheet outside the root sheet's folder is read with a warning (a copy of the project
folder would lose it); when the run is confined (the service), a child that resolves
outside the allowed folders is refused without being opened.
"""

from __future__ import annotations

import os

from schemcheck.drawing import Design
from schemcheck.errors import DesignError, ParseError, PathNotAllowedError
from schemcheck.io import sexpr
from schemcheck.io.files import is_allowed, is_confined, read_text
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
    real_root_dir = os.path.realpath(root_dir)
    while pending:
        parent = pending.pop()
        parent_dir = os.path.dirname(os.path.abspath(parent.path))
        for sheet in parent.sheets:
            try:
                child_path = child_sheet(sheet.file, parent_dir, root_dir, _refuse_outside)
            except PathNotAllowedError:
                line, column, _ = sexpr.locate(parent.text, (sheet.index,))
                raise PathNotAllowedError(sheet.file, f"child sheet file of sheet {sheet.name!r}",
                                          file=parent.path, line=line, column=column) from None
            link = (_key(parent.path), sheet.index)
            if child_path is not None and not is_confined() and not _inside(
                    os.path.realpath(child_path), real_root_dir):
                line, column, _ = sexpr.locate(parent.text, (sheet.index,))
                design.warnings.append(
                    f"{parent.path}:{line}:{column}: the child sheet file {sheet.file!r} of "
                    f"sheet {sheet.name!r} lies outside the root sheet's folder "
                    f"({os.path.realpath(child_path)}); it is read, but a copy of the "
                    "project folder would not hold it")
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


def _inside(path: str, folder: str) -> bool:
    return path == folder or path.startswith(folder.rstrip(os.sep) + os.sep)


def _refuse_outside(written: str, candidate: str, parent: str) -> None:
    """A candidate child sheet outside the confinement is never looked at (not even
    whether it exists): the reference is refused (:class:`PathNotAllowedError`)."""
    if not is_allowed(candidate):
        raise PathNotAllowedError(written, "child sheet file")


#: Deeper than any real design (KiCad's own hierarchies are a few levels deep).
MAX_SHEET_DEPTH = 64
#: Sheet instances of one design (a sheet placed twice in each of 30 nested sheets
#: would make a billion).
MAX_SHEET_INSTANCES = 10_000


def _where(design: Design, parent: str, child: str) -> str:
    """``file:line:column`` of the sheet symbol in ``parent`` that places ``child``."""
    sheet = design.sheets[parent]
    for symbol in sheet.sheets:
        if design.children.get((parent, symbol.index)) == child:
            line, column, _ = sexpr.locate(sheet.text, (symbol.index,))
            return f"{sheet.path}:{line}:{column}"
    return f"{sheet.path}:1:1"


def _chain(keys: list[str]) -> str:
    names = [os.path.basename(k) for k in keys]
    if len(names) > 8:
        names = names[:3] + [f"... {len(names) - 6} more ..."] + names[-3:]
    return " -> ".join(names)


def check_cycles(design: Design) -> None:
    """Raise :class:`DesignError` naming the sheets when a sheet contains itself
    (directly or not), when the hierarchy is more than :data:`MAX_SHEET_DEPTH` levels
    deep, or when it places more than :data:`MAX_SHEET_INSTANCES` sheet instances.

    Iterative, so a hierarchy thousands of levels deep is reported, not a crash.
    """
    children: dict[str, list[str]] = {}
    for key, sheet in design.sheets.items():
        children[key] = [target for child in sheet.sheets
                         if (target := design.children.get((key, child.index))) is not None
                         and target in design.sheets]
    state: dict[str, int] = {design.root: 1}  # 1 on the current path, 2 done
    order: list[str] = []  # post-order: every child before its parents
    trail = [design.root]
    stack = [iter(children[design.root])]
    while stack:
        target = next(stack[-1], None)
        if target is None:
            stack.pop()
            done = trail.pop()
            state[done] = 2
            order.append(done)
            continue
        if state.get(target) == 1:
            loop = _chain(trail[trail.index(target):] + [target])
            raise DesignError(f"{_where(design, trail[-1], target)}: the sheet hierarchy loops "
                              f"back on itself ({loop}); expected a tree of sheets")
        if target not in state:
            state[target] = 1
            trail.append(target)
            stack.append(iter(children[target]))
    # longest chain below each sheet, and how many instances the root places
    below: dict[str, int] = {}
    step: dict[str, str] = {}
    for key in order:
        best = max(children[key], key=lambda c: below[c], default=None)
        below[key] = 0 if best is None else below[best] + 1
        if best is not None:
            step[key] = best
    if below[design.root] > MAX_SHEET_DEPTH:
        chain = [design.root]
        while chain[-1] in step:
            chain.append(step[chain[-1]])
        too_deep = _where(design, chain[MAX_SHEET_DEPTH], chain[MAX_SHEET_DEPTH + 1])
        raise DesignError(f"{too_deep}: the sheet hierarchy is {below[design.root]} levels "
                          f"deep ({_chain(chain)}); expected at most {MAX_SHEET_DEPTH} levels "
                          "below the root sheet")
    placed = {design.root: 1}
    for key in reversed(order):  # parents before children
        for child in children[key]:
            placed[child] = placed.get(child, 0) + placed.get(key, 0)
    total = sum(placed.values())
    if total > MAX_SHEET_INSTANCES:
        worst = max(placed, key=lambda k: placed[k])
        raise DesignError(f"{design.sheets[design.root].path}:1:1: the sheet hierarchy places "
                          f"{total} sheet instances ({os.path.basename(worst)} alone "
                          f"{placed[worst]} times); expected at most {MAX_SHEET_INSTANCES}")
