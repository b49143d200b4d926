"""The command line: whole outputs, exit statuses, and bad input as one clear line.

Outside source for the malformed cases: each file is built by hand to break one rule
of the S-expression schematic format (KiCad's file-format documentation); the expected
message is ours, the expected line and column are counted by hand in the file.
"""

from __future__ import annotations

import json
import os
import pty
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
    small = FIXTURES / "reader" / "netlists" / "small.net"
    code, out, _ = run("netlist", small, "--format", "text")
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
    assert ("expected the child sheet file 'lost.kicad_sch' of sheet 'Lost', found no such "
            "file") in err


def test_no_such_file(tmp_path):
    code, _, err = run("netlist", tmp_path / "nope.kicad_sch")
    assert code == 2
    assert err.strip().endswith("nope.kicad_sch: expected a file here, found nothing (no such "
                                "file)")


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


def test_top_level_help_example_runs_on_a_file_that_exists(monkeypatch):
    # the example a newcomer copies first must name a real file of the repository
    from .conftest import ROOT

    monkeypatch.chdir(ROOT)
    code, out, _ = run("--help")
    example = next(line.strip() for line in out.splitlines()
                   if line.strip().startswith("schemcheck "))
    words = example.split()
    assert (ROOT / words[2]).is_file(), example
    code, _, _ = run(*words[1:], "--no-cache", "--samples", "0")
    assert code in (0, 1)


# The POSIX rule that a program tells a terminal from a pipe with isatty(3), exercised
# through a real pseudo-terminal: a person gets the table, a script keeps its JSON.
def _audit_on(stdout_is_terminal: bool) -> str:
    from .conftest import ROOT

    command = [sys.executable, "-m", "schemcheck", "audit", "fixtures/demo/frontend.kicad_sch",
               "--no-cache", "--samples", "0"]
    env = {**os.environ, "CI": "1"}
    if not stdout_is_terminal:
        proc = subprocess.run(command, capture_output=True, text=True, cwd=ROOT, env=env)
        return proc.stdout
    leader, follower = pty.openpty()
    with subprocess.Popen(command, stdout=follower, stderr=subprocess.DEVNULL, cwd=ROOT,
                          env=env) as proc:
        os.close(follower)
        chunks = []
        while True:
            try:
                chunk = os.read(leader, 65536)
            except OSError:  # the terminal closes when the program ends
                break
            if not chunk:
                break
            chunks.append(chunk)
        proc.wait()
    os.close(leader)
    return b"".join(chunks).decode("utf-8").replace("\r\n", "\n")


def test_terminal_gets_the_table_and_a_pipe_gets_json():
    piped = _audit_on(False)
    assert json.loads(piped)["designs"][0]["stages"]
    shown = _audit_on(True)
    assert shown.startswith("design: fixtures/demo/frontend.kicad_sch\n")
    assert "\nstages:\n  stage " in shown


# --- hostile files and values --------------------------------------------------------
# Outside source: each input is built by hand to break one rule (a device or FIFO is no
# design file, a double holds at most about 1.8e308, JSON has no NaN or Infinity per
# RFC 8259 §6, TOML 1.0 types); the expected behaviour is the project's rule for bad
# input: exit 2, one clear line naming file, line and column, no traceback.


def run_limited(*args, memory_mb=1024, timeout=120, cwd=None):
    """The command line as a process under an address-space limit and a time limit."""
    import resource

    def limit():
        resource.setrlimit(resource.RLIMIT_AS, (memory_mb << 20, memory_mb << 20))

    return subprocess.run([sys.executable, "-m", "schemcheck", *map(str, args)],
                          capture_output=True, text=True, timeout=timeout, preexec_fn=limit,
                          cwd=cwd, env={**os.environ, "OPENBLAS_NUM_THREADS": "1"})


@pytest.fixture
def fifo(tmp_path):
    path = tmp_path / "pipe.kicad_sch"
    os.mkfifo(path)
    return path


