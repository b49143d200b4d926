"""``schemcheck audit --changed-since REV`` and ``--staged``: the designs a change touches.

Outside sources: what counts as changed is git's documented behaviour — ``git diff
<commit>`` compares the working tree with the commit, ``git diff --cached`` the index
with HEAD, ``git ls-files --others --exclude-standard`` lists untracked files that are
not ignored (git-diff(1), git-ls-files(1)). Which design each file belongs to is known
by construction: the repositories are built here from the demo (fixtures/README.md
lists its sheets, settings file and parts library) and a generated one-stage design.
"""

from __future__ import annotations

import json
import os
import shutil
from pathlib import Path

import pytest
from click.testing import CliRunner

from schemcheck.cli import main

from .gitrepo import (
    AMP,
    DEMO,
    SPARE,
    design_repo,
    edit_chain,
    git,
    isolate,
    needs_git,
    single_stage,
)

pytestmark = needs_git


@pytest.fixture(autouse=True)
def _isolated(monkeypatch, tmp_path):
    isolate(monkeypatch, tmp_path)


@pytest.fixture
def repo(tmp_path, monkeypatch):
    repo = design_repo(tmp_path)
    monkeypatch.chdir(repo)
    return repo


def audit(*args: str) -> tuple[int, dict | str, str]:
    result = CliRunner().invoke(main, ["audit", *args, "--no-cache", "--jobs", "1"])
    out = result.stdout
    try:
        out = json.loads(out)
    except ValueError:
        pass
    return result.exit_code, out, result.stderr


def picked(*args: str) -> list[str]:
    code, report, err = audit(*args)
    assert code in (0, 1, 2) and "Traceback" not in err, err
    return [d["file"] for d in report["designs"]]


def _append(path: str, text: str) -> None:
    with open(path, "a", encoding="utf-8") as handle:
        handle.write(text)


CHANGES = {
    # a child sheet of the demo: the design through its root, nothing else
    "child-sheet": (lambda: edit_chain(Path("frontend/chain.kicad_sch")), [DEMO]),
    "root-sheet": (lambda: _append(DEMO, "\n"), [DEMO]),
    "settings-file": (lambda: _append("spare/schemcheck.toml", "seed = 2\n"), [SPARE]),
    "parts-library": (lambda: _append("frontend/parts.toml", "# checked\n"), [DEMO]),
    "settings-added": (lambda: Path("amp/schemcheck.toml").write_text("seed = 3\n"), [AMP]),
    "settings-deleted": (lambda: os.remove("spare/schemcheck.toml"), [SPARE]),
    "child-sheet-deleted": (lambda: os.remove("frontend/acpreamp.kicad_sch"), [DEMO]),
    "project-file": (lambda: _append("amp/amp.kicad_pro", "\n"), [AMP]),
    "new-design": (lambda: (os.mkdir("new"), Path("new/new.kicad_sch").write_text(
        single_stage(9), encoding="utf-8")), ["new/new.kicad_sch"]),
    "two-designs": (lambda: (edit_chain(Path("frontend/chain.kicad_sch")),
                             _append(AMP, "\n")), [AMP, DEMO]),
    "unrelated-file": (lambda: _append("README.md", "More.\n"), []),
    "nothing": (lambda: None, []),
}


@pytest.mark.parametrize("change", CHANGES)
def test_changed_since_picks_exactly_the_touched_designs(repo, change):
    make, expected = CHANGES[change]
    make()
    assert picked("--changed-since", "HEAD") == expected


def test_child_sheet_change_limits_checklist_and_sarif(repo):
    edit_chain(repo / "frontend" / "chain.kicad_sch")
    code, text, _ = audit("--changed-since", "main", "--format", "markdown")
    assert code == 1  # the demo's own error findings (fixtures/README.md)
    assert [line for line in text.splitlines() if line.startswith("## ")] == [f"## {DEMO}"]
    code, log, _ = audit("--changed-since", "main", "--format", "sarif")
    uris = {r["locations"][0]["physicalLocation"]["artifactLocation"]["uri"]
            for r in log["runs"][0]["results"]}
    assert code == 1 and uris and all(uri.startswith("frontend/") for uri in uris)


def test_committed_changes_on_a_branch(repo):
    git(repo, "checkout", "-q", "-b", "feature")
    edit_chain(repo / "frontend" / "chain.kicad_sch")
    git(repo, "commit", "-q", "-am", "compensation resistor")
    assert picked("--changed-since", "main") == [DEMO]
    assert picked("--changed-since", "HEAD~1") == [DEMO]
    code, report, err = audit("--changed-since", "HEAD")
    assert (code, report["designs"]) == (0, [])
    assert err == "No design has a file changed since HEAD; nothing to audit.\n"


