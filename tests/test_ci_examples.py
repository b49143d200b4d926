"""The CI workflows in examples/ci/ and the pre-commit hook definition, run for real.

Outside sources: the workflows are validated against the GitHub Actions workflow
schema of SchemaStore (as vendored by the check-jsonschema package) and their ``run``
steps are executed with ``bash -e`` as GitHub's runners do for a step without a
``shell`` (GitHub Actions documentation, "jobs.<job_id>.steps[*].shell"), with the
step outputs and job summary files the runner provides (GITHUB_OUTPUT,
GITHUB_STEP_SUMMARY). The hook definition is checked by pre-commit's own manifest
loader, and its entry runs under pre-commit itself as the repository's git hook. The
SARIF is validated against the SARIF 2.1.0 schema (OASIS, copy in fixtures/sarif/).
"""

from __future__ import annotations

import json
import os
import re
import subprocess
import sys
from pathlib import Path

import jsonschema
import pytest
import yaml

from .conftest import FIXTURES, ROOT
from .gitrepo import AMP, DEMO, design_repo, edit_chain, git, isolate, needs_git

pytestmark = needs_git

EXAMPLES = ROOT / "examples" / "ci"
WORKFLOWS = sorted(EXAMPLES.glob("*.yml"))
EXPRESSION = re.compile(r"\$\{\{\s*(.*?)\s*\}\}")
SARIF_SCHEMA = json.loads((FIXTURES / "sarif" / "sarif-schema-2.1.0.json").read_text(
    encoding="utf-8"))


@pytest.fixture(autouse=True)
def _isolated(monkeypatch, tmp_path):
    isolate(monkeypatch, tmp_path)


def test_there_are_workflows():
    assert [p.name for p in WORKFLOWS] == ["library.yml", "pull-request.yml"]


@pytest.mark.parametrize("workflow", WORKFLOWS, ids=lambda p: p.name)
def test_workflow_is_valid_for_github_actions(workflow):
    proc = subprocess.run([sys.executable, "-m", "check_jsonschema", "--no-cache",
                           "--builtin-schema", "vendor.github-workflows", str(workflow)],
                          capture_output=True, text=True, check=False)
    assert proc.returncode == 0, proc.stdout + proc.stderr


def test_readme_shows_the_pull_request_workflow():
    readme = (ROOT / "README.md").read_text(encoding="utf-8")
    text = (EXAMPLES / "pull-request.yml").read_text(encoding="utf-8")
    assert f"```yaml\n{text}```\n" in readme


class Runner:
    """Runs a workflow job's steps in a repository as a GitHub runner would: ``run``
    steps in bash, ``${{ }}`` expressions from a given context, step outputs read back
    from GITHUB_OUTPUT; ``uses`` steps are checked, not run: an upload must find the
    file it names."""

    def __init__(self, workflow: dict, repo: Path, context: dict[str, str], scratch: Path):
        self.workflow, self.repo, self.scratch = workflow, repo, scratch
        self.context = dict(context)
        self.uploads: dict[str, Path] = {}

    def render(self, text: str) -> str:
        def value(match: re.Match) -> str:
            if match.group(1) not in self.context:
                raise AssertionError(f"the workflow uses {match.group(0)}, which this test "
                                     "does not provide")
            return self.context[match.group(1)]

        return EXPRESSION.sub(value, str(text))

    def job(self, name: str) -> dict[str, int]:
        """Run job ``name``; the exit status of each run step by name."""
        job = self.workflow["jobs"][name]
        statuses = {}
        for number, step in enumerate(job["steps"]):
            if "uses" in step:
                self._check_action(step)
                continue
            if step.get("id") == "install":  # schemcheck is installed already
                assert "pip install" in step["run"]
                continue
            outputs = self.scratch / f"{name}-{number}.out"
            outputs.write_text("", encoding="utf-8")
            env = {**os.environ,
                   **{k: self.render(v) for k, v in self.workflow.get("env", {}).items()},
                   **{k: self.render(v) for k, v in job.get("env", {}).items()},
                   **{k: self.render(v) for k, v in step.get("env", {}).items()},
                   "GITHUB_OUTPUT": str(outputs), "CI": "true",
                   "GITHUB_STEP_SUMMARY": str(self.scratch / "summary.md")}
            script = self.scratch / f"{name}-{number}.sh"
            script.write_text(self.render(step["run"]), encoding="utf-8")
            proc = subprocess.run(["bash", "-e", str(script)], cwd=self.repo, env=env,
                                  capture_output=True, text=True, timeout=300, check=False)
            statuses[step["name"]] = proc.returncode
            self.last_stderr = proc.stderr
            for line in outputs.read_text(encoding="utf-8").splitlines():
                key, _, value = line.partition("=")
                self.context[f"steps.{step['id']}.outputs.{key}"] = value
        return statuses

    def _check_action(self, step: dict) -> None:
        action = step["uses"].split("@")[0]
        given = {k: self.render(v) for k, v in step.get("with", {}).items()}
        if action == "actions/upload-artifact":
            path = self.repo / given["path"]
            assert path.is_file(), f"{step['uses']} finds no {given['path']}"
            self.uploads[given["name"]] = path
        elif action == "github/codeql-action/upload-sarif":
            path = self.repo / given["sarif_file"]
            log = json.loads(path.read_text(encoding="utf-8"))
            errors = list(jsonschema.Draft7Validator(SARIF_SCHEMA).iter_errors(log))
            assert errors == []
            self.uploads["code scanning"] = path
        else:
            assert action in ("actions/checkout", "actions/setup-python",
                              "actions/download-artifact"), action


