"""Batch audit of a library of designs, the results cache and the project settings.

Outside source for the expectations: the designs are generated here with known
content (50 good single-stage designs, 3 broken ones, one hierarchical project);
the SQLite behaviour relied on (WAL journal, committed rows survive a killed writer)
is SQLite's documented behaviour (sqlite.org, "Write-Ahead Logging").
"""

from __future__ import annotations

import json
import os
import signal
import subprocess
import sys
import time

import pytest
from click.testing import CliRunner

from schemcheck.cli import main
from schemcheck.run.batch import audit_paths, exit_status
from schemcheck.run.cache import ResultCache

from .conftest import FIXTURES, needs_proc, session_processes, wait_session_empty
from .make_demo import stage
from .synth import Sheet

GOOD = 50


def _design(seed: int) -> str:
    sheet = Sheet(project=f"d{seed}", seed=seed)
    stage(sheet, 76.2, 76.2, ref="U1", unit=1, value="OPX", rp="9k1",
          fields={"Vos": f"{1 + seed % 5}mV", "Ib": "20nA", "Ios": "2nA"})
    return sheet.text()


@pytest.fixture(scope="module")
def library(tmp_path_factory):
    root = tmp_path_factory.mktemp("designs")
    for i in range(GOOD):
        folder = root / f"project{i:02d}"
        folder.mkdir()
        (folder / f"board{i:02d}.kicad_sch").write_text(_design(i), encoding="utf-8")
        (folder / f"board{i:02d}.kicad_pro").write_text("{}", encoding="utf-8")
    broken = root / "broken"
    broken.mkdir()
    (broken / "truncated.kicad_sch").write_text(_design(99)[:5000], encoding="utf-8")
    (broken / "notes.kicad_sch").write_text("not a schematic at all\n", encoding="utf-8")
    top = Sheet(project="lost", seed=7)
    top.sheet("Gone", "gone.kicad_sch", 100, 50, [])
    (broken / "lost.kicad_sch").write_text(top.text(), encoding="utf-8")
    # a hierarchical project: the child is audited once, through its root
    hier = root / "hier"
    hier.mkdir()
    parent = Sheet(project="hier", seed=8)
    parent.sheet("Child", "child.kicad_sch", 100, 50, [])
    (hier / "hier.kicad_sch").write_text(parent.text(), encoding="utf-8")
    (hier / "child.kicad_sch").write_text(_design(5), encoding="utf-8")
    return root


def test_every_good_design_audited_and_broken_ones_reported(library):
    report = audit_paths([str(library)], overrides={"mc_samples": 200}, jobs=2)
    files = {os.path.basename(d["file"]): d for d in report["designs"]}
    assert len(files) == GOOD + 3 + 1  # child.kicad_sch is not a design of its own
    assert "child.kicad_sch" not in files
    good = [d for d in report["designs"] if not d["errors"]]
    assert len(good) == GOOD + 1
    assert all(len(d["stages"]) == 1 for d in good if "board" in d["file"])
    bad = {os.path.basename(d["file"]): d["errors"][0] for d in report["designs"] if d["errors"]}
    assert set(bad) == {"truncated.kicad_sch", "notes.kicad_sch", "lost.kicad_sch"}
    assert "expected ')' but the file ends here" in bad["truncated.kicad_sch"]
    assert "expected a KiCad schematic" in bad["notes.kicad_sch"]
    assert "expected the child sheet file 'gone.kicad_sch'" in bad["lost.kicad_sch"]
    assert all(d["findings"][0]["rule"] == "unreadable-design" for d in report["designs"]
               if d["errors"])
    assert exit_status(report, "error") == 2


def test_cli_exit_status(library, tmp_path):
    runner = CliRunner()
    cache = tmp_path / "c.sqlite3"
    good = str(library / "project01")
    result = runner.invoke(main, ["audit", good, "--cache-file", str(cache), "--samples", "0"])
    assert result.exit_code == 0
    result = runner.invoke(main, ["audit", good, "--cache-file", str(cache), "--samples", "0",
                                  "--budget", "1mV"])
    assert result.exit_code == 1  # over-budget errors
    result = runner.invoke(main, ["audit", str(library / "broken"), "--no-cache"])
    assert result.exit_code == 2
    assert "Traceback" not in result.output


