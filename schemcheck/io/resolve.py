"""Which files make up a design: the one resolver.

The reader (:mod:`schemcheck.io.design`), discovery and the results-cache key
(:mod:`schemcheck.io.discover`, :mod:`schemcheck.run.batch`), the service and the editor
action (``scripts/schemcheck_action.py``) all ask this module, so the files the key covers
are the files the reader reads.

* A child sheet named ``Sheetfile`` in a sheet symbol is looked up relative to the folder
  of the sheet that places it, else relative to the root sheet's folder (the schematic
  editor resolves it the same way); a name that resolves to no file is left out here and
  reported by the reader.
* The settings file is ``schemcheck.toml`` beside the root sheet (or the one the user
  names); the parts library is the one that settings file names, relative to it.

Imports only the standard library: the editor action loads this file by path where the
schemcheck package is not installed (the schematic editor's own Python).
"""

from __future__ import annotations

import os
import re
import stat
from collections.abc import Callable

#: Called with (name as written, candidate path, the sheet naming it) before a child sheet
#: is looked at: the service refuses, unread, what lies outside what it may read.
Check = Callable[[str, str, str], None]
#: A sheet larger than this is not scanned for children (its own reading says why).
_MAX_SCAN_BYTES = 64 * 1024 * 1024

SETTINGS_NAME = "schemcheck.toml"

#: ``(property "Sheetfile" "NAME"`` (KiCad 6 to 9; older files say ``Sheet file``).
_SHEETFILE = re.compile(rb'\(property\s+"Sheet ?file"\s+"((?:[^"\\]|\\.)*)"')
#: The escapes KiCad's writer emits inside quoted strings (as the tokenizer decodes them).
_ESCAPES = {"n": "\n", "r": "\r", "t": "\t", "\\": "\\", '"': '"'}
_ESCAPE_RE = re.compile(r"\\(.)", re.S)


def normalised(path: str) -> str:
    """``path`` absolute and normalised: the form every design file is named in."""
    return os.path.normcase(os.path.normpath(os.path.abspath(path)))


def child_sheet(name: str, parent_dir: str, root_dir: str, check: Check | None = None,
                parent: str = "") -> str | None:
    """The file of child sheet ``name`` (as written in its sheet symbol, escapes already
    decoded) placed by a sheet in ``parent_dir`` of a design rooted in ``root_dir``: relative
    to the parent's folder, else to the root's; None when neither holds anything by that
    name but a folder.
    ``check`` sees each candidate before it is looked at."""
    written = name
    name = name.replace("\\", "/")
    for base in (parent_dir, root_dir):
        candidate = os.path.normpath(os.path.join(base, name))
        if check is not None:
            check(written, candidate, parent)
        # anything there but a folder: reading it says what it is (a FIFO is not "no
        # such file"); discovery and the cache never open what is not a regular file
        if os.path.exists(candidate) and not os.path.isdir(candidate):
            return normalised(candidate)
    return None


def sheet_names(data: bytes) -> list[str]:
    """The child sheet file names a sheet's raw content names, escapes decoded."""
    out = []
    for match in _SHEETFILE.finditer(data):
        raw = match.group(1).decode("utf-8", "replace")
        out.append(_ESCAPE_RE.sub(lambda m: _ESCAPES.get(m.group(1), m.group(0)), raw)
                   if "\\" in raw else raw)
    return out


def read_small(path: str) -> bytes:
    """The content of ``path`` when it is a regular file of a readable size, else nothing:
    a FIFO or device is never opened (it could block or never end)."""
    try:
        status = os.stat(path)
        if not stat.S_ISREG(status.st_mode) or status.st_size > _MAX_SCAN_BYTES:
            return b""
        with open(path, "rb") as handle:
            return handle.read(_MAX_SCAN_BYTES)
    except OSError:
        return b""


def child_names(path: str) -> list[str]:
    """The child sheet file names the sheet at ``path`` names (nothing where it is not a
    regular file of a readable size)."""
    return sheet_names(read_small(path))


def sheet_files(root: str, check: Check | None = None,
                names: Callable[[str], list[str]] = child_names) -> tuple[str, ...]:
    """The root and, recursively, every child sheet file it uses that exists, each once
    (the root first). A netlist file is a design of one file. ``check``: see
    :func:`child_sheet`; ``names``: a sheet's child sheet names (:func:`child_names`, or
    a memo of it)."""
    root = normalised(root)
    if not root.endswith(".kicad_sch"):
        return (root,)
    root_dir = os.path.dirname(root)
    seen = [root]
    pending = [root]
    while pending:
        parent = pending.pop()
        parent_dir = os.path.dirname(parent)
        for name in names(parent):
            child = child_sheet(name, parent_dir, root_dir, check, parent)
            if child is not None and child not in seen:
                seen.append(child)
                pending.append(child)
    return tuple(seen)


def settings_file(root: str, given: str | None = None) -> str | None:
    """The settings file of the design rooted at ``root``: ``given`` when the user names
    one, else ``schemcheck.toml`` beside the root when there is one."""
    if given:
        return given
    candidate = os.path.join(os.path.dirname(os.path.abspath(root)), SETTINGS_NAME)
    # anything there but a folder: reading it says what it is when it is not a regular
    # file (reading also refuses, unread, what lies outside a confined run)
    return candidate if os.path.exists(candidate) and not os.path.isdir(candidate) else None


def library_path(settings_path: str, name: str) -> str:
    """The parts library ``name`` (as written in the settings file), relative to it."""
    return os.path.join(os.path.dirname(os.path.abspath(settings_path)), name)


def support_files(root: str, given_settings: str | None = None) -> tuple[str, ...]:
    """The settings file and the parts library it names (those that exist), which a copy
    of the design needs beside its sheets to be audited the same way."""
    settings = settings_file(root, given_settings)
    if settings is None or not os.path.isfile(settings):
        return ()
    out = [normalised(settings)]
    import tomllib  # here: reading a design's files needs no TOML until a settings file

    try:
        name = tomllib.loads(read_small(settings).decode("utf-8-sig")).get("parts_library")
    except (UnicodeDecodeError, tomllib.TOMLDecodeError):
        name = None  # the audit reports the bad settings file
    if isinstance(name, str):
        library = library_path(settings, name)
        if os.path.isfile(library):
            out.append(normalised(library))
    return tuple(out)


def design_files(root: str, given_settings: str | None = None) -> tuple[str, ...]:
    """Every file the audit of the design rooted at ``root`` reads: its sheets, then the
    settings file and the parts library it names."""
    return sheet_files(root) + support_files(root, given_settings)
