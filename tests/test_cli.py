"""The command line: whole outputs, exit statuses, and bad input as one clear line.

Outside source for the malformed cases: each file is built by hand to break one rule
of the S-expression schematic format (KiCad's file-format documentation); the expected
message is ours, the expected line and column are counted by hand in the file.
"""

from __future__ import annotations

import json
import subprocess
import sys

import pytest
from click.testing import CliRunner

from schemcheck.cli import main

from .conftest import FIXTURES

GOOD = FIXTURES / "reader" / "rules.kicad_sch"


def run(*args):
    result = CliRunner().invoke(main, [str(a) for a in args])
    return result.exit_code, result.stdout, result.stderr


def test_netlist_json():
    code, out, _ = run("netlist", GOOD)
    data = json.loads(out)
    assert code == 0
    assert {"name": "/JOIN", "nodes": [{"ref": "R8", "pin": "1"}, {"ref": "R10", "pin": "1"}]} \
        in data["nets"]


def test_netlist_text():
    code, out, _ = run("netlist", FIXTURES / "reader" / "netlists" / "small.net", "--format", "text")
    assert code == 0
    assert "  GND                    R1.2 U1.3\n" in out


HEADER = '(kicad_sch\n\t(version 20250114)\n\t(generator "eeschema")\n'


@pytest.mark.parametrize(
    ("content", "expected"),
    [
        pytest.param(HEADER + "\t(wire (pts (xy 1 2) (xy 3 4))))\n)\n",
                     "bad.kicad_sch:5:1: unbalanced ')': no '(' is open here", id="unbalanced"),
        pytest.param(HEADER + "\t(wire (pts (xy 1 2) (xy 3",
                     "bad.kicad_sch:4:27: expected ')' but the file ends here: it is truncated or "
                     "its brackets are unbalanced ('(xy' opened at line 4, column 22 is never "
                     "closed)", id="truncated"),
        pytest.param(HEADER + "\t(junction (at abc 10))\n)\n",
                     "bad.kicad_sch:4:16: expected a number for X in '(at ...)', found 'abc'",
                     id="wrong-type"),
        pytest.param("PNG\x00\x01 not a schematic",
                     "bad.kicad_sch:1:1: expected a KiCad schematic '(kicad_sch ...)' or an "
                     "exported netlist ('(export ...)' or XML '<export ...>'), found "
                     "'PNG\\x00\\x01 not a schematic'", id="not-a-schematic"),
        pytest.param("(kicad_pcb (version 20240108))",
                     "bad.kicad_sch:1:1: expected a KiCad schematic '(kicad_sch ...)' or an "
                     "exported netlist ('(export ...)' or XML '<export ...>'), found "
                     "'(kicad_pcb (version 20240108))'", id="a-board-file"),
        pytest.param(b"(kicad_sch\n  (label \"\xff\xfe\" (at 0 0 0)))",
                     "bad.kicad_sch:2:11: expected UTF-8 text, found byte 0xff that is not valid "
                     "UTF-8 (KiCad writes its files in UTF-8)", id="non-utf8"),
        pytest.param("(kicad_sch" + " (a" * 5000 + ")" * 5001,
                     "bad.kicad_sch:1:777: expected at most 256 nested lists, found deeper nesting",
                     id="deep-nesting"),
    ],
)
def test_bad_input_is_one_clear_line(tmp_path, monkeypatch, content, expected):
    monkeypatch.chdir(tmp_path)
    path = tmp_path / "bad.kicad_sch"
    path.write_bytes(content if isinstance(content, bytes) else content.encode("utf-8"))
    code, out, err = run("netlist", "bad.kicad_sch")
    assert code == 2
    assert out == ""
    assert err.splitlines()[0] == f"Error: {expected}"
    assert "Traceback" not in err


def test_missing_child_sheet_reported_and_rest_read(tmp_path):
    from .synth import Sheet

    top = Sheet(project="miss")
    r = top.place("Device:R", "R1", "1k", 50.8, 50.8)
    top.label("A", r.pin("1"))
    top.sheet("Lost", "lost.kicad_sch", 100, 50, [])
    (tmp_path / "miss.kicad_sch").write_text(top.text(), encoding="utf-8")
    code, out, err = run("netlist", tmp_path / "miss.kicad_sch")
    assert code == 2
    assert json.loads(out)["nets"][0] == {"name": "/A", "nodes": [{"ref": "R1", "pin": "1"}]}
    assert "expected the child sheet file 'lost.kicad_sch' of sheet 'Lost', found no such file" in err


