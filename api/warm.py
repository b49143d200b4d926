"""Imported once by the audit process server before it forks each audit: loads every
module an audit uses and runs a tiny audit, so that regular expressions are compiled,
caches filled and numpy's linear algebra initialised in every child from the start."""

from __future__ import annotations


def _warm() -> None:
    from schemcheck.audit import audit_netlist
    from schemcheck.circuit import load  # noqa: F401
    from schemcheck.circuit.connectivity import build_netlist
    from schemcheck.drawing import Design
    from schemcheck.io import partslib, settings_file  # noqa: F401
    from schemcheck.io.kicad_sch import read_sheet
    from schemcheck.model import Net, Netlist, Node, Part, Pin
    from schemcheck.report import markdown, sarif  # noqa: F401
    from schemcheck.report.json import to_data
    from schemcheck.settings import Settings

    text = ('(kicad_sch (version 20250114) (generator "eeschema") (uuid "0")'
            ' (lib_symbols) (wire (pts (xy 0 0) (xy 1 0))))')
    build_netlist(Design(root="warm", sheets={"warm": read_sheet(text, "warm")}))
    # an inverting stage, built directly: recognition, network, solve, budgets, checks
    passive = (Pin("1", "~", "passive", 1), Pin("2", "~", "passive", 1))
    parts = (Part("R1", 1, "10k", "Device:R", "/", {}, passive),
             Part("R2", 1, "100k", "Device:R", "/", {}, passive),
             Part("R3", 1, "22k", "Device:R", "/", {}, passive),
             Part("U1", 1, "X", "Amplifier_Operational:X", "/",
                  {"Vos": "1mV", "Ib": "10nA", "Ios": "1nA", "DC_Budget": "1mV"},
                  (Pin("3", "+", "input", 1), Pin("2", "-", "input", 1),
                   Pin("1", "~", "output", 1)), description="operational amplifier"))
    nets = (Net("GND", (Node("R1", "1"), Node("R3", "2")), kind="power"),
            Net("m", (Node("R1", "2"), Node("R2", "1"), Node("U1", "2"))),
            Net("p", (Node("R3", "1"), Node("U1", "3"))),
            Net("out", (Node("R2", "2"), Node("U1", "1"))))
    report = audit_netlist(Netlist(nets=nets, parts=parts, source="warm"), Settings(mc_samples=50))
    markdown.checklist({"designs": [to_data(report)], "tool": {"version": ""}})
    import numpy as np

    np.linalg.solve(np.eye(3)[None].repeat(4, 0), np.ones((4, 3, 1)))


_warm()
