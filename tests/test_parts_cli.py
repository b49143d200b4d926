"""``schemcheck parts missing|skeleton|check`` as whole outputs, the user-level library
and the libraries a report lists.

Outside source: no figure is computed here; the expected outputs are ours, checked by
hand against the fixture (fixtures/README.md, "parts/"); the golden skeleton
fixtures/golden/parts_skeleton.toml was produced by this command and read by hand.
The TOML files written are re-read with the standard library's tomllib.
"""

from __future__ import annotations

import json
import os
import shutil
import tomllib

import pytest
from click.testing import CliRunner

from schemcheck.cli import main
from schemcheck.io.partslib import load_parts_library
from schemcheck.run.batch import audit_paths
from schemcheck.run.cache import ResultCache
from schemcheck.run.runner import options_to_overrides

from .conftest import FIXTURES, ROOT

PARTS = FIXTURES / "parts"


def run(*args):
    result = CliRunner().invoke(main, [str(a) for a in args])
    return result.exit_code, result.stdout, result.stderr


@pytest.fixture
def at_root(monkeypatch, tmp_path):
    """Run from the repository root, with an empty user config folder of this test."""
    monkeypatch.chdir(ROOT)
    monkeypatch.setenv("XDG_CONFIG_HOME", str(tmp_path / "config"))
    return tmp_path


def install_team_library(tmp_path):
    folder = tmp_path / "config" / "schemcheck"
    folder.mkdir(parents=True, exist_ok=True)
    shutil.copy(PARTS / "team.toml", folder / "parts.toml")
    return folder / "parts.toml"


MISSING = """\
op-amp part numbers with no DC data in 1 design: 3

OPX-55CD  (no Vos, Ib, Ios)
  used by U5/1 in fixtures/parts/matching.kicad_sch
  would be matched by Value OPX-55CD, then by family OPX-55
  ambiguous by family: OPX-55A, OPX-55B
OPX-77  (no Vos, Ib, Ios)
  used by U7/1 in fixtures/parts/matching.kicad_sch
  would be matched by Value OPX-77
  input type: jfet (from symbol description)
OPX-88  (no Vos, Ib, Ios)
  used by U8/1 in fixtures/parts/matching.kicad_sch
  would be matched by Value OPX-88

parts libraries read (a later one wins):
  project: fixtures/parts/parts.toml (7 entries)
"""


def test_missing_text(at_root):
    code, out, err = run("parts", "missing", "fixtures/parts")
    assert (code, err) == (0, "")
    assert out == MISSING


def test_missing_json(at_root):
    code, out, _ = run("parts", "missing", "fixtures/parts/matching.kicad_sch", "--format",
                       "json")
    report = json.loads(out)
    assert code == 0 and report["designs"] == ["fixtures/parts/matching.kicad_sch"]
    assert report["parts"][0] == {
        "part": "OPX-55CD", "field": "Value", "family": "OPX-55", "other_keys": [],
        "missing": ["vos", "ib", "ios"],
        "used_by": [{"design": "fixtures/parts/matching.kicad_sch", "units": ["U5/1"]}],
        "designs": ["fixtures/parts/matching.kicad_sch"], "input": None, "input_source": None,
        "description": "Dual operational amplifier, generic", "entry": None,
        "ambiguous": ["OPX-55A", "OPX-55B"]}
    assert [p["part"] for p in report["parts"]] == ["OPX-55CD", "OPX-77", "OPX-88"]
    assert report["errors"] == []


def test_missing_with_the_team_library_in_the_user_folder(at_root):
    user = install_team_library(at_root)
    code, out, _ = run("parts", "missing", "fixtures/parts")
    assert code == 0
    assert out.splitlines()[0] == "op-amp part numbers with no DC data in 1 design: 2"
    assert "OPX-88" not in out
    assert out.endswith("parts libraries read (a later one wins):\n"
                        f"  user: {user} (2 entries)\n"
                        "  project: fixtures/parts/parts.toml (7 entries)\n")


def test_missing_unreadable_design_is_exit_2(at_root, tmp_path):
    bad = tmp_path / "bad.kicad_sch"
    bad.write_text("(kicad_sch (version 1)", encoding="utf-8")
    code, out, err = run("parts", "missing", bad)
    assert code == 2 and "Traceback" not in err
    assert err.startswith(f"Error: {bad}:1:")
    assert out.startswith("op-amp part numbers with no DC data in 0 designs: 0\n")


