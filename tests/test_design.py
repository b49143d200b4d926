"""Hierarchies that are not trees, too deep or too wide: an error naming the sheets.

Outside source: KiCad's hierarchy is a tree of sheet instances (the schematic editor
refuses a sheet that contains itself); the depth and instance limits are ours (stated
in :mod:`schemcheck.io.design`). Every file is generated here with known links.
"""

from __future__ import annotations

import json

import pytest
from click.testing import CliRunner

from schemcheck.cli import main
from schemcheck.io.design import MAX_SHEET_DEPTH, MAX_SHEET_INSTANCES

from .synth import Sheet


def audit(*paths):
    result = CliRunner().invoke(main, ["audit", *map(str, paths), "--no-cache", "--samples", "0"])
    assert result.exception is None or isinstance(result.exception, SystemExit)
    return result.exit_code, json.loads(result.stdout), result.stderr


def write_chain(folder, names: list[str], copies: int = 1) -> None:
    """Each sheet places the next one ``copies`` times; the last places nothing."""
    for index, name in enumerate(names):
        sheet = Sheet(project=name.split(".")[0], seed=index + 1)
        if index + 1 < len(names):
            for copy in range(copies):
                sheet.sheet(f"S{index + 1}_{copy}", names[index + 1], 100 + 30 * copy, 50, [])
        (folder / name).write_text(sheet.text(), encoding="utf-8")


@pytest.mark.parametrize("links", [("a.kicad_sch", "b.kicad_sch", "a.kicad_sch"),
                                   ("self.kicad_sch", "self.kicad_sch")],
                         ids=["a-b-a", "itself"])
def test_sheet_loops_are_errors_naming_the_sheets(tmp_path, links):
    for name, child in zip(links, links[1:]):
        sheet = Sheet(project=name.split(".")[0], seed=len(name))
        sheet.sheet("Next", child, 100, 50, [])
        (tmp_path / name).write_text(sheet.text(), encoding="utf-8")
    code, report, err = audit(tmp_path)  # the folder: no root can be told apart
    assert code == 2 and len(report["designs"]) == 1  # not "no design" with exit 0
    loop = " -> ".join(links)
    assert f"the sheet hierarchy loops back on itself ({loop})" in err
    assert report["designs"][0]["errors"][0].startswith(str(tmp_path / links[-2]) + ":")


@pytest.mark.parametrize("levels", [MAX_SHEET_DEPTH + 6, 1200], ids=["70", "1200"])
def test_too_deep_hierarchies_are_errors(tmp_path, levels):
    names = [f"s{i}.kicad_sch" for i in range(levels + 1)]
    write_chain(tmp_path, names)
    code, report, err = audit(tmp_path / names[0])
    assert code == 2 and "Traceback" not in err
    error = report["designs"][0]["errors"][0]
    assert f"the sheet hierarchy is {levels} levels deep (s0.kicad_sch -> s1.kicad_sch -> " \
           f"s2.kicad_sch -> ... {levels + 1 - 6} more ... -> s{levels - 2}.kicad_sch -> " \
           f"s{levels - 1}.kicad_sch -> s{levels}.kicad_sch); expected at most " \
           f"{MAX_SHEET_DEPTH} levels below the root sheet" in error
    assert error.startswith(str(tmp_path / f"s{MAX_SHEET_DEPTH}.kicad_sch") + ":")


def test_the_deepest_allowed_hierarchy_is_read(tmp_path):
    names = [f"s{i}.kicad_sch" for i in range(MAX_SHEET_DEPTH + 1)]
    write_chain(tmp_path, names)
    code, report, _ = audit(tmp_path / names[0])
    assert code == 0 and report["designs"][0]["errors"] == []


def test_a_hierarchy_placing_too_many_instances_is_an_error(tmp_path):
    # each of 15 sheets places the next twice: 2**15 instances of the last
    names = [f"w{i}.kicad_sch" for i in range(16)]
    write_chain(tmp_path, names, copies=2)
    code, report, _ = audit(tmp_path / names[0])
    assert code == 2
    assert (f"the sheet hierarchy places {2 ** 16 - 1} sheet instances (w15.kicad_sch alone "
            f"{2 ** 15} times); expected at most {MAX_SHEET_INSTANCES}") in \
        report["designs"][0]["errors"][0]
