"""What a reviewer reads besides the numbers: stage identifiers, grouped assumptions and
the missing-data summary.

Outside sources: the corpus pair of one design read from its schematic and from the
editor's own exported netlist (zoemaestra hair-electrolysis-machine, SOURCES.tsv); the
Alloyed KitsBlips mixer as drawn (17 potentiometer halves RV1/1, RV1/2, RV2 to RV16,
connectors J1 to J8, counted in the file).
"""

from __future__ import annotations

import dataclasses

import pytest

from schemcheck.assumptions import compact
from schemcheck.audit import audit_netlist
from schemcheck.circuit.load import load_netlist
from schemcheck.engine.stages import amplifier_name
from schemcheck.model import Node, Part, Pin
from schemcheck.report.json import to_data
from schemcheck.report.markdown import checklist
from schemcheck.results import missing_across
from schemcheck.settings import Settings

from .circuits import circuit
from .conftest import CORPUS, FIXTURES, needs_corpus

HAIR = "zoemaestra__hair-electrolysis-machine-usb-c"
MIXER = "Alloyed__KitsBlips/kicad/mixer/mixer.kicad_sch"


def _part(ref, unit=1, unit_count=1):
    return Part(ref, unit, "OPX", "x:y", "/", unit_count=unit_count)


@pytest.mark.parametrize("part,channel,expected", [
    pytest.param(_part("U1"), None, "U1", id="single"),
    pytest.param(_part("U8", 2, 3), None, "U8/2", id="unit-of-a-multi-unit-symbol"),
    pytest.param(_part("U8"), 2, "U8/2", id="netlist-channel"),
    pytest.param(_part("U9", 2, 2), 1, "U9/2.1", id="several-per-unit"),
])
def test_amplifier_name(part, channel, expected):
    assert amplifier_name(part, channel) == expected


@needs_corpus
def test_same_identifier_from_schematic_and_netlist():
    ids = []
    for name in ("hair-electrolysis-machine.kicad_sch", "netlist.net"):
        result = audit_netlist(load_netlist(CORPUS / HAIR / name), Settings(mc_samples=0))
        ids.append(([s.id for s in result.stages],
                    sorted((f.rule, f.stage) for f in result.findings)))
    # U8/1's DC feedback runs only through a transistor: not analysed, with a warning;
    # U8/2 is the spare, tied off as a follower: neither a stage nor a finding
    assert ids[0] == ids[1] == ([], [("dc-path-unknown", "U8/1")])
    netlist = audit_netlist(load_netlist(CORPUS / HAIR / "netlist.net"), Settings(mc_samples=0))
    unknown = next(f for f in netlist.findings if f.rule == "dc-path-unknown")
    assert unknown.channel == 1  # the netlist's dual op-amp: one unit, two amplifiers


def test_missing_parameters_once_per_part_number():
    result = audit_netlist(circuit(
        "R1 GND m1 10k", "R2 m1 o1 10k", "U1 p=GND m=m1 out=o1 unit=1",
        "R3 GND m2 10k", "R4 m2 o2 10k", "U1 p=GND m=m2 out=o2 unit=2",
        "R5 GND m3 10k", "R6 m3 o3 10k", "U2 p=GND m=m3 out=o3 value=OPY"), Settings(mc_samples=0))
    found = [(f.data["value"], f.data["units"], f.data["stages"]) for f in result.findings
             if f.rule == "missing-parameters"]
    assert found == [("OPX", 2, ["U1/1", "U1/2"]), ("OPY", 1, ["U2/1"])]
    assert [(m.part, m.units) for m in result.missing_parameters] == [("OPX", 2), ("OPY", 1)]
    # across a batch: one entry per part number, units added up, designs named
    one, two = to_data(result), {**to_data(result), "file": "b.kicad_sch"}
    merged = missing_across([one, two])
    assert [(m.part, m.units, m.designs) for m in merged] == [
        ("OPX", 4, ["test", "b.kicad_sch"]), ("OPY", 2, ["test", "b.kicad_sch"])]


def test_compact_ranges():
    names = ["RV1/1", "RV1/2"] + [f"RV{n}" for n in range(2, 17)] + ["R7", "R9"]
    assert compact(names) == "R7, R9, RV1/1, RV1/2, RV2–RV16"


def test_open_parts_line_leaves_out_mechanical_and_rail_only_parts():
    base = circuit("R1 GND m 10k", "R2 m out 100k", "D1 m GND", "D2 GND VCC",
                   "U1 p=GND m=m out=out")
    hole = Part("H1", 1, "MountingHole", "Mechanical:MountingHole_Pad", "/",
                pins=(Pin("1", "1", "passive"), Pin("2", "2", "passive")))
    nets = tuple(dataclasses.replace(n, nodes=n.nodes + (Node("H1", "1"),)) if n.name == "m"
                 else dataclasses.replace(n, nodes=n.nodes + (Node("H1", "2"),))
                 if n.name == "GND" else n for n in base.nets)
    netlist = dataclasses.replace(base, parts=base.parts + (hole,), nets=nets)
    result = audit_netlist(netlist, Settings(mc_samples=0))
    opens = [a for a in result.assumptions if a.startswith("parts with no DC model")]
    assert opens == ["parts with no DC model, left open, that touch an analysed net: D1"]


def test_annotated_source_never_also_ideal():
    # The demo's bridge input J1 has Source_R = 350 Ω (fixtures/README.md).
    from schemcheck.run.batch import audit_paths

    demo = audit_paths([str(FIXTURES / "demo" / "frontend.kicad_sch")],
                       overrides={"mc_samples": 0}, jobs=1)
    lines = demo["designs"][0]["assumptions"]
    external = [a for a in lines if a.startswith("nets driven from outside")]
    assert external == ["nets driven from outside the design, as 0 V sources: BRIDGE, BRIDGE_P "
                        "through 350 Ω (annotated; J1); CHAIN_IN (J3) with no source resistance "
                        "(none annotated: field Source_R on the connector, or "
                        "[source_resistance] in the settings)"]
    assert not any("BRIDGE (source)" in a for a in lines)
    # the model's assumptions are the report's, once; the design's are only its own
    assert demo["assumptions"] and not set(demo["assumptions"]) & set(lines)
    assert not any("temperature" in a for a in lines)  # the settings line says it
    text = checklist(demo)
    assert text.count("<details>") == 1 and text.count(demo["assumptions"][0]) == 1


@needs_corpus
def test_mixer_assumptions_fit_in_a_few_lines():
    result = audit_netlist(load_netlist(CORPUS / MIXER), Settings(mc_samples=0))
    assert len(result.assumptions) <= 4, result.assumptions
    pots = [a for a in result.assumptions if "potentiometer" in a]
    assert pots == ["potentiometers at mid-travel: RV1/1, RV1/2, RV2–RV16 (5 kΩ each side)"]
    external = [a for a in result.assumptions if a.startswith("nets driven from outside")]
    # J4-J8 feed the summing nodes; J1-J3 are outputs (their nets are driven inside)
    assert len(external) == 1 and all(f"(J{n})" in external[0] for n in range(4, 9))
    left_open = [a for a in result.assumptions if a.startswith("would-be sources left open")]
    assert len(left_open) == 1 and all(f"(connector J{n})" in left_open[0] for n in range(1, 4))
    # J12 sits on the rail only: no part left open is listed
    assert not any(a.startswith("parts with no DC model") for a in result.assumptions)
