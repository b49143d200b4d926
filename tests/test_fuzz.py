"""Fuzzing the tokenizer and reader with mutated real files: nothing escapes but the
project's own error type.

Outside source: the seeds are real files (the corpus where present, else our fixtures);
mutations are random byte-level edits (hypothesis-driven), so no expectation comes from us
except "a ParseError or a netlist".
"""

from __future__ import annotations

from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from schemcheck.circuit.connectivity import build_netlist
from schemcheck.errors import SchemcheckError
from schemcheck.drawing import Design
from schemcheck.io.files import decode
from schemcheck.io.kicad_sch import read_sheet
from schemcheck.circuit.load import sniff
from schemcheck.io.netlist import read_sexpr_netlist, read_xml_netlist

from .conftest import FIXTURES, corpus_files

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
