"""Property: moving, rotating or mirroring a whole drawing never changes its netlist.

Outside source: the rule itself is geometric (a rigid motion of every item keeps every
coincidence and every point-on-segment relation), independent of our implementation;
hypothesis draws random drawings and random motions.
"""

from __future__ import annotations

import json
import os
import tempfile

from hypothesis import example, given, settings
from hypothesis import strategies as st

from schemcheck.circuit.connectivity import build_netlist
from schemcheck.drawing import Design
from schemcheck.io.kicad_sch import read_sheet

from .synth import PIN_AT, Sheet, pin_position

KINDS = [("Device:R", 1, ("1", "2")), ("Device:C", 1, ("1", "2")),
         ("Amplifier_Operational:Generic_Dual", 1, ("3", "2", "1")),
         ("Amplifier_Operational:Generic_Dual", 2, ("5", "6", "7"))]
ORIENT = [(a, m) for a in (0, 90, 180, 270) for m in ("", "x", "y")]


def motion(angle: int, mirror: str):
    """The linear part of a rigid motion on sheet vectors (Y down)."""
    return lambda v: pin_position(0, 0, angle, mirror, (v[0], -v[1]))


def compose(sym_angle: int, sym_mirror: str, g_angle: int, g_mirror: str) -> tuple[int, str]:
    """The (angle, mirror) of a symbol after the motion, found by trying all twelve."""
    g = motion(g_angle, g_mirror)
    probes = [(1.0, 2.0), (3.0, -1.0)]
    want = [g(pin_position(0, 0, sym_angle, sym_mirror, p)) for p in probes]
    for angle, mirror in ORIENT:
        if [pin_position(0, 0, angle, mirror, p) for p in probes] == want:
            return angle, mirror
    raise AssertionError("no orientation matches")  # pragma: no cover


