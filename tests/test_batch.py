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

from schemcheck.run.batch import audit_paths, exit_status
from schemcheck.run.cache import ResultCache
from schemcheck.cli import main

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
    assert len(good) == GOOD + 1 and all(len(d["stages"]) == 1 for d in good if "board" in d["file"])
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
    assert second["stats"] == {"designs": GOOD + 4, "from_cache": GOOD + 1, "audited": 3}
    changed = library / "project03" / "board03.kicad_sch"
    original = changed.read_text(encoding="utf-8")
    try:
        changed.write_text(original.replace('"5mV"', '"4mV"').replace('"4mV"', '"9mV"'),
                           encoding="utf-8")
        third = audit_paths([str(library)], overrides=overrides, jobs=1, cache=cache)
    finally:
        changed.write_text(original, encoding="utf-8")
    assert third["stats"]["audited"] == 4
    other = audit_paths([str(library)], overrides={"mc_samples": 100}, jobs=1, cache=cache)
    assert other["stats"]["from_cache"] == 0  # settings are part of the key
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
    cache.put("k", "root", {"x": 1})
    assert cache.get("k") == {"x": 1}
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