@pytest.mark.parametrize(("command", "kind"), [
    (["netlist", "/dev/zero"], "a character device"),
    (["audit", "/dev/zero", "--no-cache"], "a character device"),
    (["netlist", "{fifo}"], "a FIFO (named pipe)"),
    (["audit", "{fifo}", "--no-cache"], "a FIFO (named pipe)"),
    (["netlist", "{link}"], "a character device"),
])
def test_devices_and_fifos_are_not_read(tmp_path, fifo, command, kind):
    os.symlink("/dev/zero", tmp_path / "zero.kicad_sch")
    args = [a.format(fifo=fifo, link=tmp_path / "zero.kicad_sch") for a in command]
    proc = run_limited(*args, memory_mb=700, timeout=60)
    assert proc.returncode == 2 and "Traceback" not in proc.stderr
    assert f"found {kind}: not a regular file" in proc.stderr


def test_a_folder_holding_a_device_loses_only_that_design(tmp_path):
    os.symlink("/dev/zero", tmp_path / "zero.kicad_sch")
    os.mkfifo(tmp_path / "pipe.kicad_sch")
    (tmp_path / "good.kicad_sch").write_bytes((FIXTURES / "demo" / "chain.kicad_sch").read_bytes())
    proc = run_limited("audit", tmp_path, "--no-cache", "--samples", "0", memory_mb=700,
                       timeout=60)
    assert proc.returncode == 2 and "Traceback" not in proc.stderr
    files = {d["file"]: d["errors"] for d in json.loads(proc.stdout)["designs"]}
    assert files[str(tmp_path / "good.kicad_sch")] == []
    zero, pipe = files[str(tmp_path / "zero.kicad_sch")], files[str(tmp_path / "pipe.kicad_sch")]
    assert "found a character device: not a regular file" in zero[0]
    assert "found a FIFO (named pipe): not a regular file" in pipe[0]


def test_size_limit_checked_before_reading(tmp_path):
    big = tmp_path / "big.kicad_sch"
    with open(big, "wb") as handle:  # 1 GiB, sparse: reading it would take 1 GiB of memory
        handle.truncate(1 << 30)
    proc = run_limited("audit", big, "--no-cache", memory_mb=700, timeout=60)
    assert proc.returncode == 2 and "Traceback" not in proc.stderr
    assert "expected a file of at most 67108864 bytes, found 1073741824 bytes" in proc.stderr


@pytest.mark.parametrize(("option", "value", "expected"), [
    ("--parts", "/dev/zero", "Error: --parts: /dev/zero: expected a parts library, found a "
                             "character device: not a regular file"),
    ("--parts", "nope.toml", "Error: --parts: nope.toml: expected a parts library here, found "
                             "nothing (no such file)"),
    ("--settings", "nope.toml", "Error: --settings: nope.toml: expected a settings file here, "
                                "found nothing (no such file)"),
])
def test_option_files_are_named_as_options(tmp_path, option, value, expected):
    proc = run_limited("audit", FIXTURES / "demo" / "chain.kicad_sch", "--no-cache", option, value,
                       cwd=tmp_path, timeout=60)
    assert proc.returncode == 2 and proc.stdout == ""
    assert proc.stderr.startswith(expected)


@pytest.mark.parametrize(("args", "expected"), [
    (["--temp", "0:1e400"], "Error: expected finite temperatures in °C, found '0:1e400'"),
    (["--temp", "-300:20"], "Error: expected temperatures from -273.15 °C (absolute zero) to "
                            "1000 °C, found '-300:20'"),
    (["--seed", "-1"], "Invalid value for '--seed'"),
])
def test_out_of_range_options_refused(args, expected):
    code, out, err = run("audit", FIXTURES / "demo" / "chain.kicad_sch", "--no-cache", *args)
    assert code == 2 and out == ""
    assert expected in err


def _design_with(tmp_path, **fields):
    from .make_demo import stage
    from .synth import Sheet

    sheet = Sheet(project="f", seed=4)
    stage(sheet, 76.2, 76.2, ref="U1", unit=1, value="OPX", rp="9k1",
          fields={"Vos": "1mV", "Ib": "20nA", "Ios": "2nA", **fields})
    path = tmp_path / "f.kicad_sch"
    path.write_text(sheet.text(), encoding="utf-8")
    return path


