"""Shared test fixtures.

The real-world corpus lives outside the repository (``../shared/corpus`` beside the
clone, or ``$SCHEMCHECK_CORPUS``); tests that need it skip cleanly where it is absent.
"""

from __future__ import annotations

import csv
import os
import time
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
FIXTURES = ROOT / "fixtures"


def corpus_dir() -> Path | None:
    env = os.environ.get("SCHEMCHECK_CORPUS")
    candidates = [Path(env)] if env else []
    candidates.append(ROOT.parent / "shared" / "corpus")
    for candidate in candidates:
        if (candidate / "SOURCES.tsv").is_file():
            return candidate
    return None


CORPUS = corpus_dir()
needs_corpus = pytest.mark.skipif(CORPUS is None, reason="../shared/corpus is not present")


def corpus_files(suffix: str = ".kicad_sch") -> list[Path]:
    """Every corpus file with ``suffix``, as listed in SOURCES.tsv (empty without corpus)."""
    if CORPUS is None:
        return []
    with open(CORPUS / "SOURCES.tsv", encoding="utf-8", newline="") as handle:
        rows = list(csv.DictReader(handle, delimiter="\t"))
    out = []
    for row in rows:
        owner_repo = row["repo"].replace("/", "__")
        path = CORPUS / owner_repo / row["path"]
        if path.suffix == suffix and path.is_file():
            out.append(path)
    return out


def corpus_ids(paths: list[Path]) -> list[str]:
    return [str(p.relative_to(CORPUS)) if CORPUS else str(p) for p in paths]


@pytest.fixture(scope="session", autouse=True)
def no_user_parts_library(tmp_path_factory):
    """A user-level parts library on the machine running the tests must not reach them:
    the user config folder (platformdirs reads $XDG_CONFIG_HOME) is an empty temporary
    one; tests that need a user library write it there."""
    old = os.environ.get("XDG_CONFIG_HOME")
    os.environ["XDG_CONFIG_HOME"] = str(tmp_path_factory.mktemp("config"))
    yield Path(os.environ["XDG_CONFIG_HOME"])
    if old is None:
        del os.environ["XDG_CONFIG_HOME"]
    else:
        os.environ["XDG_CONFIG_HOME"] = old


@pytest.fixture
def corpus() -> Path:
    if CORPUS is None:
        pytest.skip("../shared/corpus is not present")
    return CORPUS


def stages_as_data(result):
    """``result`` (a DesignResult) with its stages and not-analysed entries in their JSON
    form, for tests that read them by JSON key; findings stay objects."""
    from schemcheck.report.json import to_data

    result.stages = [to_data(s) for s in result.stages]
    result.not_analysed = [to_data(n) for n in result.not_analysed]
    return result


@pytest.fixture
def make_app():
    """``make_app(settings)``: the service's Flask app; its audit workers are stopped after
    the test (the suite leaves no process behind)."""
    from schemcheck_api import close_app, create_app

    apps = []

    def make(settings):
        app = create_app(settings)
        apps.append(app)
        return app

    yield make
    for app in apps:
        close_app(app)


def session_processes(sid: int) -> list[tuple[int, str]]:
    """(pid, command line) of every live process in session ``sid`` (Linux /proc)."""
    found = []
    for entry in os.listdir("/proc"):
        if not entry.isdigit():
            continue
        try:
            with open(f"/proc/{entry}/stat", encoding="utf-8", errors="replace") as handle:
                fields = handle.read().rsplit(")", 1)[1].split()
            if fields[0] == "Z" or int(fields[3]) != sid:  # state, ..., session id
                continue
            with open(f"/proc/{entry}/cmdline", "rb") as handle:
                command = handle.read().replace(b"\0", b" ").decode("utf-8", "replace")
        except (OSError, IndexError, ValueError):
            continue  # ended while we looked
        found.append((int(entry), command.strip()))
    return found


def wait_session_empty(sid: int, seconds: float = 15.0) -> list[tuple[int, str]]:
    """The processes of session ``sid`` still alive after up to ``seconds``; those left are
    killed (by their pid) so that a failing test leaves nothing behind either."""
    deadline = time.monotonic() + seconds
    left = session_processes(sid)
    while left and time.monotonic() < deadline:
        time.sleep(0.1)
        left = session_processes(sid)
    for pid, _ in left:
        try:
            os.kill(pid, 9)
        except OSError:
            pass
    return left


needs_proc = pytest.mark.skipif(not os.path.isdir("/proc/self"),
                                reason="process sessions are read from Linux /proc")
