"""``schemcheck audit --shard K/N`` and ``schemcheck merge``: a library split across a
CI matrix gives, once merged, the report of the library audited at once.

Outside source: the reference is the unsplit audit of the same generated library, run
by the same command in the same test; the shard sizes follow from taking every N-th of
T designs (shard K holds ceil((T - K + 1) / N) of them).
"""

from __future__ import annotations

import json
import os
import random
import shutil
from pathlib import Path

import pytest
from click.testing import CliRunner

from schemcheck.cli import main

from .make_demo import stage
from .synth import Sheet

DESIGNS = 60


def _design(seed: int, budget: str | None) -> str:
    sheet = Sheet(project=f"lib{seed}", seed=seed)
    fields = {"Vos": f"{1 + seed % 4}mV", "Ib": "20nA", "Ios": "2nA"}
    if budget:
        fields["DC_Budget"] = budget
    stage(sheet, 76.2, 76.2, ref="U1", unit=1, value="OPX", rp="9k1", fields=fields)
    return sheet.text()


@pytest.fixture(scope="module")
def library(tmp_path_factory):
    """60 designs: nested folders (a folder's own sheets come before its subfolders' in
    discovery, unlike in path order), every seventh over its budget, one hierarchical
    project, one unreadable sheet."""
    root = tmp_path_factory.mktemp("library")
    for i in range(DESIGNS - 2):
        group = root / f"group{i % 5}"
        folder = group / "deep" if i % 3 == 0 else group
        folder.mkdir(parents=True, exist_ok=True)
        budget = "1mV" if i % 7 == 0 else "1V"
        (folder / f"z{i:02d}.kicad_sch").write_text(_design(i, budget), encoding="utf-8")
    hier = root / "group2" / "hier"
    hier.mkdir()
    parent = Sheet(project="hier", seed=8)
    parent.sheet("Child", "child.kicad_sch", 100, 50, [])
    (hier / "hier.kicad_sch").write_text(parent.text(), encoding="utf-8")
    (hier / "child.kicad_sch").write_text(_design(99, "1V"), encoding="utf-8")
    (root / "group4" / "broken.kicad_sch").write_text("(kicad_sch (version 1)",
                                                      encoding="utf-8")
    return root


def run(*args: str) -> tuple[int, str, str]:
    result = CliRunner().invoke(main, list(args))
    return result.exit_code, result.stdout, result.stderr


AUDIT = ("--samples", "0", "--no-cache", "--jobs", "1")


def shard_reports(paths: list[str], count: int, tmp_path: Path) -> list[str]:
    files = []
    for index in range(1, count + 1):
        out = str(tmp_path / f"shard{index}of{count}.json")
        code, _, err = run("audit", *paths, *AUDIT, "--shard", f"{index}/{count}", "-o", out)
        assert code in (0, 1, 2) and "Traceback" not in err
        files.append(out)
    return files


@pytest.fixture(scope="module")
def whole(library, tmp_path_factory):
    """The unsplit audit of the library plus a path that names nothing, in every format."""
    out = tmp_path_factory.mktemp("whole")
    cwd = os.getcwd()
    os.chdir(library)
    try:
        results = {}
        for fmt in ("json", "markdown", "sarif", "text"):
            target = out / f"whole.{fmt}"
            code, _, err = run("audit", ".", "missing-folder", *AUDIT, "--format", fmt,
                               "-o", str(target))
            results[fmt] = (code, target.read_text(encoding="utf-8"), err)
    finally:
        os.chdir(cwd)
    return results


def test_library_shape(whole):
    report = json.loads(whole["json"][1])
    assert len(report["designs"]) == DESIGNS + 1  # and the path that names nothing
    assert whole["json"][0] == 2  # the unreadable sheet and the missing path


