"""The one place that opens design files: bytes in, UTF-8 text out, errors located.

Only regular files are read: a device, FIFO or socket is refused by its type before it
is opened (``/dev/zero`` would never end, a FIFO would wait for a writer), and a file's
size is checked before a byte of it is read. A run can be *confined* to some folders
(the service's upload and allowed folders): inside :func:`confined`, a path that
resolves outside them, after ``..`` and symbolic links, is refused without being
opened.
"""

from __future__ import annotations

import os
import re
import stat
from collections.abc import Iterable, Iterator
from contextlib import contextmanager
from contextvars import ContextVar
from typing import Any

from schemcheck.errors import ParseError, PathNotAllowedError

#: Larger than any real schematic (the biggest seen is a few MB).
MAX_FILE_BYTES = 64 * 1024 * 1024

#: (folders, single files) this context may read, resolved; None: no confinement.
_CONFINED: ContextVar[tuple[tuple[str, ...], frozenset[str]] | None] = ContextVar(
    "schemcheck_confined", default=None)


def _resolved(path: str) -> str:
    return os.path.normcase(os.path.realpath(path))


@contextmanager
def confined(folders: Iterable[str], files: Iterable[str] = ()) -> Iterator[None]:
    """Within the block, read only what resolves inside ``folders`` or is one of ``files``.

    Every reader of this package asks :func:`is_allowed` before it looks at a path, so
    a design cannot pull in a file from elsewhere through a child-sheet, settings or
    parts-library reference.
    """
    token = _CONFINED.set((tuple(_resolved(f) for f in folders),
                           frozenset(_resolved(f) for f in files)))
    try:
        yield
    finally:
        _CONFINED.reset(token)


def confinement() -> tuple[list[str], list[str]] | None:
    """The current confinement as plain lists (to hand to a worker process), or None."""
    current = _CONFINED.get()
    return None if current is None else (list(current[0]), sorted(current[1]))


def is_confined() -> bool:
    return _CONFINED.get() is not None


def is_allowed(path: str | os.PathLike[str]) -> bool:
    """Whether ``path`` may be read here (always, outside a confinement). Only resolves
    the path (``..`` and symbolic links); never opens it."""
    current = _CONFINED.get()
    if current is None:
        return True
    folders, files = current
    try:
        target = _resolved(os.fspath(path))
    except (OSError, ValueError):
        return False
    if target in files:
        return True
    return any(target == folder or target.startswith(folder.rstrip(os.sep) + os.sep)
               for folder in folders)


def check_allowed(path: str | os.PathLike[str], what: str, *, reference: str | None = None,
                  file: str | None = None, line: int | None = None,
                  column: int | None = None) -> None:
    """Raise :class:`PathNotAllowedError` naming ``reference`` (default: the path) when
    ``path`` may not be read here."""
    if not is_allowed(path):
        raise PathNotAllowedError(reference if reference is not None else os.fspath(path), what,
                                  file=file, line=line, column=column)


def _kind(mode: int) -> str:
    if stat.S_ISDIR(mode):
        return "a folder"
    if stat.S_ISFIFO(mode):
        return "a FIFO (named pipe)"
    if stat.S_ISCHR(mode):
        return "a character device"
    if stat.S_ISBLK(mode):
        return "a block device"
    if stat.S_ISSOCK(mode):
        return "a socket"
    return "something other than a file"


def regular_file(path: str | os.PathLike[str], what: str = "file",
                 limit: int = MAX_FILE_BYTES) -> os.stat_result:
    """The status of ``path`` after checking, without opening it, that it may be read
    here, is a regular file (symbolic links followed) and is at most ``limit`` bytes.
    Raises :class:`ParseError` (or :class:`PathNotAllowedError`) saying what was found."""
    name = os.fspath(path)
    check_allowed(name, what)
    try:
        info = os.stat(name)
    except (FileNotFoundError, NotADirectoryError):
        raise ParseError(f"expected a {what} here, found nothing (no such file)",
                         file=name) from None
    except ValueError:  # a NUL or an unencodable character in the name
        raise ParseError(f"expected the name of a {what}, found a name no file can have "
                         f"({name!r})", file=name) from None
    except OSError as error:
        raise ParseError(f"could not read the {what}: {error.strerror or error}",
                         file=name) from None
    if stat.S_ISDIR(info.st_mode):
        raise ParseError(f"expected a {what}, found a folder", file=name)
    if not stat.S_ISREG(info.st_mode):
        raise ParseError(f"expected a {what}, found {_kind(info.st_mode)}: not a regular file "
                         "(devices, FIFOs and sockets are never read)", file=name)
    if info.st_size > limit:
        raise ParseError(f"expected a {what} of at most {limit} bytes, found "
                         f"{info.st_size} bytes", file=name)
    return info


def read_text(path: str | os.PathLike[str]) -> str:
    """Read ``path`` as UTF-8 whatever the platform's default encoding.

    A byte-order mark is dropped. Undecodable bytes raise :class:`ParseError` naming the
    line and column of the first bad byte.
    """
    name = os.fspath(path)
    return decode(read_bytes(name), name)