def test_no_such_file(tmp_path):
    code, _, err = run("netlist", tmp_path / "nope.kicad_sch")
    assert code == 2
    assert err.strip().endswith("nope.kicad_sch: expected a file here, found nothing (no such file)")


def test_whole_process_no_traceback(tmp_path):
    bad = tmp_path / "t.kicad_sch"
    bad.write_text("(kicad_sch (version 1)", encoding="utf-8")
    proc = subprocess.run([sys.executable, "-m", "schemcheck", "netlist", str(bad)],
                          capture_output=True, text=True)
    assert proc.returncode == 2 and "Traceback" not in proc.stderr
    assert proc.stderr.count("\n") >= 1 and proc.stderr.startswith("Error: ")


@pytest.mark.parametrize("command", sorted(main.commands))
def test_every_command_help_has_example(command):
    code, out, _ = run(command, "--help")
    assert code == 0 and "Example:" in out and "schemcheck " in out


def test_drawn_follower_through_a_resistor_is_audited(tmp_path):
    # Guards: a unity follower fed through a resistor (its parameters known) is audited,
    # not a traceback with exit status 1. Expected finding: as in test_checks.py (common
    # practice: R from the output to the - input equal to what the + input sees).
    from .make_demo import DUAL
    from .synth import Sheet

    sheet = Sheet(project="follower", seed=4)
    x, y = 101.6, 76.2
    u = sheet.place(DUAL, "U1", "OPX", x, y, mirror="x", unit=1,
                    fields={"Vos": "1mV", "Ib": "80nA", "Ios": "10nA", "Input": "bipolar"})
    sheet.path(u.pin("1"), (x + 12.7, y), (x + 12.7, y - 12.7), (x - 12.7, y - 12.7),
               (x - 12.7, y - 2.54), u.pin("2"))
    r = sheet.place("Device:R", "R1", "10k", x - 20.32, y + 2.54, angle=90)
    sheet.wire(r.pin("2"), u.pin("3"))
    sheet.label("IN", r.pin("1"), kind="global_label")
    sheet.label("OUT", u.pin("1"), kind="global_label")
    path = tmp_path / "follower.kicad_sch"
    path.write_text(sheet.text(), encoding="utf-8")
    code, out, err = run("audit", path, "--no-cache", "--samples", "0")
    assert (code, err) == (0, "")  # one warning, below the default --fail-on error
    (design,) = json.loads(out)["designs"]
    assert design["stages"][0]["topology"] == "buffer"
    assert [(f["rule"], f["suggestion"]) for f in design["findings"]] == [
        ("bias-resistor-mismatch", "add 10 kΩ (E96 10 kΩ, E24 10 kΩ) between the output and "
                                   "the - input (the buffer's gain stays 1) so both inputs "
                                   "see the same resistance")]


def test_non_numeric_coordinate_in_a_property_is_malformed(tmp_path):
    # Guards: junk where the schematic editor reads a number, in a list the connectivity
    # never reads (a property's position), is exit 2 with file, line and column, as the
    # editor refuses such a file (KiCad's file-format documentation: '(at X Y ANGLE)'
    # holds numbers). The position is counted in the text written here.
    from .synth import Sheet

    sheet = Sheet(project="junk", seed=6)
    sheet.place("Device:R", "R1", "10k", 50.8, 50.8)
    text = sheet.text()
    before = '(property "Value" "10k"\n\t\t\t(at '
    at = text.index(before) + len(before)
    text = text[:at] + "zero" + text[text.index(" ", at):]
    path = tmp_path / "junk.kicad_sch"
    path.write_text(text, encoding="utf-8")
    line, column = text.count("\n", 0, at) + 1, at - text.rfind("\n", 0, at)
    for command in ("netlist", "audit"):
        code, out, err = run(command, path, *(("--no-cache",) if command == "audit" else ()))
        assert code == 2 and "Traceback" not in err
        assert f"{path}:{line}:{column}: expected a number for X in '(at ...)', found 'zero'" \
            in err


def test_service_store_that_cannot_be_created_is_one_error_line(tmp_path):
    # Guards: the service's store is its memory: where it cannot be created, `serve`
    # refuses to start with one line and exit status 2 (no traceback).
    blocker = tmp_path / "not-a-folder"
    blocker.write_text("a file where the store's folder should be\n", encoding="utf-8")
    code, _, err = run("serve", "--store", blocker / "store.sqlite3", "--port", "0")
    assert code == 2
    assert err.startswith(f"Error: {blocker / 'store.sqlite3'}: cannot create the results "
                          "database's folder (")
    assert err.count("\n") == 1