def load(name: str) -> dict:
    return yaml.safe_load((EXAMPLES / name).read_text(encoding="utf-8"))


def sarif_uris(path: Path) -> set[str]:
    log = json.loads(path.read_text(encoding="utf-8"))
    return {r["locations"][0]["physicalLocation"]["artifactLocation"]["uri"]
            for r in log["runs"][0]["results"]}


def pull_request(tmp_path: Path, change) -> tuple[Runner, dict[str, int]]:
    repo = design_repo(tmp_path, samples=200)
    base = git(repo, "rev-parse", "HEAD").strip()
    git(repo, "checkout", "-q", "-b", "feature")
    change(repo)
    git(repo, "commit", "-q", "-am", "the pull request's change")
    scratch = tmp_path / "runner"
    scratch.mkdir()
    runner = Runner(load("pull-request.yml"), repo,
                    {"github.event.pull_request.base.sha": base}, scratch)
    return runner, runner.job("audit")


def test_pull_request_workflow_on_a_changed_child_sheet(tmp_path):
    runner, statuses = pull_request(tmp_path, lambda repo: edit_chain(
        repo / "frontend" / "chain.kicad_sch"))
    assert statuses == {"Audit the designs this pull request changes": 0,
                        "Fail on error findings": 1}  # the demo's error findings
    checklist = runner.uploads["dc-checklist"].read_text(encoding="utf-8")
    assert [line for line in checklist.splitlines() if line.startswith("## ")] == [
        f"## {DEMO}"]
    assert (tmp_path / "runner" / "summary.md").read_text(encoding="utf-8") == checklist
    # fixtures/README.md: the acpreamp, chain and photodiode sheets carry the findings
    assert sarif_uris(runner.uploads["code scanning"]) == {
        "frontend/acpreamp.kicad_sch", "frontend/chain.kicad_sch",
        "frontend/photodiode.kicad_sch"}


def test_pull_request_workflow_on_a_clean_design(tmp_path):
    def change(repo: Path) -> None:
        path = repo / AMP
        path.write_text(path.read_text(encoding="utf-8") + "\n", encoding="utf-8")

    runner, statuses = pull_request(tmp_path, change)
    assert statuses == {"Audit the designs this pull request changes": 0,
                        "Fail on error findings": 0}
    checklist = runner.uploads["dc-checklist"].read_text(encoding="utf-8")
    assert [line for line in checklist.splitlines() if line.startswith("## ")] == [
        f"## {AMP}"]


def test_library_workflow_shards_and_merges(tmp_path):
    repo = design_repo(tmp_path, samples=200)
    scratch = tmp_path / "runner"
    scratch.mkdir()
    workflow = load("library.yml")
    shards = workflow["jobs"]["shard"]["strategy"]["matrix"]["shard"]
    for shard in shards:
        runner = Runner(workflow, repo, {"matrix.shard": str(shard),
                                         "strategy.job-total": str(len(shards))}, scratch)
        assert runner.job("shard") == {"Audit one shard": 0}
    merge = Runner(workflow, repo, {}, scratch)
    statuses = merge.job("merge")
    assert statuses == {"Merge the shards": 0, "Fail on error findings": 1}
    # the same as auditing the library at once
    whole = subprocess.run(["schemcheck", "audit", ".", "--format", "markdown"], cwd=repo,
                           capture_output=True, text=True, check=False)
    assert whole.returncode == 1
    assert merge.uploads["dc-checklist"].read_text(encoding="utf-8") == whole.stdout
    assert sarif_uris(merge.uploads["code scanning"]) == {
        f"{folder}/{sheet}.kicad_sch" for folder in ("frontend", "spare")
        for sheet in ("acpreamp", "chain", "photodiode")}