def test_skeleton_printed(at_root):
    code, out, _ = run("parts", "skeleton", "fixtures/parts")
    assert code == 0
    assert out == (FIXTURES / "golden" / "parts_skeleton.toml").read_text(encoding="utf-8")
    entries = tomllib.loads(out)["parts"]
    assert list(entries) == ["OPX-55CD", "OPX-77", "OPX-88"]
    assert entries["OPX-77"]["input"] == "jfet"  # from the symbol's description


def test_skeleton_appends_keeping_content_and_comments(at_root, tmp_path):
    library = tmp_path / "opamps.toml"
    old = ('# Team library: keep this comment.\n\n[parts."OPX-88"]\n'
           'vos = "2mV"  # from the datasheet\nib = "200nA"\nios = "20nA"\n')
    library.write_text(old, encoding="utf-8")
    code, out, _ = run("parts", "skeleton", "fixtures/parts", "-o", library)
    assert code == 0
    assert out == (f"{library}: 2 entries added (OPX-55CD, OPX-77); already there: OPX-88\n")
    new = library.read_text(encoding="utf-8")
    assert new.startswith(old)
    assert list(load_parts_library(library)) == ["OPX-88", "OPX-55CD", "OPX-77"]
    code, out, _ = run("parts", "skeleton", "fixtures/parts", "-o", library)
    assert out == (f"{library}: 0 entries added; already there: OPX-55CD, OPX-77, OPX-88\n")
    assert library.read_text(encoding="utf-8") == new


def test_skeleton_into_the_user_folder_creates_it(at_root, tmp_path):
    target = tmp_path / "config" / "schemcheck" / "parts.toml"
    code, _, _ = run("parts", "skeleton", "fixtures/parts", "-o", target)
    assert code == 0 and list(load_parts_library(target)) == ["OPX-55CD", "OPX-77", "OPX-88"]
    code, out, _ = run("parts", "missing", "fixtures/parts")
    assert f"  user: {target} (3 entries)" in out  # read, though still without figures
    assert out.splitlines()[0] == "op-amp part numbers with no DC data in 1 design: 3"


def test_skeleton_filled_in_makes_the_part_known(at_root, tmp_path):
    library = tmp_path / "opamps.toml"
    run("parts", "skeleton", "fixtures/parts", "-o", library)
    text = library.read_text(encoding="utf-8").replace(
        '[parts."OPX-88"]', '[parts."OPX-88"]\nvos = "2mV"\nib = "200nA"\nios = "20nA"', 1)
    start = text.index('[parts."OPX-88"]')
    text = text[:start] + "\n".join(line for line in text[start:].splitlines()
                                    if not line.startswith(("vos = {", "ib = {", "ios = {")))
    library.write_text(text + "\n", encoding="utf-8")
    code, out, _ = run("parts", "missing", "fixtures/parts", "--parts", library)
    assert code == 0 and "OPX-88" not in out
    assert "  command line: " in out


CHECK = """\
parts library fixtures/parts/parts.toml: 7 entries, valid

  entry          input                Vos typ / max            Ib typ / max             \
Ios typ / max            TCVos typ / max          Ib_hot typ / max          T_hot
  LX1612         jfet                 500µV / 2mV              10pA / 40pA              \
- / 20pA                 4µV/°C / -               -                             -
  OPX-22         bipolar              - / 1mV                  - / 100nA                \
- / 10nA                 - / 5µV/°C               -                             -
  OPX-33         cmos                 1mV / 3mV                1pA / 10pA               \
- / 10pA                 - / 8µV/°C               -                             -
  OPX-44         bipolar-compensated  - / 60µV                 - / ±3nA                 \
- / 3nA                  - / 500nV/°C             -                             -
  OPX-55A        bipolar              - / 500µV                - / 50nA                 \
- / 5nA                  -                        -                             -
  OPX-55B        bipolar              - / 1.5mV                - / 80nA                 \
- / 8nA                  -                        -                             -
  OPX-Z6         chopper              1µV / 5µV                100pA / 300pA            \
- / 600pA                10nV/°C / 50nV/°C        -                             -

  LX1612: typical only (no max): TCVos
  OPX-44: aliases OPX-44S
"""


def test_check_text(at_root):
    code, out, _ = run("parts", "check", "fixtures/parts/parts.toml")
    assert code == 0
    assert out == CHECK