def strict(text):
    def refuse(name):
        raise ValueError(f"{name} is not JSON")

    return json.loads(text, parse_constant=refuse)


@pytest.mark.parametrize(("fields", "problem"), [
    ({"Aol": "1e999"}, "expected field Aol of U1 of at least 1 V/V (0 dB) and finite, found "
                       "'1e999'"),
    ({"Aol": "0"}, "expected field Aol of U1 of at least 1 V/V (0 dB) and finite, found '0'"),
    ({"T_hot": "nan"}, "field T_hot of U1: expected a temperature above 25 °C and at most "
                       "1000 °C, found 'nan'"),
    ({"Vos": "1" * 400 + "V"}, "expected a finite number for vos (field Vos of U1)"),
])
def test_hostile_symbol_fields_never_reach_the_report(tmp_path, fields, problem):
    code, out, _ = run("audit", _design_with(tmp_path, **fields), "--no-cache", "--samples", "50")
    design = strict(out)["designs"][0]
    assert any(problem in a for a in design["assumptions"])
    assert design["stages"][0]["params"]["source"] == {"error": next(
        a for a in design["assumptions"] if problem in a).removeprefix("problem: ")}


def _first_xy_replaced(by: str) -> tuple[str, int]:
    import re

    text = (FIXTURES / "demo" / "chain.kicad_sch").read_text(encoding="utf-8")
    match = re.search(r"\(xy (-?[\d.]+)", text)
    return text[:match.start(1)] + by + text[match.end(1):], match.start(1)


def test_a_number_too_large_for_a_double_is_located(tmp_path):
    text, at = _first_xy_replaced("1" * 400)
    (tmp_path / "big.kicad_sch").write_text(text, encoding="utf-8")
    line = text.count("\n", 0, at) + 1
    column = at - text.rfind("\n", 0, at)
    proc = run_limited("audit", tmp_path / "big.kicad_sch", "--no-cache", timeout=60)
    assert proc.returncode == 2 and "Traceback" not in proc.stderr
    assert (f"big.kicad_sch:{line}:{column}: expected a number, found one of 400 digits, too "
            "large to store") in proc.stderr


def test_a_huge_coordinate_is_located(tmp_path):
    text, _ = _first_xy_replaced("1" * 300 + ".5")
    (tmp_path / "far.kicad_sch").write_text(text, encoding="utf-8")
    code, _, err = run("netlist", tmp_path / "far.kicad_sch")
    assert code == 2 and "expected X within ±1000000 mm in '(xy ...)', found 1.11111e+299" in err


def test_nesting_limit_stops_the_tokenizer_early(tmp_path):
    # 30 MB of '(': the old reader spent 2.6 GB and 14 s before its error at the 257th
    # bracket; under a 700 MB limit it would fail with MemoryError.
    head = b"(kicad_sch (version 20250114) "
    (tmp_path / "deep.kicad_sch").write_bytes(head + b"(" * (30 << 20))
    proc = run_limited("netlist", tmp_path / "deep.kicad_sch", memory_mb=700, timeout=60)
    assert proc.returncode == 2 and "Traceback" not in proc.stderr
    # the list opened by the 256th '(' after the head is the 257th level
    assert proc.stderr.startswith(f"Error: {tmp_path / 'deep.kicad_sch'}:1:{len(head) + 256}: "
                                  "expected at most 256 nested lists, found deeper nesting")


def test_exported_netlist_duplicates_warn(tmp_path):
    text = (FIXTURES / "reader" / "netlists" / "small.net").read_text(encoding="utf-8")
    comps = text[text.index("(comp "):]
    first = comps[:comps.index("(comp ", 1)]
    nets = text[text.index("(net "):]
    net = nets[:nets.index("(net ", 1)]
    twice = text.replace(first, first + first, 1).replace(net, net + net, 1)
    (tmp_path / "twice.net").write_text(twice, encoding="utf-8")
    code, out, err = run("netlist", tmp_path / "twice.net")
    warnings = json.loads(out)["warnings"]
    assert any("names two components" in w for w in warnings)
    assert any("is used by two nets; the audit joins them into one" in w for w in warnings)
    assert "Warning: " in err


