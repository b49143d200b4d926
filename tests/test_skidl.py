"""Independent source of connectivity: schematics drawn by skidl (PyPI, 3.0) from circuits
whose nets are known, in its labels-only mode; every net must match skidl's own.
"""

from __future__ import annotations

import logging
import os

import pytest

from schemcheck.circuit.load import load_netlist

from .conftest import FIXTURES


@pytest.fixture(scope="module")
def skidl(tmp_path_factory):
    """skidl, imported inside a temporary folder: importing it writes log files into the
    current folder, which must not be the working tree."""
    here = os.getcwd()
    os.chdir(tmp_path_factory.mktemp("skidl"))
    try:
        return pytest.importorskip("skidl")
    finally:
        os.chdir(here)


def _circuit_two_stage(s):
    vin, mid, vout, gnd, fb, vref = (s.Net(n) for n in ("VIN", "MID", "VOUT", "GND", "FB", "VREF"))
    r1, r2, r3, r4 = (s.Part("generic", "R", value=v) for v in ("10k", "100k", "4k7", "47k"))
    c1 = s.Part("generic", "C", value="1n")
    u = s.Part("generic", "Generic_Dual", value="OPX")
    d = s.Part("generic", "D", value="D")
    vin += r1[1]
    mid += r1[2], r2[1], u["2"]
    u["3"] += gnd
    vout += u["1"], r2[2], c1[1], r3[1]
    c1[2] += gnd
    fb += r3[2], r4[1], u["6"]
    r4[2] += u["7"], d["1"]
    vref += u["5"]
    d["2"] += gnd
    gnd += u["4"]


def _circuit_ladder(s):
    nodes = [s.Net(f"N{i}") for i in range(6)]
    gnd = s.Net("GND")
    for i in range(5):
        r = s.Part("generic", "R", value="1k")
        nodes[i] += r[1]
        nodes[i + 1] += r[2]
        c = s.Part("generic", "C", value="10n")
        nodes[i + 1] += c[1]
        gnd += c[2]


class _In:
    """Net and Part constructors bound to one skidl circuit."""

    def __init__(self, skidl, circuit):
        self.skidl = skidl
        self.circuit = circuit

    def Net(self, name):  # noqa: N802 - mirrors skidl's names
        return self.skidl.Net(name, circuit=self.circuit)

    def Part(self, lib, name, **kw):  # noqa: N802
        return self.skidl.Part(lib, name, circuit=self.circuit, **kw)


@pytest.mark.parametrize("build", [_circuit_two_stage, _circuit_ladder],
                         ids=["two-stage", "ladder"])
def test_skidl_schematic_nets(skidl, build, tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    logging.getLogger("skidl").setLevel(logging.ERROR)
    tool = skidl.KICAD8
    skidl.set_default_tool(tool)
    paths = skidl.lib_search_paths[tool]
    library = os.fspath(FIXTURES / "skidl")
    if library not in paths:
        paths.append(library)
    circuit = skidl.Circuit()
    build(_In(skidl, circuit))
    circuit.generate_schematic(filepath=os.fspath(tmp_path), top_name="net_check", tool=tool,
                               mode="labels")
    expected = {}
    for net in circuit.nets:
        pins = frozenset((pin.part.ref, pin.num) for pin in net.pins)
        if pins:
            expected[pins] = net.name
    assert len(expected) >= 5
    ours = load_netlist(tmp_path / "net_check.kicad_sch")
    got = {frozenset((n.ref, n.pin) for n in net.nodes): net for net in ours.nets}
    for pins, name in expected.items():
        assert pins in got, f"skidl net {name} {sorted(pins)} not found"
        if not name.startswith("N$"):
            assert got[pins].name.lstrip("/") == name