def read_bytes(path: str | os.PathLike[str], what: str = "file",
               limit: int = MAX_FILE_BYTES) -> bytes:
    """The raw content of ``path``: a regular file of at most ``limit`` bytes (checked
    before reading), inside the confinement if there is one; anything else is a
    :class:`ParseError` (or :class:`PathNotAllowedError`)."""
    name = os.fspath(path)
    info = regular_file(name, what, limit)
    flags = os.O_RDONLY | getattr(os, "O_NONBLOCK", 0) | getattr(os, "O_NOCTTY", 0)
    try:
        # non-blocking: should the path be swapped for a FIFO after the check, the open
        # does not wait for a writer and the check below refuses it
        fd = os.open(name, flags)
    except OSError as error:
        raise ParseError(f"could not read the {what}: {error.strerror or error}",
                         file=name) from None
    with os.fdopen(fd, "rb") as handle:
        now = os.fstat(fd)
        if not stat.S_ISREG(now.st_mode) or (now.st_dev, now.st_ino) != (info.st_dev,
                                                                          info.st_ino):
            raise ParseError(f"expected a {what}, found one that changed while it was "
                             "opened: not a regular file", file=name)
        try:
            data = handle.read(limit + 1)
        except OSError as error:
            raise ParseError(f"could not read the {what}: {error.strerror or error}",
                             file=name) from None
    if len(data) > limit:
        raise ParseError(f"expected a {what} of at most {limit} bytes, found more "
                         "(it grew while being read)", file=name)
    return data


def decode(data: bytes, name: str) -> str:
    """Decode ``data`` (the content of ``name``) as UTF-8, locating a bad byte."""
    try:
        text = data.decode("utf-8")
    except UnicodeDecodeError as error:
        line = data.count(b"\n", 0, error.start) + 1
        column = error.start - (data.rfind(b"\n", 0, error.start) + 1) + 1
        raise ParseError(
            f"expected UTF-8 text, found byte 0x{data[error.start]:02x} that is not valid UTF-8 "
            "(KiCad writes its files in UTF-8)",
            file=name, line=line, column=column,
        ) from None
    if text.startswith("\ufeff"):
        text = text[1:]
    return text


def toml_document(text: str, name: str, expected: str) -> dict[str, Any]:
    """``text`` (the content of ``name``) read as TOML; a syntax error, or nesting too
    deep to read, is a :class:`ParseError` saying ``expected`` with line and column."""
    import tomllib

    try:
        return tomllib.loads(text)
    except tomllib.TOMLDecodeError as error:
        match = re.search(r"line (\d+), column (\d+)", str(error))
        if match:
            line, column = int(match.group(1)), int(match.group(2))
        else:  # "(at end of document)"
            line = text.count("\n") + 1
            column = len(text) - (text.rfind("\n") + 1) + 1
        raise ParseError(f"expected {expected}: {error}", file=name, line=line,
                         column=column) from None
    except RecursionError:
        raise ParseError(f"expected {expected}, found arrays or tables nested too deeply to "
                         "read", file=name, line=1, column=1) from None


_TOML_HEADER = re.compile(r"^\s*\[\s*([^\[\]]*?)\s*\]\s*(?:#.*)?$")
_TOML_PART = re.compile(r'\s*(?:"((?:[^"\\]|\\.)*)"|\'([^\']*)\'|([A-Za-z0-9_-]+))\s*(?:\.|$)')


def _toml_name(text: str) -> tuple[str, ...] | None:
    parts, at = [], 0
    while at < len(text):
        match = _TOML_PART.match(text, at)
        if not match or match.end() == at:
            return None
        parts.append(next(g for g in match.groups() if g is not None))
        at = match.end()
    return tuple(parts)


def toml_position(text: str, table: tuple[str, ...], key: str | None) -> tuple[int, int] | None:
    """Line and column (1-based) of ``key`` in the TOML ``table`` of ``text`` (of the
    table's header when ``key`` is None; ``()`` is the top level), by a scan of the
    lines: for messages only, so a miss is None, never an error."""
    current: tuple[str, ...] | None = ()
    for number, line in enumerate(text.splitlines(), start=1):
        header = _TOML_HEADER.match(line)
        if header:
            current = _toml_name(header.group(1))
            if key is None and current == table and table:
                return number, line.index("[") + 1
            continue
        if key is None or current != table:
            continue
        stripped = line.lstrip()
        for written in (key, f'"{key}"', f"'{key}'"):
            if stripped.startswith(written) and stripped[len(written):].lstrip().startswith(
                    ("=", ".")):
                return number, len(line) - len(stripped) + 1
    return None


def toml_error(message: str, name: str, text: str, table: tuple[str, ...] = (),
               key: str | None = None) -> ParseError:
    """A :class:`ParseError` about ``key`` of ``table`` in the TOML file ``name``, located
    where the scan finds it (else at the table, else at the file's start)."""
    where = (toml_position(text, table, key)
             or (toml_position(text, table + (key,), None) if key else None)
             or toml_position(text, table, None) or (1, 1))
    lines = text.splitlines()
    snippet = lines[where[0] - 1] if 0 < where[0] <= len(lines) else None
    return ParseError(message, file=name, line=where[0], column=where[1], snippet=snippet)


def write_text(path: str | os.PathLike[str], text: str) -> None:
    """Write ``text`` as UTF-8, atomically (a reader never sees half a file)."""
    name = os.fspath(path)
    temporary = f"{name}.tmp-{os.getpid()}"
    try:
        with open(temporary, "w", encoding="utf-8", newline="\n") as handle:
            handle.write(text)
        os.replace(temporary, name)
    except OSError as error:
        raise ParseError(f"could not write the file: {error.strerror or error}",
                         file=name) from None