def test_cache_returns_identical_results_and_reaudits_changes(library, tmp_path):
    cache_path = str(tmp_path / "results.sqlite3")
    overrides = {"mc_samples": 200}
    cache = ResultCache(cache_path)
    first = audit_paths([str(library)], overrides=overrides, jobs=1, cache=cache)
    second = audit_paths([str(library)], overrides=overrides, jobs=1, cache=cache)
    assert second["designs"] == first["designs"]
    assert second["stats"] == {"designs": GOOD + 4}
    assert second["run"] == {"from_cache": GOOD + 1, "audited": 3}
    changed = library / "project03" / "board03.kicad_sch"
    original = changed.read_text(encoding="utf-8")
    try:
        changed.write_text(original.replace('"5mV"', '"4mV"').replace('"4mV"', '"9mV"'),
                           encoding="utf-8")
        third = audit_paths([str(library)], overrides=overrides, jobs=1, cache=cache)
    finally:
        changed.write_text(original, encoding="utf-8")
    assert third["run"]["audited"] == 4
    other = audit_paths([str(library)], overrides={"mc_samples": 100}, jobs=1, cache=cache)
    assert other["run"]["from_cache"] == 0  # settings are part of the key
    cache.close()


def test_killed_run_leaves_a_readable_database(library, tmp_path):
    cache_path = tmp_path / "killed.sqlite3"
    # the full per-sample solve keeps each design busy long enough to be killed mid-run
    command = [sys.executable, "-m", "schemcheck", "audit", str(library), "--jobs", "1",
               "--cache-file", str(cache_path), "--samples", "50000", "--mc-solve", "full",
               "--format", "json"]
    proc = subprocess.Popen(command, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    deadline = time.time() + 60
    rows = 0
    while time.time() < deadline and proc.poll() is None:
        time.sleep(0.2)
        if cache_path.exists():
            try:
                cache = ResultCache(str(cache_path))
                rows = cache.db.execute("SELECT count(*) FROM results").fetchone()[0]
                cache.close()
            except Exception:  # noqa: BLE001 - the writer may hold it for a moment
                rows = 0
            if rows >= 3:
                break
    proc.send_signal(signal.SIGKILL)
    proc.wait()
    cache = ResultCache(str(cache_path))
    assert cache.warnings == []
    count = cache.db.execute("SELECT count(*) FROM results").fetchone()[0]
    assert 3 <= count < GOOD + 1
    for (text,) in cache.db.execute("SELECT result FROM results"):
        assert json.loads(text)["stages"]  # every stored design is whole
    cache.close()


@needs_proc
def test_killed_batch_leaves_no_worker(library):
    # Outside source: the process table (Linux /proc). A batch killed with SIGKILL cannot
    # stop its workers itself; each worker must notice and end (a parent-death check).
    command = [sys.executable, "-m", "schemcheck", "audit", str(library), "--jobs", "2",
               "--no-cache", "--samples", "20000", "--format", "json"]
    proc = subprocess.Popen(command, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL,
                            start_new_session=True)
    try:
        deadline = time.time() + 60
        while time.time() < deadline and len(session_processes(proc.pid)) < 3:
            time.sleep(0.1)  # the batch and its two workers
        assert len(session_processes(proc.pid)) >= 3, "the batch never started its workers"
        proc.send_signal(signal.SIGKILL)
        proc.wait()
        left = wait_session_empty(proc.pid)
    finally:
        if proc.poll() is None:
            proc.kill()
            proc.wait()
    assert left == []


@pytest.mark.parametrize("content", [b"this is not a database at all" * 100, "foreign"],
                         ids=["garbage", "foreign-sqlite"])
def test_corrupt_or_foreign_database_is_rebuilt(tmp_path, content):
    path = tmp_path / "results.sqlite3"
    if content == "foreign":
        import sqlite3

        db = sqlite3.connect(path)
        db.execute("CREATE TABLE results (key TEXT, value TEXT)")
        db.execute("INSERT INTO results VALUES ('k', 'v')")
        db.commit()
        db.close()
    else:
        path.write_bytes(content)
    cache = ResultCache(str(path))
    assert len(cache.warnings) == 1 and "moved to" in cache.warnings[0]
    assert cache.get("k") is None
    result = {"file": "root", "stages": [], "findings": [], "assumptions": [],
              "not_analysed": [], "settings": {}, "errors": []}
    cache.put("k", "root", result)
    assert cache.get("k") == result
    cache.close()


def test_settings_file_and_overrides(tmp_path):
    (tmp_path / "board.kicad_sch").write_text(_design(1), encoding="utf-8")
    (tmp_path / "schemcheck.toml").write_text(
        'temperature_range = [-40, 85]\ndefault_budget = "50mV"\nrules_off = ["over-budget"]\n',
        encoding="utf-8")
    report = audit_paths([str(tmp_path)], overrides={"mc_samples": 0}, jobs=1)
    design = report["designs"][0]
    assert design["settings"]["temperature_range_c"] == [-40.0, 85.0]
    assert design["stages"][0]["budget_v"] == pytest.approx(0.05)
    report = audit_paths([str(tmp_path)], overrides={"mc_samples": 0, "temp_range": (0.0, 50.0),
                                                     "given": ("temp_range",)}, jobs=1)
    assert report["designs"][0]["settings"]["temperature_range_c"] == [0.0, 50.0]


def test_unknown_settings_key_is_named(tmp_path):
    (tmp_path / "board.kicad_sch").write_text(_design(1), encoding="utf-8")
    (tmp_path / "schemcheck.toml").write_text("temprange = [0, 70]\n", encoding="utf-8")
    report = audit_paths([str(tmp_path)], jobs=1)
    error = report["designs"][0]["errors"][0]
    assert error.startswith(str(tmp_path / "schemcheck.toml"))
    assert "unknown key 'temprange'" in error


@pytest.mark.parametrize("row", ["5", '{"x": 1}', "[]", '{"file": 1}', "null",
                                 '{"file": "a", "stages": [], "findings": [{"severity": "fatal"}],'
                                 ' "assumptions": [], "not_analysed": [], "settings": {},'
                                 ' "errors": []}', '{"stages": NaN}'],
                         ids=["number", "object", "list", "wrong-type", "null",
                              "bad-severity", "nan"])
def test_cache_row_that_is_json_but_not_a_result(tmp_path, row):
    # Outside source: the expected report is the one audited afresh, without a cache.
    (tmp_path / "d").mkdir()
    (tmp_path / "d" / "board.kicad_sch").write_text(_design(2), encoding="utf-8")
    fresh = audit_paths([str(tmp_path / "d")], overrides={"mc_samples": 0}, jobs=1)
    cache = ResultCache(str(tmp_path / "results.sqlite3"))
    audit_paths([str(tmp_path / "d")], overrides={"mc_samples": 0}, jobs=1, cache=cache)
    with cache.db:
        cache.db.execute("UPDATE results SET result = ?", (row,))
    again = audit_paths([str(tmp_path / "d")], overrides={"mc_samples": 0}, jobs=1, cache=cache)
    cache.close()
    assert again["designs"] == fresh["designs"]
    assert again["run"]["audited"] == 1
    assert len(again["warnings"]) == 1 and "could not read a cached result" in again["warnings"][0]


# --- Regressions: one resolver, the cache, folders, one design's failure -------------------


def stage_sheet(vos: str, seed: int = 5, rp: str = "9k1") -> str:
    sheet = Sheet(project="fallback", seed=seed)
    stage(sheet, 76.2, 76.2, ref="U1", unit=1, value="OPX", rp=rp,
          fields={"Vos": vos, "Ib": "20nA", "Ios": "2nA"})
    return sheet.text()


def fallback_design(folder, vos: str = "1mV"):
    """root.kicad_sch places sub/a.kicad_sch, which places b.kicad_sch: there is no
    sub/b.kicad_sch, so the reader finds b relative to the root's folder."""
    (folder / "sub").mkdir(parents=True, exist_ok=True)
    root = Sheet(project="fallback", seed=1)
    root.sheet("A", "sub/a.kicad_sch", 100, 50, [])
    (folder / "root.kicad_sch").write_text(root.text(), encoding="utf-8")
    middle = Sheet(project="fallback", seed=2)
    middle.sheet("B", "b.kicad_sch", 100, 50, [])
    (folder / "sub" / "a.kicad_sch").write_text(middle.text(), encoding="utf-8")
    (folder / "b.kicad_sch").write_text(stage_sheet(vos), encoding="utf-8")
    return folder / "root.kicad_sch"


def test_cache_sees_an_edit_of_a_child_found_through_the_root_folder(tmp_path):
    # Guards: the cache key covers every sheet the reader reads, a child found through
    # the root folder included; an edit of it (Vos 1 mV -> 7 mV) is audited afresh.
    # Expected Vos: the value written in the edited file.
    design = tmp_path / "design"
    root = fallback_design(design, vos="1mV")
    cache = ResultCache(str(tmp_path / "results.sqlite3"))
    first = audit_paths([str(root)], overrides={"mc_samples": 0}, jobs=1, cache=cache)
    assert first["designs"][0]["stages"][0]["params"]["vos"] == pytest.approx(1e-3)
    fallback_design(design, vos="7mV")
    second = audit_paths([str(root)], overrides={"mc_samples": 0}, jobs=1, cache=cache)
    cache.close()
    assert second["designs"][0]["stages"][0]["params"]["vos"] == pytest.approx(7e-3)
    # and the child is audited once, through its root, not as a design of its own
    third = audit_paths([str(design)], overrides={"mc_samples": 0}, jobs=1)
    assert [os.path.basename(d["file"]) for d in third["designs"]] == ["root.kicad_sch"]


def test_service_key_follows_an_edit_of_a_child_found_through_the_root_folder(tmp_path):
    # Guards: the service's identical-submission key covers the same files.
    from schemcheck.run.batch import submission_key

    root = fallback_design(tmp_path, vos="1mV")
    before = submission_key([str(root)], {})
    fallback_design(tmp_path, vos="7mV")
    assert submission_key([str(root)], {}) != before


def copied_designs(folder):
    """One hierarchical design (a bias-resistor mismatch in its child sheet) copied into
    two revision folders, byte for byte."""
    for rev in ("rev1", "rev2"):
        (folder / rev).mkdir(parents=True)
        top = Sheet(project="board", seed=11)
        top.sheet("Amp", "amp.kicad_sch", 100, 50, [])
        (folder / rev / "board.kicad_sch").write_text(top.text(), encoding="utf-8")
        (folder / rev / "amp.kicad_sch").write_text(stage_sheet("1mV", rp="22k"),
                                                      encoding="utf-8")


@pytest.mark.parametrize("fmt", ["json", "markdown", "sarif"])
def test_warm_run_is_byte_identical_for_copied_designs(tmp_path, monkeypatch, fmt):
    # Guards: cached results are path-independent and put back where each design lies,
    # so a warm run gives the cold run's bytes, and neither copy hides the other.
    # Expected: the cold run itself (no cache involved in what it reports).
    copied_designs(tmp_path / "designs")
    monkeypatch.chdir(tmp_path)
    command = ["audit", "designs", "--format", fmt, "--samples", "0", "--jobs", "1",
               "--cache-file", str(tmp_path / f"{fmt}.sqlite3")]
    cold = CliRunner().invoke(main, command)
    warm = CliRunner().invoke(main, command)
    assert cold.exit_code == warm.exit_code == 0  # a warning only
    assert warm.stdout_bytes == cold.stdout_bytes
    children = {os.path.join("designs", rev, "amp.kicad_sch") for rev in ("rev1", "rev2")}
    if fmt == "json":
        designs = json.loads(cold.stdout)["designs"]
        assert {d["file"] for d in designs} == {
            os.path.join("designs", rev, "board.kicad_sch") for rev in ("rev1", "rev2")}
        assert {f["file"] for d in designs for f in d["findings"]} == children
    elif fmt == "sarif":
        results = json.loads(cold.stdout)["runs"][0]["results"]
        assert {r["locations"][0]["physicalLocation"]["artifactLocation"]["uri"]
                for r in results} == {c.replace(os.sep, "/") for c in children}


def test_cached_result_keeps_no_path_of_the_design(tmp_path):
    # Guards: what the cache stores names no folder of the design it came from.
    copied_designs(tmp_path)
    cache = ResultCache(str(tmp_path / "results.sqlite3"))
    audit_paths([str(tmp_path / "rev1")], overrides={"mc_samples": 0}, jobs=1, cache=cache)
    (stored,) = [row[0] for row in cache.db.execute("SELECT result FROM results")]
    cache.close()
    assert str(tmp_path) not in stored


@pytest.mark.parametrize("jobs", ["1", "2"], ids=["in-process", "worker-processes"])
def test_unexpected_error_in_one_design_is_that_designs_error(library, monkeypatch, jobs):
    # Guards: an error that is not the input's fault, inside one design's audit, becomes
    # that design's error (exit 2, the file named); the batch goes on.
    import multiprocessing

    import schemcheck.audit

    if jobs != "1" and multiprocessing.get_start_method() != "fork":
        pytest.skip("worker processes see the replaced function only when forked")

    real = schemcheck.audit.audit_netlist

    def failing(netlist, *args, **kwargs):
        if netlist.source.endswith("board07.kicad_sch"):
            raise ZeroDivisionError("float division by zero")
        return real(netlist, *args, **kwargs)

    monkeypatch.setattr(schemcheck.audit, "audit_netlist", failing)
    result = CliRunner().invoke(main, ["audit", str(library / "project07"),
                                       str(library / "project08"), "--no-cache", "--jobs", jobs,
                                       "--samples", "0"])
    assert result.exit_code == 2
    assert "Traceback" not in result.output
    designs = {os.path.basename(d["file"]): d for d in json.loads(result.stdout)["designs"]}
    assert len(designs["board08.kicad_sch"]["stages"]) == 1
    failed = designs["board07.kicad_sch"]
    assert [f["rule"] for f in failed["findings"]] == ["audit-failed"]
    assert failed["errors"][0].startswith(str(library / "project07" / "board07.kicad_sch"))
    assert "ZeroDivisionError: float division by zero" in failed["errors"][0]
    assert "board07.kicad_sch" in result.stderr


def test_worker_process_lost_is_that_designs_error(library):
    # Guards: a worker process that dies while auditing one design loses that design
    # only (the pool's error is turned into the design's error).
    from concurrent.futures.process import BrokenProcessPool

    from schemcheck.run.batch import _chunk_outcome
    from schemcheck.settings import Settings

    class Lost:
        def result(self):
            raise BrokenProcessPool("a child process terminated abruptly")

    root = str(library / "project01" / "board01.kicad_sch")
    (result,) = _chunk_outcome(Lost(), [(root, Settings())])
    assert result["findings"][0]["rule"] == "audit-failed" and result["errors"]
    assert result["errors"][0].startswith(root)


def test_folder_of_exported_netlists_is_audited(tmp_path):
    # Guards: `audit FOLDER` reads the editor's exported netlists (.net, .xml) too; a
    # netlist beside the schematic it was exported from is not audited twice.
    netlists = FIXTURES / "reader" / "netlists"
    (tmp_path / "small.net").write_bytes((netlists / "small.net").read_bytes())
    (tmp_path / "other.xml").write_bytes((netlists / "small.xml").read_bytes())
    (tmp_path / "notes.xml").write_text("<notes>not a netlist</notes>\n", encoding="utf-8")
    (tmp_path / "board").mkdir()
    (tmp_path / "board" / "board.kicad_sch").write_text(_design(3), encoding="utf-8")
    (tmp_path / "board" / "board.net").write_bytes((netlists / "small.net").read_bytes())
    report = audit_paths([str(tmp_path)], overrides={"mc_samples": 0}, jobs=1)
    files = sorted(os.path.relpath(d["file"], tmp_path) for d in report["designs"])
    assert files == [os.path.join("board", "board.kicad_sch"), "other.xml", "small.net"]
    assert all(not d["errors"] for d in report["designs"])


def test_folder_without_a_design_is_an_error(tmp_path):
    # Guards: a folder holding no design at all is exit 2 with a message, not a silent 0.
    (tmp_path / "README.txt").write_text("nothing to audit\n", encoding="utf-8")
    result = CliRunner().invoke(main, ["audit", str(tmp_path), "--no-cache"])
    assert result.exit_code == 2
    assert result.stderr == (
        f"Error: {tmp_path}: expected a KiCad schematic (.kicad_sch) or a netlist exported by "
        "the schematic editor (.net, .xml) in this folder or below it, found none\n")


def test_unwritable_cache_folder_falls_back_to_no_cache(library, tmp_path):
    # Guards: a cache that cannot be created is one warning line, and the audit still runs
    # (exit status from the findings, not 1 from a traceback).
    blocker = tmp_path / "not-a-folder"
    blocker.write_text("a file where the cache folder should be\n", encoding="utf-8")
    cache_file = blocker / "results.sqlite3"
    result = CliRunner().invoke(main, ["audit", str(library / "project01"), "--samples", "0",
                                       "--cache-file", str(cache_file)])
    assert result.exit_code == 0
    assert "Traceback" not in result.output
    assert result.stderr.count("\n") == 1
    assert result.stderr.startswith(f"Warning: {cache_file}: cannot create the results "
                                    "database's folder (")
    assert result.stderr.endswith("; auditing without the results cache\n")
    assert len(json.loads(result.stdout)["designs"][0]["stages"]) == 1


def test_broken_child_sheet_finding_points_at_the_sheet(tmp_path, monkeypatch):
    # Guards: the finding of a child sheet that cannot be read names that sheet's file,
    # line and column (JSON, and SARIF's region). Expected position: counted in the
    # text written here.
    top = Sheet(project="broken", seed=21)
    top.sheet("Amp", "amp.kicad_sch", 100, 50, [])
    (tmp_path / "board.kicad_sch").write_text(top.text(), encoding="utf-8")
    child = stage_sheet("1mV").replace("\t(sheet_instances", "\t(junction (at abc 10))\n"
                                       "\t(sheet_instances", 1)
    (tmp_path / "amp.kicad_sch").write_text(child, encoding="utf-8")
    offset = child.index("abc")
    line, column = child.count("\n", 0, offset) + 1, offset - child.rfind("\n", 0, offset)
    monkeypatch.chdir(tmp_path)
    result = CliRunner().invoke(main, ["audit", "board.kicad_sch", "--no-cache"])
    assert result.exit_code == 2
    (finding,) = json.loads(result.stdout)["designs"][0]["findings"]
    assert (finding["rule"], finding["file"], finding["line"], finding["column"]) == (
        "unreadable-design", "amp.kicad_sch", line, column)
    result = CliRunner().invoke(main, ["audit", "board.kicad_sch", "--no-cache", "--format",
                                       "sarif"])
    (location,) = json.loads(result.stdout)["runs"][0]["results"][0]["locations"]
    assert location["physicalLocation"] == {"artifactLocation": {"uri": "amp.kicad_sch"},
                                            "region": {"startLine": line,
                                                       "startColumn": column}}


def test_cache_that_stops_taking_writes_is_said_once(library, tmp_path):
    # Guards: a database that refuses writes mid-run (opened read-only here, as a full
    # disk or a read-only file would) costs one warning, not the run.
    import sqlite3

    path = tmp_path / "results.sqlite3"
    ResultCache(str(path)).close()
    cache = ResultCache(str(path))
    cache.db.close()
    cache.db = sqlite3.connect(f"file:{path}?mode=ro", uri=True, isolation_level=None)
    report = audit_paths([str(library / "project01"), str(library / "project02")],
                         overrides={"mc_samples": 0}, jobs=1, cache=cache)
    cache.close()
    assert [len(d["stages"]) for d in report["designs"]] == [1, 1]
    (warning,) = report["warnings"]
    assert warning.startswith(f"{path}: could not store results (")
