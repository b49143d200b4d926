"""Connectivity rules on hand-made fixtures (fixtures/reader/, made by tests/make_fixtures.py).

Outside source for every expected net: the connection rules of KiCad's schematic file
format documentation (dev-docs.kicad.org, "Schematic File Format": pin positions in
library units with Y up, symbol rotation and mirror, wires joined at shared points,
labels by name and scope, hierarchical labels to sheet pins) and the editor's behaviour
(a junction joins crossing wires; crossing wires without one stay apart), written out
here by hand for each drawing.
"""

from __future__ import annotations

import pytest

from schemcheck.circuit.load import load_netlist

from . import make_fixtures
from .conftest import FIXTURES

READER = FIXTURES / "reader"


def nets_by_name(netlist):
    return {net.name: sorted(f"{n.ref}.{n.pin}" for n in net.nodes) for net in netlist.nets}


@pytest.fixture(scope="module")
def rules():
    return load_netlist(READER / "rules.kicad_sch")


@pytest.fixture(scope="module")
def hier():
    return load_netlist(READER / "hier" / "hier.kicad_sch")


def test_fixtures_are_current(tmp_path, monkeypatch):
    monkeypatch.setattr(make_fixtures, "OUT", tmp_path / "reader")
    monkeypatch.setattr(make_fixtures, "NETWORK_OUT", tmp_path / "network")
    make_fixtures.main()
    made_files = list(tmp_path.rglob("*.kicad_sch"))
    assert {p.parent.name for p in made_files} >= {"reader", "network"}
    for made in made_files:
        committed = FIXTURES / made.relative_to(tmp_path)
        assert committed.read_text(encoding="utf-8") == made.read_text(encoding="utf-8"), (
            f"{committed} is stale: run python -m tests.make_fixtures")


@pytest.mark.parametrize(
    ("label", "node"),
    [  # one label on each pin end; pin numbers per unit: (+, -, out) = (3, 2, 1) / (5, 6, 7)
        ("/U1A_P", "U1.3"), ("/U1A_N", "U1.2"), ("/U1A_O", "U1.1"),  # unit 1, 0 deg
        ("/U1B_P", "U1.5"), ("/U1B_N", "U1.6"), ("/U1B_O", "U1.7"),  # unit 2, 90 deg
        ("/U2A_P", "U2.3"), ("/U2A_N", "U2.2"), ("/U2A_O", "U2.1"),  # 270 deg, mirror y
        ("/U2B_P", "U2.5"), ("/U2B_N", "U2.6"), ("/U2B_O", "U2.7"),  # 180 deg, mirror x
        ("/U3B_P", "U3.5"), ("/U3B_N", "U3.6"), ("/U3B_O", "U3.7"),  # 90 deg, mirror x
    ],
)
def test_rotated_and_mirrored_unit_pins(rules, label, node):
    assert nets_by_name(rules)[label] == [node]


def test_only_placed_units_have_pins(rules):
    # U3 places only unit 2: pins 5, 6, 7 and nothing of units 1 and 3.
    u3 = [p for p in rules.parts if p.ref == "U3"]
    assert [(p.unit, sorted(q.number for q in p.pins)) for p in u3] == [(2, ["5", "6", "7"])]


def test_power_unit_and_hidden_supply_pins_join_supply_nets(rules):
    nets = nets_by_name(rules)
    assert nets["VCC"] == ["U1.8", "U4.7"]  # power symbol VCC + U4's hidden VCC pin
    assert nets["VEE"] == ["U1.4", "U4.4"]


def test_t_connection_without_junction(rules):
    assert nets_by_name(rules)["/TNET"] == ["R2.1", "R3.1"]


def test_crossing_wires(rules):
    nets = {tuple(v) for v in nets_by_name(rules).values()}
    assert ("R4.2", "R5.1") in nets and ("R6.2", "R7.1") in nets  # no junction: two nets
    assert ("R14.2", "R15.1", "R16.2", "R17.1") in nets  # junction: one net


def test_labels_join_separate_wires_and_dnp_is_absent(rules):
    assert nets_by_name(rules)["/JOIN"] == ["R10.1", "R8.1"]
    r9 = next(p for p in rules.parts if p.ref == "R9")
    assert r9.dnp and all(n.ref != "R9" for net in rules.nets for n in net.nodes)


def test_label_on_wire_interior_names_it(rules):
    assert nets_by_name(rules)["/MIDLBL"] == ["R11.1", "R12.1"]


def test_lib_name_selects_library_symbol(rules):
    assert nets_by_name(rules)["/LIBNAME_1"] == ["R13.1"]


