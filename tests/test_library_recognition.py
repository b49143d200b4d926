"""Op-amp recognition against the editor's own symbol libraries.

Outside source: KiCad's official symbol libraries as Debian packages them
(``kicad-symbols``, KiCad 6 format, ``/usr/share/kicad/symbols``): which library a symbol
sits in, its units and pins, and its own description (``Dual ...``, ``Quad ...``). Every
symbol of each library below is placed, unit by unit, on a generated sheet
(:mod:`tests.kicad_library`), read back by the reader and classified.
"""

from __future__ import annotations

import re
from pathlib import Path

import pytest

from schemcheck.circuit.load import load_netlist
from schemcheck.engine.stages import recognise

from .kicad_library import SYMBOLS, library, library_sheet

pytestmark = pytest.mark.skipif(
    not (SYMBOLS / "Amplifier_Operational.kicad_sym").is_file(),
    reason="KiCad's symbol libraries are not installed at /usr/share/kicad/symbols "
           "(Debian package kicad-symbols)")

#: Symbols of the op-amp library that are deliberately not op-amps, and why.
NOT_OPAMPS = {
    "AS13704": "transconductance amplifier (OTA): a current output",
    "CA3080": "transconductance amplifier (OTA)",
    "CA3080A": "transconductance amplifier (OTA)",
    "LM13600": "transconductance amplifier (OTA)",
    "LM13700": "transconductance amplifier (OTA)",
    "AD8015": "transimpedance only: a current input, no +/- inputs",
    "HMC799LP3E": "transimpedance only: a current input, no +/- inputs",
    "LMH6551MA": "fully differential: outputs + and - named as a pair",
    "LMH6551MM": "fully differential: outputs + and - named as a pair",
    "LTC6362xDD": "fully differential: outputs + and - named as a pair",
    "LTC6362xMS8": "fully differential: outputs + and - named as a pair",
    "TS881xCx": "a comparator (its description says so) filed in the op-amp library",
    "TS881xLx": "a comparator (its description says so) filed in the op-amp library",
}
#: Libraries none of whose units may be taken for an op-amp.
NEVER_OPAMPS = ["Comparator", "Amplifier_Instrumentation", "Amplifier_Difference",
                "Amplifier_Current", "Amplifier_Buffer"]


def _classified(lib: str, tmp_path: Path):
    symbols = library(SYMBOLS / f"{lib}.kicad_sym")
    text, refs = library_sheet(lib, symbols)
    sheet = tmp_path / f"{lib}.kicad_sch"
    sheet.write_text(text, encoding="utf-8")
    netlist = load_netlist(sheet)
    units, skipped = recognise(netlist.parts)
    by_ref: dict[str, list] = {}
    for unit in units:
        by_ref.setdefault(unit.part.ref, []).append(unit)
    return symbols, refs, by_ref, {s.part.ref: s.reason for s in skipped}, netlist


def _amplifier_units(symbol: list) -> int:
    """Units (numbered from 1) of a library symbol that hold an input pin: its
    amplifiers, power units aside."""
    found = set()
    for sub in symbol[2:]:
        if not (isinstance(sub, list) and sub and sub[0] == "symbol"):
            continue
        match = re.search(r"_(\d+)_(\d+)$", sub[1])
        unit = int(match.group(1)) if match else 0
        if unit and any(isinstance(p, list) and p and p[0] == "pin" and p[1] == "input"
                        for p in sub[2:]):
            found.add(unit)
    return len(found) or 1


def test_every_op_amp_of_the_op_amp_library_is_recognised(tmp_path):
    symbols, refs, found, skipped, _ = _classified("Amplifier_Operational", tmp_path)
    missed = []
    for name, symbol in sorted(symbols.items()):
        ref = refs[name]
        if name in NOT_OPAMPS:
            assert ref not in found, f"{name}: {NOT_OPAMPS[name]}, but taken for an op-amp"
            continue
        expected = _amplifier_units(symbol)
        if len(found.get(ref, [])) != expected:
            missed.append((name, expected, len(found.get(ref, [])), skipped.get(ref)))
    assert missed == []
    assert len(symbols) - len(NOT_OPAMPS) > 300  # the library as packaged


def test_unit_counts_agree_with_the_library_descriptions(tmp_path):
    symbols, refs, found, _, netlist = _classified("Amplifier_Operational", tmp_path)
    description = {p.ref: p.description for p in netlist.parts}
    words = {"single": 1, "dual": 2, "triple": 3, "quad": 4}
    checked = 0
    for name in symbols:
        ref = refs[name]
        match = re.match(r"\s*(single|dual|triple|quad)\b", description[ref], re.I)
        if name in NOT_OPAMPS or not match:
            continue
        assert len(found[ref]) == words[match.group(1).lower()], name
        checked += 1
    assert checked > 100


def test_feedback_pin_and_flag_outputs(tmp_path):
    # Op-amps with a separate feedback pin (FB) or an extra flag/monitor output: one
    # op-amp unit each, its output the amplifier's own (pin names from the library).
    symbols, refs, found, _, _ = _classified("Amplifier_Operational", tmp_path)
    for name, feedback in (("OPA859xDSG", "FB"), ("LTC6228xS8", "FB")):
        (unit,) = found[refs[name]]
        assert unit.feedback is not None and unit.feedback.name == feedback
        assert unit.out.name == "~"
    for name in ("OPA551P", "LTC1152", "OPA569DWP"):
        (unit,) = found[refs[name]]
        assert unit.out.name in ("~", "OUT")


@pytest.mark.parametrize("lib", NEVER_OPAMPS)
def test_no_unit_of_these_libraries_is_an_op_amp(lib, tmp_path):
    symbols, refs, found, skipped, _ = _classified(lib, tmp_path)
    names = {ref: name for name, ref in refs.items()}
    assert sorted(names[ref] for ref in found) == []
    assert len(symbols) > 5