@pytest.mark.parametrize("count", [1, 4, 7, 70], ids=lambda n: f"{n}-shards")
def test_sharded_and_merged_equals_unsharded(library, whole, tmp_path, monkeypatch, count):
    monkeypatch.chdir(library)
    reports = shard_reports([".", "missing-folder"], count, tmp_path)
    sizes = [len(json.loads(Path(f).read_text(encoding="utf-8"))["designs"]) for f in reports]
    total = DESIGNS + 1
    assert sizes == [-(-(total - k) // count) for k in range(count)]  # ceil((T - K + 1) / N)
    random.Random(count).shuffle(reports)  # any order
    for fmt in ("json", "markdown", "sarif", "text"):
        target = tmp_path / f"merged.{fmt}"
        code, _, err = run("merge", *reports, "--format", fmt, "-o", str(target))
        expected_code, expected_text, expected_err = whole[fmt]
        assert target.read_text(encoding="utf-8") == expected_text, fmt
        assert (code, err) == (expected_code, expected_err), fmt


def test_exit_status_as_if_audited_at_once(library, tmp_path, monkeypatch):
    monkeypatch.chdir(library)
    # group0 and group1 hold four designs over their budget (seeds 0, 21, 35 and 56)
    code, _, _ = run("audit", "group0", "group1", *AUDIT)
    assert code == 1
    reports = shard_reports(["group0", "group1"], 5, tmp_path)
    alone = [run("audit", "group0", "group1", *AUDIT, "--shard", f"{k}/5")[0]
             for k in range(1, 6)]
    assert alone == [1, 0, 0, 1, 0]  # a shard's own status says little about the whole
    assert run("merge", *reports)[0] == 1
    assert run("merge", *reports, "--fail-on", "info")[0] == 1


def test_split_is_the_same_from_any_checkout(library, tmp_path, monkeypatch):
    elsewhere = tmp_path / "another" / "checkout"
    shutil.copytree(library, elsewhere)
    members = []
    for root in (library, elsewhere):
        monkeypatch.chdir(root)
        _, out, _ = run("audit", ".", *AUDIT, "--shard", "3/4")
        members.append([d["file"] for d in json.loads(out)["designs"]])
    assert members[0] == members[1] and len(members[0]) == 15


def test_shards_cover_every_design_once(library, monkeypatch):
    monkeypatch.chdir(library)
    seen = []
    for index in (1, 2, 3):
        _, out, _ = run("audit", ".", *AUDIT, "--shard", f"{index}/3")
        report = json.loads(out)
        assert report["shard"]["index"] == index and report["shard"]["total"] == DESIGNS
        seen += report["shard"]["positions"]
    assert sorted(seen) == list(range(DESIGNS))


def test_shards_sharing_a_cache_keep_each_copy_its_own_name(tmp_path, monkeypatch):
    """Two identical designs in two folders share one results-store key (contents and
    relative paths); a shard reading the other's stored result reports its own files."""
    for folder in ("a", "b"):
        (tmp_path / folder).mkdir()
        (tmp_path / folder / "amp.kicad_sch").write_text(_design(1, "1mV"), encoding="utf-8")
    monkeypatch.chdir(tmp_path)
    cache = ("--samples", "0", "--jobs", "1", "--cache-file", str(tmp_path / "c.sqlite3"))
    reports = []
    for index in (1, 2):
        reports.append(str(tmp_path / f"s{index}.json"))
        run("audit", "a", "b", *cache, "--shard", f"{index}/2", "-o", reports[-1])
    merged = json.loads(run("merge", *reports)[1])
    assert merged["stats"] == {"designs": 2}  # the run's cache use is not in the report
    import sqlite3

    with sqlite3.connect(tmp_path / "c.sqlite3") as db:  # one stored result, shared
        assert db.execute("SELECT COUNT(*) FROM results").fetchone() == (1,)
    assert [d["file"] for d in merged["designs"]] == ["a/amp.kicad_sch", "b/amp.kicad_sch"]
    assert [f["file"] for d in merged["designs"] for f in d["findings"]] == [
        "a/amp.kicad_sch", "b/amp.kicad_sch"]  # over-budget on each


@pytest.mark.parametrize("text", ["0/4", "5/4", "a/b", "4", "1/0", ""])
def test_bad_shard_is_a_usage_error(text):
    code, _, err = run("audit", ".", "--shard", text)
    assert code == 2
    assert err.splitlines()[-1] == (f"Error: Invalid value for '--shard': expected K/N with "
                                    f"1 <= K <= N (e.g. 2/4), found {text!r}")


@pytest.fixture
def shards(library, tmp_path, monkeypatch):
    monkeypatch.chdir(library)
    return shard_reports(["group3"], 3, tmp_path)


def test_missing_shard(shards):
    code, out, err = run("merge", shards[0], shards[2])
    assert (code, out) == (2, "")
    assert err == "Error: shard 2/3 missing; expected all 3 shards of the run\n"


def test_shard_given_twice(shards):
    code, _, err = run("merge", *shards, shards[1])
    assert code == 2
    assert err == (f"Error: {shards[1]}: shard 2/3 is given twice (also {shards[1]}); "
                   "expected each shard once\n")


def test_shards_of_different_runs(shards, library, tmp_path):
    other = shard_reports(["group3"], 2, tmp_path)
    code, _, err = run("merge", shards[0], other[1])
    assert code == 2
    assert err.startswith(f"Error: {other[1]}: shard 2/2 of ")
    assert err.endswith("; expected the shards of one run\n")


def test_whole_and_shard_reports_do_not_mix(shards, tmp_path):
    whole = tmp_path / "whole.json"
    run("audit", "group3", *AUDIT, "-o", str(whole))
    code, _, err = run("merge", shards[0], str(whole))
    assert code == 2
    assert err == (f"Error: {whole}: not a shard report, unlike {shards[0]}; expected every "
                   "report to come from --shard K/N, or none\n")


def test_reports_without_shards_are_joined_in_order(library, tmp_path, monkeypatch):
    monkeypatch.chdir(library)
    parts = []
    for folder in ("group1", "group0"):
        parts.append(str(tmp_path / f"{folder}.json"))
        run("audit", folder, *AUDIT, "-o", parts[-1])
    code, out, _ = run("merge", *parts)
    _, expected, _ = run("audit", "group1", "group0", *AUDIT)
    assert code == 1 and json.loads(out) == json.loads(expected)


@pytest.mark.parametrize(("content", "message"), [
    pytest.param('{"designs": [', "bad.json:1:14: expected a JSON report of schemcheck "
                 "audit: Expecting value", id="truncated"),
    pytest.param("[1, 2]", "bad.json: expected a JSON report of schemcheck audit (an object "
                 "with 'designs'), found list", id="not-an-object"),
    pytest.param('{"designs": [{"file": "a.kicad_sch"}]}',
                 "bad.json: expected a report of schemcheck audit --format json: "
                 "designs.0.assumptions: Missing data for required field.", id="no-field"),
    pytest.param('{"designs": [], "colour": "red"}',
                 "bad.json: expected a report of schemcheck audit --format json: colour: "
                 "Unknown field.", id="unknown-key"),
])
def test_bad_report_is_one_clear_line(tmp_path, monkeypatch, content, message):
    monkeypatch.chdir(tmp_path)
    (tmp_path / "bad.json").write_text(content, encoding="utf-8")
    code, out, err = run("merge", "bad.json")
    assert (code, out) == (2, "")
    assert err == f"Error: {message}\n"


def test_reports_of_different_versions(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    for name, version in (("a.json", "0.1.0"), ("b.json", "9.9.9")):
        (tmp_path / name).write_text(json.dumps(
            {"tool": {"name": "schemcheck", "version": version}, "designs": []}),
            encoding="utf-8")
    code, _, err = run("merge", "a.json", "b.json")
    assert code == 2
    assert err == ("Error: expected reports of one schemcheck version, found a.json (0.1.0), "
                   "b.json (9.9.9)\n")
