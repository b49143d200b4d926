"""The one file opener: regular files only, size before reading, confinement.

Outside source: POSIX file types (stat(2): S_ISREG, S_ISFIFO, S_ISCHR) and path
resolution (realpath(3): ``..`` and symbolic links); a FIFO opened for reading blocks
until a writer comes, so a test that returns at all proves it was not opened.
"""

from __future__ import annotations

import os
import signal

import pytest

from schemcheck.errors import ParseError, PathNotAllowedError
from schemcheck.io.files import (
    confined,
    is_allowed,
    read_bytes,
    read_text,
    regular_file,
    toml_position,
)


@pytest.fixture
def alarm():
    """Fail instead of hanging: SIGALRM after five seconds."""
    def hung(signum, frame):
        raise TimeoutError("the reader blocked")

    previous = signal.signal(signal.SIGALRM, hung)
    signal.alarm(5)
    yield
    signal.alarm(0)
    signal.signal(signal.SIGALRM, previous)


def test_fifo_refused_without_opening(tmp_path, alarm):
    os.mkfifo(tmp_path / "pipe")
    with pytest.raises(ParseError) as caught:
        read_bytes(tmp_path / "pipe")
    assert str(caught.value) == (f"{tmp_path / 'pipe'}: expected a file, found a FIFO (named "
                                 "pipe): not a regular file (devices, FIFOs and sockets are "
                                 "never read)")


@pytest.mark.parametrize(("path", "kind"), [("/dev/zero", "a character device"),
                                            ("/dev/null", "a character device"),
                                            ("/", "a folder")])
def test_special_files_refused(path, kind, alarm):
    with pytest.raises(ParseError, match=f"found {kind}"):
        read_text(path)


def test_size_checked_before_reading(tmp_path):
    path = tmp_path / "big"
    path.write_bytes(b"(" * 101)
    with pytest.raises(ParseError, match="expected a file of at most 100 bytes, found 101 bytes"):
        read_bytes(path, limit=100)
    assert read_bytes(path, limit=101) == b"(" * 101


def test_confinement_resolves_dots_and_links(tmp_path):
    inside, outside = tmp_path / "in", tmp_path / "out"
    inside.mkdir()
    outside.mkdir()
    (outside / "secret.txt").write_text("x", encoding="utf-8")
    (inside / "ok.txt").write_text("y", encoding="utf-8")
    os.symlink(outside / "secret.txt", inside / "link.txt")
    library = outside / "parts.toml"
    library.write_text("", encoding="utf-8")
    assert is_allowed(outside / "secret.txt")  # no confinement: everything
    with confined([str(inside)], [str(library)]):
        assert is_allowed(inside / "ok.txt") and read_text(inside / "ok.txt") == "y"
        assert is_allowed(library)  # a single file the service named itself
        for path in (outside / "secret.txt", inside / "link.txt", inside / ".." / "out" /
                     "secret.txt", outside / "missing.txt", "/etc/passwd", "a\0b"):
            assert not is_allowed(path)
        with pytest.raises(PathNotAllowedError) as caught:
            regular_file(inside / "link.txt", "settings file")
        assert caught.value.what == "settings file"
        assert caught.value.reference == str(inside / "link.txt")
    assert is_allowed(outside / "secret.txt")  # the confinement ended with the block


def test_not_allowed_error_crosses_processes():
    import pickle

    error = PathNotAllowedError("../x.kicad_sch", "child sheet file", file="a.kicad_sch",
                                line=3, column=4)
    again = pickle.loads(pickle.dumps(error))
    assert (again.reference, again.what, again.file, again.line, again.column, str(again)) == (
        error.reference, error.what, error.file, error.line, error.column, str(error))


@pytest.mark.parametrize(("table", "key", "expected"), [
    ((), "seed", (2, 1)),
    (("parts", "LX-1"), "aol", (6, 3)),
    (("parts", "LX-1"), None, (5, 1)),
    (("parts", "LX 2"), "vos", (8, 1)),
    (("parts", "LX-1"), "vos", None),
])
def test_toml_positions(table, key, expected):
    text = ('# c\nseed = 1\n[source_resistance]\nA = "1"\n[parts."LX-1"]\n  aol = 5\n'
            "[parts.'LX 2']\n\"vos\" = 1\n")
    assert toml_position(text, table, key) == expected