@st.composite
def drawings(draw):
    count = draw(st.integers(2, 6))
    parts = []
    for i in range(count):
        kind = draw(st.sampled_from(KINDS))
        angle, mirror = draw(st.sampled_from(ORIENT))
        parts.append((kind, 50.8 * (i % 3), 50.8 * (i // 3), angle, mirror))
    pins = [(i, num) for i, (kind, *_rest) in enumerate(parts) for num in kind[2]]
    pairs = draw(st.lists(st.tuples(st.sampled_from(pins), st.sampled_from(pins)), max_size=8))
    labels = draw(st.lists(st.tuples(st.sampled_from(pins), st.sampled_from(["A", "B", "C"])),
                           max_size=4))
    return parts, pairs, labels


def render(parts, pairs, labels, g_angle=0, g_mirror="", dx=0.0, dy=0.0) -> str:
    g = motion(g_angle, g_mirror)

    def move(p):
        q = g(p)
        return (round(q[0] + dx, 4), round(q[1] + dy, 4))

    sheet = Sheet(project="prop", seed=5)
    placed = []
    for n, ((lib_id, unit, _), x, y, angle, mirror) in enumerate(parts):
        nx, ny = move((x, y))
        na, nm = compose(angle, mirror, g_angle, g_mirror)
        placed.append(sheet.place(lib_id, f"{'RCUU'[KINDS.index((lib_id, unit, _))]}{n + 1}",
                                  "v", nx, ny, angle=na, mirror=nm, unit=unit))

    def pin_at(i, num):
        (lib_id, _, _), x, y, angle, mirror = parts[i]
        return move(pin_position(x, y, angle, mirror, PIN_AT[lib_id][num]))

    for a, b in pairs:
        if pin_at(*a) != pin_at(*b):
            sheet.wire(pin_at(*a), pin_at(*b))
    for pin, name in labels:
        sheet.label(name, pin_at(*pin))
    return sheet.text()


def netlist_of(text: str):
    sheet = read_sheet(text, "prop.kicad_sch")
    netlist = build_netlist(Design(root="k", sheets={"k": sheet}))
    return sorted((net.name if net.named else "", tuple(net.nodes)) for net in netlist.nets)


@settings(max_examples=60, deadline=None)
@given(drawings(), st.sampled_from([0, 90, 180, 270]), st.sampled_from(["", "x", "y"]),
       st.integers(-20, 20), st.integers(-20, 20))
def test_rigid_motion_keeps_netlist(drawing, angle, mirror, dx, dy):
    parts, pairs, labels = drawing
    before = netlist_of(render(parts, pairs, labels))
    after = netlist_of(render(parts, pairs, labels, angle, mirror, dx * 2.54, dy * 2.54 + 200))
    assert before == after


# --- every JSON report is strict JSON --------------------------------------------------
# Outside source: RFC 8259 §6 ("Numeric values that cannot be represented ... such as
# Infinity and NaN are not permitted"); the reports are parsed by json.loads refusing
# both. Field and resistor values are drawn from the trade's notation and from the
# values that broke the tool before (overflowing, subnormal, NaN, infinite).

_VALUES = st.one_of(
    st.sampled_from(["1e-300", "1e300", "1e308", "0", "1" * 30, "1e999", "nan", "inf", "-1mV",
                     "±1e-20A", "1fV", "1e-320", "9" * 400, "1e-3", "3", "120dB", "0.1"]),
    st.floats(allow_nan=True, allow_infinity=True).map(repr),
    st.tuples(st.floats(min_value=1e-30, max_value=1e30), st.sampled_from(["", "m", "u", "n",
                                                                              "p", "k", "M"]),
              st.sampled_from(["V", "A", "", "V/°C"])).map(lambda t: f"{t[0]:g}{t[1]}{t[2]}"))
_RESISTORS = st.sampled_from(["10k", "1e-300", "1e300", "0R", "1e-320", "DNP", "1", "1G",
                              "4k7", "1e308"])


def _strict(text: str):
    def refuse(name):
        raise ValueError(f"{name} is not JSON")

    return json.loads(text, parse_constant=refuse)


@settings(max_examples=40, deadline=None, database=None)
# the values that reached a report as NaN or Infinity before, always tried
@example({"Aol": "1e999"}, "10k", "100k", "9k1", "20")
@example({"T_hot": "nan", "Ib_hot": "1uA"}, "10k", "100k", "9k1", "20")
@example({"T_hot": "inf"}, "1e-300", "1e300", "1e308", "2000")
@given(st.dictionaries(st.sampled_from(["Vos", "Ib", "Ios", "TCVos", "Ib_hot", "Ios_hot", "T_hot",
                                        "Aol", "DC_Budget"]), _VALUES),
       _RESISTORS, _RESISTORS, _RESISTORS, st.sampled_from(["0", "20", "2000"]))
def test_every_json_report_is_strict(fields, ri, rf, rp, samples):
    from click.testing import CliRunner

    from schemcheck.cli import main

    from .make_demo import stage

    sheet = Sheet(project="strict", seed=9)
    stage(sheet, 76.2, 76.2, ref="U1", unit=1, value="OPX", ri=ri, rf=rf, rp=rp, fields=fields)
    stage(sheet, 152.4, 76.2, ref="U1", unit=2, value="OPX", fields=fields, in_label="OUT",
          out_label="OUT2", refs=("R4", "R5", "R6"))
    with tempfile.TemporaryDirectory() as folder:
        path = os.path.join(folder, "strict.kicad_sch")
        with open(path, "w", encoding="utf-8") as handle:
            handle.write(sheet.text())
        for fmt in ("json", "sarif"):
            result = CliRunner().invoke(main, ["audit", path, "--no-cache", "--samples", samples,
                                               "--format", fmt])
            assert result.exception is None or isinstance(result.exception, SystemExit)
            assert result.exit_code in (0, 1, 2)
            report = _strict(result.stdout)
            if fmt == "json":
                for design in report["designs"]:
                    assert all(isinstance(s["params"]["source"], dict) for s in design["stages"])
