"""Which designs a change touches: the files git reports as changed, mapped to designs.

A design is touched when any file it is audited from changed: its root, a child sheet
(also one that was deleted or renamed away while still referenced), the settings file
beside it (also one added or deleted), the settings file given on the command line, its
parts library, or the ``.kicad_pro`` that makes its root a root. git is run as the
``git`` command; every failure of it becomes a :class:`SchemcheckError` naming the
path and what was expected.
"""

from __future__ import annotations

import os
import subprocess
from typing import Any

from schemcheck.errors import SchemcheckError
from schemcheck.io.discover import DesignRef, named_sheets
from schemcheck.settings import Settings


class _GitFailed(SchemcheckError):
    """git ran and refused; the message is git's last line of complaint."""


def _real(path: str) -> str:
    return os.path.normcase(os.path.realpath(path))


def _git(args: list[str], where: str) -> str:
    """Output of ``git ARGS`` run in the folder ``where`` (raises with git's own words)."""
    try:
        done = subprocess.run(["git", *args], cwd=where, capture_output=True, check=False)
    except FileNotFoundError:
        raise SchemcheckError("the git command was not found; selecting changed designs "
                              "needs git installed and on PATH") from None
    if done.returncode != 0:
        message = done.stderr.decode("utf-8", "replace").strip().splitlines()
        raise _GitFailed(message[-1] if message else f"git exited with {done.returncode}")
    return done.stdout.decode("utf-8", "surrogateescape")


def _existing_folder(path: str) -> str:
    """The folder git should start from for ``path`` (which may not exist)."""
    folder = os.path.abspath(path)
    if not os.path.isdir(folder):
        folder = os.path.dirname(folder)
    while not os.path.isdir(folder) and os.path.dirname(folder) != folder:
        folder = os.path.dirname(folder)
    return folder


def repository_top(path: str) -> str:
    """The top folder of the git working tree holding ``path``."""
    try:
        return _git(["rev-parse", "--show-toplevel"], _existing_folder(path)).strip()
    except _GitFailed as error:
        raise SchemcheckError(f"{os.path.abspath(path)}: not inside a git working tree "
                              f"({error}); selecting changed designs compares files with a "
                              "git revision, so expected a path in a git repository") from None


def changed_files(paths: list[str], since: str | None) -> set[str]:
    """Every file (real path) that differs between ``since`` and the working tree in the
    repositories holding ``paths``, untracked files included; with ``since`` None, the
    files staged for commit."""
    tops = sorted({repository_top(path) for path in paths})
    changed: set[str] = set()
    for top in tops:
        if since is None:
            listed = _git(["diff", "--cached", "--name-only", "--no-renames", "-z"], top)
        else:
            try:  # resolved first, so that no revision text reaches git diff as an option
                commit = _git(["rev-parse", "--verify", "--quiet", "--end-of-options",
                               f"{since}^{{commit}}"], top).strip()
            except _GitFailed:
                raise SchemcheckError(
                    f"{top}: git knows no commit {since!r}; expected a commit, branch or tag "
                    "(in a shallow CI checkout, fetch the history that holds it)") from None
            listed = _git(["diff", "--name-only", "--no-renames", "-z", commit, "--"], top)
            listed += _git(["ls-files", "--others", "--exclude-standard", "-z"], top)
        changed.update(_real(os.path.join(top, name)) for name in listed.split("\0") if name)
    return changed


def design_inputs(design: DesignRef, settings: Settings | None,
                  settings_path: str | None = None) -> set[str]:
    """Every file (real path) whose change changes the audit of ``design``, existing or
    not: sheets, referenced sheets, settings files, the parts library, the project file."""
    from schemcheck.io.resolve import SETTINGS_NAME

    files = set(design.files)
    for sheet in design.files:
        if sheet.endswith(".kicad_sch"):
            files.update(named_sheets(sheet))
    folder = os.path.dirname(design.root)
    files.add(settings_path or os.path.join(folder, SETTINGS_NAME))
    if settings is not None:  # the user's, the project's and the command line's libraries
        files.update(path for _, path in settings.parts_libraries())
    stem, suffix = os.path.splitext(design.root)
    if suffix == ".kicad_sch":
        files.add(stem + ".kicad_pro")
    return {_real(path) for path in files}


def touched_designs(designs: list[DesignRef], changed: set[str], *,
                    overrides: dict[str, Any] | None = None,
                    settings_path: str | None = None) -> list[DesignRef]:
    """The designs (in their order) any of whose input files is in ``changed``."""
    from schemcheck.run.batch import settings_for

    picked = []
    for design in designs:
        try:
            settings = settings_for(design.root, Settings(), dict(overrides or {}),
                                    settings_path)
        except SchemcheckError:
            settings = None  # the audit reports the bad settings file; the file still counts
        if design_inputs(design, settings, settings_path) & changed:
            picked.append(design)
    return picked
