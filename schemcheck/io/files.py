"""The one place that opens design files: bytes in, UTF-8 text out, errors located."""

from __future__ import annotations

import os

from schemcheck.errors import ParseError

#: Larger than any real schematic (the biggest seen is a few MB).
MAX_FILE_BYTES = 64 * 1024 * 1024


def read_text(path: str | os.PathLike[str]) -> str:
    """Read ``path`` as UTF-8 whatever the platform's default encoding.

    A byte-order mark is dropped. Undecodable bytes raise :class:`ParseError` naming the
    line and column of the first bad byte.
    """
    name = os.fspath(path)
    return decode(read_bytes(name), name)


def read_bytes(path: str | os.PathLike[str]) -> bytes:
    """The raw content of ``path``; a missing or oversize file is a :class:`ParseError`."""
    name = os.fspath(path)
    try:
        size = os.path.getsize(name)
        if size > MAX_FILE_BYTES:
            raise ParseError(f"expected a design file of at most {MAX_FILE_BYTES} bytes, "
                             f"found {size} bytes", file=name)
        with open(name, "rb") as handle:
            data = handle.read()
    except FileNotFoundError:
        raise ParseError("expected a file here, found nothing (no such file)", file=name) from None
    except IsADirectoryError:
        raise ParseError("expected a file, found a folder", file=name) from None
    except OSError as error:
        raise ParseError(f"could not read the file: {error.strerror or error}", file=name) from None
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