def test_check_json(at_root):
    code, out, _ = run("parts", "check", "fixtures/parts/parts.toml", "--format", "json")
    entries = {e["name"]: e for e in json.loads(out)["entries"]}
    assert code == 0
    # SI prefixes (BIPM SI Brochure, table 7): 500 µV, 2 mV, 4 µV/°C
    assert entries["LX1612"]["figures"]["vos"] == {"typ": pytest.approx(500e-6, rel=1e-12),
                                                   "max": pytest.approx(2e-3, rel=1e-12)}
    assert entries["LX1612"]["figures"]["tcvos"] == {"typ": pytest.approx(4e-6, rel=1e-12),
                                                     "max": None}
    assert entries["LX1612"]["typical_only"] == ["tcvos"]
    assert entries["OPX-44"]["ib_either_sign"] is True
    assert entries["OPX-55A"]["family"] == "OPX-55"


def test_check_invalid_library_is_exit_2(at_root, tmp_path):
    bad = tmp_path / "bad.toml"
    bad.write_text('[parts."OPX-1"]\nvos = { typ = "2mV", max = "1mV" }\n', encoding="utf-8")
    code, out, err = run("parts", "check", bad)
    assert (code, out) == (2, "")
    assert err == f"Error: {bad}:2:1: entry 'OPX-1', key 'vos': max (1 mV) is below typ (2 mV)\n"


def test_report_lists_libraries_and_a_later_one_wins(at_root):
    user = install_team_library(at_root)
    report = audit_paths([str(PARTS / "matching.kicad_sch")],
                         overrides=options_to_overrides(samples=0), jobs=1)
    design = report["designs"][0]
    assert design["parts_libraries"] == [
        {"origin": "user", "path": str(user), "entries": 2},
        {"origin": "project", "path": "parts.toml", "entries": 7}]
    assert (f"parts libraries read (a later one wins): user {user} (2 entries); project "
            "parts.toml (7 entries)") in design["assumptions"]
    stages = {s["ref"]: s for s in design["stages"]}
    # the project's LX1612 (2 mV) wins over the team library's (9 mV)
    assert stages["U1"]["params"]["vos"] == pytest.approx(2e-3, rel=1e-12)
    assert stages["U8"]["params"]["source"]["vos"] == "library:OPX-88"
    assert stages["U8"]["params"]["match"]["library"] == str(user)
    assert design["settings"]["parts_libraries"] == [
        {"origin": "user", "path": str(user)},
        {"origin": "project", "path": str(PARTS / "parts.toml")}]


def test_command_line_library_is_laid_over_the_project_one(at_root, tmp_path):
    extra = tmp_path / "extra.toml"
    extra.write_text('[parts."LX1612"]\nvos = "7mV"\nib = "1nA"\nios = "1nA"\n',
                     encoding="utf-8")
    report = audit_paths([str(PARTS / "matching.kicad_sch")],
                         overrides=options_to_overrides(samples=0, parts=str(extra)), jobs=1)
    design = report["designs"][0]
    stages = {s["ref"]: s for s in design["stages"]}
    assert stages["U1"]["params"]["vos"] == pytest.approx(7e-3, rel=1e-12)
    assert stages["U2"]["params"]["source"]["vos"] == "library:OPX-22 via MPN opx-22"
    assert [lib["origin"] for lib in design["parts_libraries"]] == ["project", "command line"]


def test_changing_the_user_library_reaudits(at_root, tmp_path):
    user = install_team_library(at_root)
    cache = ResultCache(str(tmp_path / "cache.sqlite3"))
    try:
        overrides = options_to_overrides(samples=0)
        first = audit_paths([str(PARTS)], overrides=overrides, jobs=1, cache=cache)
        again = audit_paths([str(PARTS)], overrides=overrides, jobs=1, cache=cache)
        stamp = user.stat().st_mtime_ns
        user.write_text(user.read_text(encoding="utf-8").replace('vos = "2mV"', 'vos = "3mV"'),
                        encoding="utf-8")
        os.utime(user, ns=(stamp, stamp))  # an edit within one clock tick: same mtime
        changed = audit_paths([str(PARTS)], overrides=overrides, jobs=1, cache=cache)
    finally:
        cache.close()
    assert (first["run"]["audited"], again["run"]["from_cache"]) == (1, 1)
    assert changed["run"]["audited"] == 1
    u8 = next(s for s in changed["designs"][0]["stages"] if s["ref"] == "U8")
    assert u8["params"]["vos"] == pytest.approx(3e-3, rel=1e-12)