def test_power_flag_names_nothing(rules):
    nets = nets_by_name(rules)
    assert "PWR_FLAG" not in nets
    assert nets["GND"] == ["R10.2", "R11.2", "R12.2", "R13.2", "R2.2", "R8.2"]


def test_unconnected_pin_is_own_net(rules):
    assert nets_by_name(rules)["unnamed-R18-1"] == ["R18.1"]


def test_power_symbols_not_listed(rules):
    assert not any(n.ref.startswith("#") for net in rules.nets for n in net.nodes)
    assert not any(p.ref.startswith("#") for p in rules.parts)


def test_twice_instantiated_child_sheet(hier):
    nets = nets_by_name(hier)
    assert nets["/Channel A/MID"] == ["C101.1", "R101.2", "R102.1", "R103.1"]
    assert nets["/Channel B/MID"] == ["C201.1", "R201.2", "R202.1", "R203.1"]
    assert nets["/IN_A"] == ["J1.1", "R101.1"]  # sheet pin IN of Channel A
    assert nets["/IN_B"] == ["J1.2", "R201.1"]
    assert nets["/OUT_A"] == ["R102.2"]
    assert nets["VREF"] == ["R1.1", "R103.2", "R203.2"]  # global label across instances
    assert nets["GND"] == ["C101.2", "C201.2", "R1.2"]
    sheets = {p.ref: p.sheet for p in hier.parts}
    assert sheets["R101"] == "/Channel A/" and sheets["R201"] == "/Channel B/"
    assert sheets["J1"] == "/"


def test_json_shape(rules):
    data = rules.to_dict()
    assert {"name": "/TNET", "nodes": [{"ref": "R2", "pin": "1"}, {"ref": "R3", "pin": "1"}]} \
        in data["nets"]
    part = next(p for p in data["parts"] if p["ref"] == "R13")
    assert {k: part[k] for k in ("ref", "value", "lib_id", "sheet")} == {
        "ref": "R13", "value": "2k2", "lib_id": "Device:R", "sheet": "/"}
    assert part["fields"]["Value"] == "2k2"


BODY_STYLE = """(kicad_sch (version 20250114) (generator "eeschema") (uuid "aaaa")
  (lib_symbols
    (symbol "T:Gate"
      (symbol "Gate_1_1" (pin input line (at 0 0 0) (length 2.54) (name "A") (number "1")))
      (symbol "Gate_1_2" (pin input line (at 5.08 0 0) (length 2.54) (name "A") (number "1")))))
  (symbol (lib_id "T:Gate") (at 100 100 0) (unit 1) (convert 2) (exclude_from_sim yes)
    (uuid "s1") (property "Reference" "G1") (property "Value" "x")
    (instances (project "p" (path "/aaaa" (reference "G1") (unit 1)))))
  (label "ALT" (at 105.08 100 0))
  (label "NORMAL" (at 100 100 0)))
"""


def test_body_style_selects_the_de_morgan_pins():
    # KiCad file format: a library sub-symbol "NAME_UNIT_STYLE"; body style 2 is the
    # alternate (De Morgan) drawing, chosen by the placed symbol's (convert 2).
    from schemcheck.circuit.connectivity import build_netlist
    from schemcheck.drawing import Design
    from schemcheck.io.kicad_sch import read_sheet

    netlist = build_netlist(Design(root="k", sheets={"k": read_sheet(BODY_STYLE, "b.kicad_sch")}))
    assert nets_by_name(netlist) == {"/ALT": ["G1.1"]}
    g1 = netlist.parts[0]
    assert g1.body_style == 2 and g1.exclude_from_sim


def test_sheet_level_dnp_makes_its_parts_absent(tmp_path):
    from .synth import Sheet

    top = Sheet(project="dnp")
    child = Sheet(project="dnp", seed=3)
    r = child.place("Device:R", "R1", "1k", 50.8, 50.8)
    child.label("A", r.pin("1"), kind="global_label")
    sheet_uuid = top.sheet("Spare", "child.kicad_sch", 100, 50, [], dnp=True)
    r.instances = [(f"/{top.uuid}/{sheet_uuid}", "R1", 1)]
    (tmp_path / "top.kicad_sch").write_text(top.text(), encoding="utf-8")
    (tmp_path / "child.kicad_sch").write_text(child.text(), encoding="utf-8")
    netlist = load_netlist(tmp_path / "top.kicad_sch")
    assert [p.dnp for p in netlist.parts] == [True]
    assert netlist.nets == ()
