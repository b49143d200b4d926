"""Fuzzing the tokenizer and reader with mutated real files: nothing escapes but the
project's own error type; and the whole command line on mutated files
(``scripts/fuzz_inputs.py``): exit 2 with file, line and column, never a traceback, a
hang or a memory blow-up.

Outside source: the seeds are real files (the corpus where present, else our fixtures);
mutations are random byte-level edits (hypothesis-driven), so no expectation comes from us
except "a ParseError or a netlist".
"""

from __future__ import annotations

from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from schemcheck.circuit.connectivity import build_netlist
from schemcheck.circuit.load import sniff
from schemcheck.drawing import Design
from schemcheck.errors import SchemcheckError
from schemcheck.io.files import decode
from schemcheck.io.kicad_sch import read_sheet
from schemcheck.io.netlist import read_sexpr_netlist, read_xml_netlist

from .conftest import CORPUS, FIXTURES, corpus_files, needs_corpus

SEEDS = [p.read_bytes() for p in (corpus_files(".kicad_sch")[:4] + corpus_files(".net"))]
SEEDS += [p.read_bytes() for p in sorted(FIXTURES.rglob("*.kicad_sch"))[:2]]
SEEDS += [(FIXTURES / "reader" / "netlists" / n).read_bytes() for n in ("small.net", "small.xml")]
CUT = 12_000  # fuzz the first part of big files: mutations there still reach every branch

TOKENS = [b"(", b")", b'"', b"\\", b" ", b"\n", b"abc", b"1.5", b"-", b"^", b"\xff", b"(at x y)",
          b"(pin", b"(symbol", b"(sheet", b"<", b">", b"&x;"]


@st.composite
def mutated(draw):
    data = bytearray(draw(st.sampled_from(SEEDS))[:CUT])
    for _ in range(draw(st.integers(1, 6))):
        op = draw(st.sampled_from(["delete", "insert", "replace", "truncate"]))
        at = draw(st.integers(0, max(0, len(data) - 1)))
        if op == "delete":
            del data[at: at + draw(st.integers(1, 40))]
        elif op == "insert":
            data[at:at] = draw(st.sampled_from(TOKENS))
        elif op == "replace" and data:
            data[at] = draw(st.integers(0, 255))
        else:
            del data[at:]
    return bytes(data)


def read_any(data: bytes) -> None:
    text = decode(data, "fuzz")
    kind = sniff(text)
    if kind == "kicad_sch":
        sheet = read_sheet(text, "fuzz.kicad_sch")
        build_netlist(Design(root="fuzz", sheets={"fuzz": sheet}))
    elif kind == "kicad_net":
        read_sexpr_netlist(text, "fuzz.net")
    elif kind == "kicad_xml":
        read_xml_netlist(data, "fuzz.xml")


@settings(max_examples=300, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(mutated())
def test_mutated_files_raise_only_our_errors(data):
    try:
        read_any(data)
    except SchemcheckError:
        pass


def _fuzz(*args: str) -> dict:
    """Run the mutation fuzzer (seeded) as a process; its JSON summary."""
    import json
    import os
    import subprocess
    import sys

    from .conftest import ROOT

    proc = subprocess.run([sys.executable, str(ROOT / "scripts" / "fuzz_inputs.py"), "--json",
                           "--time-limit", "20", "--memory-mb", "1536", *args],
                          capture_output=True, text=True, timeout=900, cwd=ROOT,
                          env={**os.environ, "OPENBLAS_NUM_THREADS": "1"})
    assert proc.returncode in (0, 1), proc.stderr[-3000:]
    return json.loads(proc.stdout.splitlines()[-1])


def test_mutated_fixtures_through_the_command_line():
    # 200 seeded inputs: schematics, netlists (S-expression and XML), parts libraries and
    # settings files; each with a time limit, all under a 1.5 GB address-space limit
    summary = _fuzz("--count", "200", "--seed", "12")
    assert summary["failures"] == []
    assert summary["inputs"] == 200


@needs_corpus
def test_mutated_corpus_through_the_command_line():
    summary = _fuzz("--count", "100", "--seed", "13", "--corpus", str(CORPUS), "--corpus-only")
    assert summary["failures"] == []
