"""Temporary git repositories of designs, for the tests of change selection, the
pre-commit hook and the CI examples.

Every repository lives under the test's tmp_path; git runs without the user's or the
system's configuration, and the results cache goes under tmp_path too.
"""

from __future__ import annotations

import os
import shutil
import subprocess
import sys
from pathlib import Path

import pytest

from .conftest import FIXTURES
from .make_demo import stage
from .synth import Sheet

needs_git = pytest.mark.skipif(shutil.which("git") is None,
                               reason="the git command is not installed")

#: the git repository's designs: two copies of the demo and one single-stage design
DEMO = "frontend/frontend.kicad_sch"
SPARE = "spare/frontend.kicad_sch"
AMP = "amp/amp.kicad_sch"


def isolate(monkeypatch: pytest.MonkeyPatch, home: Path) -> None:
    """git without the user's configuration, a hook's variables or a terminal; the
    results cache and pre-commit's store under ``home``; schemcheck on PATH."""
    for name in ("GIT_DIR", "GIT_INDEX_FILE", "GIT_WORK_TREE", "GIT_OBJECT_DIRECTORY",
                 "GIT_PREFIX"):
        monkeypatch.delenv(name, raising=False)
    monkeypatch.setenv("GIT_CONFIG_GLOBAL", os.devnull)
    monkeypatch.setenv("GIT_CONFIG_NOSYSTEM", "1")
    monkeypatch.setenv("GIT_CEILING_DIRECTORIES", str(home))  # no repository above ``home``
    for role in ("AUTHOR", "COMMITTER"):
        monkeypatch.setenv(f"GIT_{role}_NAME", "Test Bench")
        monkeypatch.setenv(f"GIT_{role}_EMAIL", "bench@example.invalid")
    monkeypatch.setenv("XDG_CACHE_HOME", str(home / "cache"))
    monkeypatch.setenv("PRE_COMMIT_HOME", str(home / "pre-commit"))
    bin_dir = os.path.dirname(sys.executable)
    monkeypatch.setenv("PATH", bin_dir + os.pathsep + os.environ.get("PATH", ""))


def git(repo: Path, *args: str) -> str:
    done = subprocess.run(["git", *args], cwd=repo, capture_output=True, text=True, check=True)
    return done.stdout


def single_stage(seed: int) -> str:
    """A one-stage design with full op-amp data and no budget: no error finding."""
    sheet = Sheet(project=f"amp{seed}", seed=seed)
    stage(sheet, 76.2, 76.2, ref="U1", unit=1, value="OPX", rp="9k1",
          fields={"Vos": "1mV", "Ib": "20nA", "Ios": "2nA"})
    return sheet.text()


def design_repo(root: Path, samples: int = 0) -> Path:
    """A repository with two copies of the demo (``frontend/``, ``spare/``), a
    single-stage design (``amp/``) and a README, committed on ``main``. ``samples``
    Monte Carlo samples per network, through each design's settings file."""
    repo = root / "repo"
    for folder in ("frontend", "spare"):
        shutil.copytree(FIXTURES / "demo", repo / folder)
        settings = repo / folder / "schemcheck.toml"
        settings.write_text(settings.read_text(encoding="utf-8")
                            + f"monte_carlo_samples = {samples}\n", encoding="utf-8")
    (repo / "amp").mkdir()
    (repo / AMP).write_text(single_stage(3), encoding="utf-8")
    (repo / "amp" / "amp.kicad_pro").write_text("{}\n", encoding="utf-8")
    (repo / "README.md").write_text("Designs.\n", encoding="utf-8")
    git(repo, "init", "-q", "-b", "main")
    git(repo, "add", "-A")
    git(repo, "commit", "-q", "-m", "designs")
    return repo


def edit_chain(path: Path) -> None:
    """Change the compensation resistor of the demo's chain sheet (22 kΩ -> 9.1 kΩ)."""
    text = path.read_text(encoding="utf-8")
    if text.count('"22k"') != 1:
        raise AssertionError(f"{path}: expected one 22k resistor")
    path.write_text(text.replace('"22k"', '"9.1k"'), encoding="utf-8")