def test_paths_limit_the_search(repo):
    edit_chain(repo / "frontend" / "chain.kicad_sch")
    assert picked("--changed-since", "main", "spare") == []
    assert picked("--changed-since", "main", "frontend", "spare") == [DEMO]


def test_paths_outside_the_working_folder(repo, tmp_path, monkeypatch):
    edit_chain(repo / "frontend" / "chain.kicad_sch")
    monkeypatch.chdir(tmp_path)
    assert picked("--changed-since", "main", str(repo)) == [f"repo/{DEMO}"]


@pytest.mark.parametrize("option", ["--parts", "--settings"])
def test_shared_file_named_on_the_command_line(repo, option):
    os.mkdir("shared")
    shutil.copy("frontend/parts.toml" if option == "--parts" else "spare/schemcheck.toml",
                "shared/common.toml")
    if option == "--settings":  # its parts library, relative to it, must exist
        shutil.copy("frontend/parts.toml", "shared/parts.toml")
    git(repo, "add", "-A")
    git(repo, "commit", "-q", "-m", "shared file")
    assert picked("--changed-since", "HEAD", option, "shared/common.toml") == []
    _append("shared/common.toml", "# edited\n")
    assert picked("--changed-since", "HEAD", option, "shared/common.toml") == [AMP, DEMO, SPARE]
    assert picked("--changed-since", "HEAD") == []  # not used without the option


def test_staged_only(repo):
    edit_chain(repo / "frontend" / "chain.kicad_sch")
    _append(AMP, "\n")  # changed, not staged
    git(repo, "add", "frontend/chain.kicad_sch")
    assert picked("--staged") == [DEMO]
    code, report, err = audit("--staged", "spare")
    assert (code, report["designs"]) == (0, [])
    assert err == "No design has a file staged for commit; nothing to audit.\n"


def test_staged_in_a_repository_without_commits(tmp_path, monkeypatch):
    repo = tmp_path / "fresh"
    repo.mkdir()
    git(repo, "init", "-q")
    (repo / "amp.kicad_sch").write_text(single_stage(4), encoding="utf-8")
    (repo / "other.kicad_sch").write_text(single_stage(5), encoding="utf-8")
    git(repo, "add", "amp.kicad_sch")
    monkeypatch.chdir(repo)
    assert picked("--staged") == ["amp.kicad_sch"]


def test_outside_a_repository_is_one_clear_error(tmp_path, monkeypatch):
    plain = tmp_path / "plain"
    plain.mkdir()
    (plain / "amp.kicad_sch").write_text(single_stage(1), encoding="utf-8")
    monkeypatch.chdir(plain)
    code, out, err = audit("--changed-since", "main")
    assert code == 2 and out == ""
    assert err.startswith(f"Error: {plain.resolve()}: not inside a git working tree (")
    assert err.endswith("); selecting changed designs compares files with a git revision, so "
                        "expected a path in a git repository\n")
    assert "Traceback" not in err


def test_unknown_revision_is_one_clear_error(repo):
    code, out, err = audit("--changed-since", "no-such-branch")
    assert (code, out) == (2, "")
    assert err == (f"Error: {os.path.realpath(repo)}: git knows no commit 'no-such-branch'; "
                   "expected a commit, branch or tag (in a shallow CI checkout, fetch the "
                   "history that holds it)\n")
    code, _, err = audit("--changed-since", "--output=stolen.txt")
    assert code == 2 and "git knows no commit '--output=stolen.txt'" in err
    assert not (repo / "stolen.txt").exists()


def test_git_not_installed(repo, tmp_path, monkeypatch):
    empty = tmp_path / "empty-bin"
    empty.mkdir()
    monkeypatch.setenv("PATH", str(empty))
    code, _, err = audit("--changed-since", "main")
    assert code == 2
    assert err == ("Error: the git command was not found; selecting changed designs needs git "
                   "installed and on PATH\n")


@pytest.mark.parametrize(("args", "message"), [
    pytest.param(["--changed-since", "main", "--staged"],
                 "Error: --changed-since and --staged each choose the designs to audit: give "
                 "one of them", id="both"),
    pytest.param([], "Error: Missing argument 'PATHS...' (or give --changed-since REV or "
                     "--staged to audit changed designs under the current folder).",
                 id="no-paths"),
])
def test_bad_usage(repo, args, message):
    code, _, err = audit(*args)
    assert code == 2
    assert err.splitlines()[-1] == message
