"""The batch progress bar (click's): on a terminal only, never when piped or in CI.

Outside source: click's documented progress bar behaviour (``click.progressbar``: the
bar, the "pos/length" counter, a line end when finished); a real terminal is made with
the operating system's pseudo-terminal (Python's ``pty``).
"""

from __future__ import annotations

import io
import os
import subprocess
import sys

import pytest

from schemcheck.run.batch import Progress

from .conftest import FIXTURES


class Terminal(io.StringIO):
    def isatty(self) -> bool:
        return True


def test_bar_on_a_terminal(monkeypatch):
    monkeypatch.delenv("CI", raising=False)
    stream = Terminal()
    progress = Progress(stream)
    for done in range(4):
        progress(done, 3)
    text = stream.getvalue()
    steps = [line for line in text.split("\r") if line]
    assert len(steps) == 4
    assert "Auditing designs  [..............................]  0/3" in steps[0]
    assert "Auditing designs  [##########....................]  1/3" in steps[1]
    assert "Auditing designs  [##############################]  3/3" in steps[3]
    assert text.endswith("\n") and text.count("\n") == 1


def test_closed_early_ends_the_line(monkeypatch):
    monkeypatch.delenv("CI", raising=False)
    stream = Terminal()
    progress = Progress(stream)
    progress(0, 5)
    progress(2, 5)
    progress.close()
    progress.close()
    text = stream.getvalue()
    assert "[############..................]  2/5" in text.split("\r")[-1]
    assert text.endswith("\n") and text.count("\n") == 1


@pytest.mark.parametrize(("stream", "ci"), [
    pytest.param(io.StringIO(), None, id="piped"),
    pytest.param(Terminal(), "true", id="ci"),
])
def test_silent_when_piped_or_in_ci(monkeypatch, stream, ci):
    if ci is None:
        monkeypatch.delenv("CI", raising=False)
    else:
        monkeypatch.setenv("CI", ci)
    progress = Progress(stream)
    for done in range(4):
        progress(done, 3)
    progress.close()
    assert stream.getvalue() == ""


def test_no_designs_no_bar(monkeypatch):
    monkeypatch.delenv("CI", raising=False)
    stream = Terminal()
    Progress(stream)(0, 0)
    assert stream.getvalue() == ""


@pytest.mark.skipif(os.name != "posix", reason="pseudo-terminals are POSIX")
@pytest.mark.parametrize("ci", [None, "true"], ids=["terminal", "terminal-in-ci"])
def test_whole_command_on_a_real_terminal(tmp_path, ci):
    import pty

    env = {k: v for k, v in os.environ.items() if k != "CI"}
    if ci:
        env["CI"] = ci
    leader, follower = pty.openpty()
    try:
        proc = subprocess.run(
            [sys.executable, "-m", "schemcheck", "audit", str(FIXTURES / "demo"), "--no-cache",
             "--samples", "0", "--jobs", "1", "--output", str(tmp_path / "report.json")],
            stdout=subprocess.DEVNULL, stderr=follower, env=env, timeout=120, check=False)
        os.close(follower)
        follower = -1
        seen = b""
        while True:
            try:
                block = os.read(leader, 4096)
            except OSError:  # the terminal's other end is closed: all read
                break
            if not block:
                break
            seen += block
    finally:
        if follower != -1:
            os.close(follower)
        os.close(leader)
    assert proc.returncode == 1  # the demo's error findings (fixtures/README.md)
    text = seen.decode("utf-8", "replace")
    if ci:
        assert "Auditing" not in text
    else:
        assert "Auditing designs  [##############################]  1/1" in text