# pre-commit ----------------------------------------------------------------------------

def test_hook_definition_is_valid_for_pre_commit():
    from pre_commit.clientlib import load_manifest

    (hook,) = load_manifest(str(ROOT / ".pre-commit-hooks.yaml"))
    assert hook["id"] == "schemcheck" and hook["pass_filenames"] is False
    pattern = re.compile(hook["files"])
    assert [name for name in ("a/b.kicad_sch", "b.kicad_pro", "x/schemcheck.toml",
                              "parts.toml", "README.md", "b.kicad_pcb") if pattern.search(name)] \
        == ["a/b.kicad_sch", "b.kicad_pro", "x/schemcheck.toml", "parts.toml"]


@pytest.fixture
def hooked(tmp_path, monkeypatch):
    """A design repository whose commits go through pre-commit running our hook (as a
    local hook of language ``system``: the same entry, files and arguments, without
    pre-commit installing schemcheck into an environment of its own)."""
    from pre_commit.clientlib import load_manifest

    (hook,) = load_manifest(str(ROOT / ".pre-commit-hooks.yaml"))
    repo = design_repo(tmp_path, samples=200)
    local = {key: hook[key] for key in ("id", "name", "entry", "files", "pass_filenames",
                                        "require_serial")}
    local["language"] = "system"
    config = {"repos": [{"repo": "local", "hooks": [local]}]}
    (repo / ".pre-commit-config.yaml").write_text(yaml.safe_dump(config), encoding="utf-8")
    git(repo, "add", ".pre-commit-config.yaml")
    git(repo, "commit", "-q", "-m", "pre-commit")
    subprocess.run([sys.executable, "-m", "pre_commit", "install"], cwd=repo, check=True,
                   capture_output=True)
    monkeypatch.chdir(repo)
    return repo


def commit(repo: Path) -> tuple[int, str]:
    """Exit status and output of ``git commit`` (hooks write to standard error)."""
    done = subprocess.run(["git", "commit", "-m", "change"], cwd=repo, capture_output=True,
                          text=True, check=False)
    return done.returncode, done.stdout + done.stderr


def _touch(repo: Path, name: str, text: str = "\n") -> None:
    with open(repo / name, "a", encoding="utf-8") as handle:
        handle.write(text)


def test_hook_refuses_a_commit_with_error_findings(hooked):
    edit_chain(hooked / "frontend" / "chain.kicad_sch")
    git(hooked, "add", "frontend/chain.kicad_sch")
    head = git(hooked, "rev-parse", "HEAD")
    code, output = commit(hooked)
    assert code != 0
    assert f"design: {DEMO}" in output and "spare/" not in output
    assert "ERROR   over-budget" in output
    assert git(hooked, "rev-parse", "HEAD") == head


def test_hook_audits_the_design_of_a_staged_settings_file(hooked):
    _touch(hooked, "spare/schemcheck.toml", "seed = 2\n")
    git(hooked, "add", "spare/schemcheck.toml")
    code, output = commit(hooked)
    assert code != 0
    assert "design: spare/frontend.kicad_sch" in output and f"design: {DEMO}" not in output


def test_hook_lets_a_clean_design_through(hooked):
    _touch(hooked, AMP)
    _touch(hooked, "amp/amp.kicad_pro")
    git(hooked, "add", AMP, "amp/amp.kicad_pro")
    edit_chain(hooked / "frontend" / "chain.kicad_sch")  # changed but not staged
    code, output = commit(hooked)
    assert code == 0, output
    assert re.search(r"schemcheck DC error audit\.+Passed", output)


def test_hook_skipped_without_design_files(hooked):
    _touch(hooked, "README.md", "More.\n")
    git(hooked, "add", "README.md")
    code, output = commit(hooked)
    assert code == 0
    assert re.search(r"schemcheck DC error audit\.+\(no files to check\)Skipped", output)
