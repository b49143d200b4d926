"""The editor's exported netlists (S-expression and XML) give the same model.

Outside source: the netlist format "E" as KiCad's schematic editor exports it (the
S-expression ``(export (version "E") ...)`` and the XML intermediate netlist handed to
generator scripts); ``fixtures/reader/netlists/small.*`` are written by hand in that
format and describe the same four nets.
"""

from __future__ import annotations

import pytest

from schemcheck.circuit.load import load_netlist
from schemcheck.errors import ParseError

from .conftest import FIXTURES

NETLISTS = FIXTURES / "reader" / "netlists"


def shape(netlist):
    return ([(n.name, [(x.ref, x.pin) for x in n.nodes]) for n in netlist.nets],
            [(p.ref, p.value, p.lib_id, p.sheet, p.dnp, [(q.number, q.name, q.electrical_type)
                                                        for q in p.pins]) for p in netlist.parts])


def test_sexpr_and_xml_agree():
    assert (shape(load_netlist(NETLISTS / "small.net"))
            == shape(load_netlist(NETLISTS / "small.xml")))


def test_netlist_content():
    netlist = load_netlist(NETLISTS / "small.xml")
    nets = {n.name: [(x.ref, x.pin) for x in n.nodes] for n in netlist.nets}
    assert nets == {"GND": [("R1", "2"), ("U1", "3")], "/FB": [("R1", "1"), ("U1", "2")],
                    "OUT": [("U1", "1")], "unconnected-(U1-Pad5)": [("U1", "5")]}
    r1 = next(p for p in netlist.parts if p.ref == "R1")
    assert r1.fields["Tolerance"] == "1%" and r1.field("tolerance") == "1%"
    r2 = next(p for p in netlist.parts if p.ref == "R2")
    assert r2.dnp and r2.sheet == "/Gain/"


@pytest.mark.parametrize("name", ["bomb.xml", "external.xml"])
def test_entity_tricks_refused(name):
    # defusedxml (PyPI) refuses DTDs, entity expansion and external entities.
    with pytest.raises(ParseError) as caught:
        load_netlist(NETLISTS / name)
    assert "DTDs and entities are refused" in str(caught.value)


def test_malformed_xml_located(tmp_path):
    bad = tmp_path / "bad.xml"
    bad.write_text('<export version="E">\n  <components>\n    <comp ref="R1">\n</export>\n')
    with pytest.raises(ParseError) as caught:
        load_netlist(bad)
    assert (caught.value.line, caught.value.column) == (4, 3)
    assert str(caught.value).startswith(f"{bad}:4:3: expected well-formed XML")