def test_child_sheet_outside_the_root_folder_is_a_warning(tmp_path):
    from .synth import Sheet

    (tmp_path / "shared").mkdir()
    (tmp_path / "shared" / "chain.kicad_sch").write_bytes(
        (FIXTURES / "demo" / "chain.kicad_sch").read_bytes())
    (tmp_path / "project").mkdir()
    top = Sheet(project="top", seed=2)
    top.sheet("Chain", "../shared/chain.kicad_sch", 100, 50, [])
    (tmp_path / "project" / "top.kicad_sch").write_text(top.text(), encoding="utf-8")
    code, out, err = run("audit", tmp_path / "project" / "top.kicad_sch", "--no-cache",
                         "--samples", "0")
    design = json.loads(out)["designs"][0]
    assert design["errors"] == [] and design["stages"]  # read all the same
    assert len(design["warnings"]) == 1
    assert ("the child sheet file '../shared/chain.kicad_sch' of sheet 'Chain' lies outside "
            "the root sheet's folder") in design["warnings"][0]
    assert "Warning: " in err


def test_a_singular_monte_carlo_sample_is_a_stated_problem(tmp_path):
    # Found by the fuzzer: with the power unit's '(unit 3)' gone, the placed symbol draws
    # unit 1's pins while its instance says unit 3; the nominal network solves, a sampled
    # one does not (numpy.linalg.LinAlgError escaped as a traceback).
    text = (FIXTURES / "demo" / "chain.kicad_sch").read_text(encoding="utf-8")
    edited = text.replace("\t\t(at 101.6 127 0)\n\t\t(unit 3)\n", "\t\t(at 101.6 127 0)\n", 1)
    assert edited != text
    (tmp_path / "odd.kicad_sch").write_text(edited, encoding="utf-8")
    code, out, err = run("audit", tmp_path / "odd.kicad_sch", "--no-cache", "--samples", "20")
    assert code in (0, 1) and "Traceback" not in err
    design = strict(out)["designs"][0]
    # no bound, and the report says why: the part has no data here (a sampled network
    # without a solution is said too: tests/test_montecarlo.py)
    assert all(stage["monte_carlo_v"] is None for stage in design["stages"])
    assert [m["stages"] for m in design["missing_parameters"]] == [["U4/2"]]


def test_drawn_follower_through_a_resistor_is_audited(tmp_path):
    # Guards: a unity follower fed through a resistor (its parameters known) is audited,
    # not a traceback with exit status 1. Expected finding: as in test_checks.py (common
    # practice: R from the output to the - input equal to what the + input sees).
    from .make_demo import DUAL
    from .synth import Sheet

    sheet = Sheet(project="follower", seed=4)
    x, y = 101.6, 76.2
    u = sheet.place(DUAL, "U1", "OPX", x, y, mirror="x", unit=1,
                    fields={"Vos": "1mV", "Ib": "800nA", "Ios": "10nA", "Input": "bipolar"})
    sheet.path(u.pin("1"), (x + 12.7, y), (x + 12.7, y - 12.7), (x - 12.7, y - 12.7),
               (x - 12.7, y - 2.54), u.pin("2"))
    r = sheet.place("Device:R", "R1", "10k", x - 20.32, y + 2.54, angle=90)
    sheet.wire(r.pin("2"), u.pin("3"))
    sheet.label("IN", r.pin("1"), kind="global_label")
    sheet.label("OUT", u.pin("1"), kind="global_label")
    path = tmp_path / "follower.kicad_sch"
    path.write_text(sheet.text(), encoding="utf-8")
    code, out, err = run("audit", path, "--no-cache", "--samples", "0")
    assert (code, err) == (0, "")  # one finding, below the default --fail-on error
    (design,) = json.loads(out)["designs"]
    assert design["stages"][0]["topology"] == "buffer"
    (finding,) = design["findings"]
    assert finding["rule"] == "bias-resistor-mismatch"
    assert finding["suggestion"].startswith("add 10 kΩ (E96 10 kΩ, E24 10 kΩ) in the feedback "
                                            "path, from the output to the - input")


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
