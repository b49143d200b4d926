"""Write the bundled demo design in ``fixtures/demo/`` (an invented scenario).

A four-channel lab sensor front-end:

* ``photodiode.kicad_sch`` — a photodiode transimpedance channel (JFET-input op-amp,
  10 MΩ feedback);
* ``bridge.kicad_sch`` — a strain-bridge difference amplifier (gain 10) fed from a
  connector whose 350 Ω bridge output resistance is annotated;
* ``acpreamp.kicad_sch`` — an AC-coupled preamp whose + input reaches the source only
  through its coupling capacitor (no bias path);
* ``chain.kicad_sch`` — a two-stage chain on a dual op-amp: an inverting x10 stage with
  a 22 kΩ compensation resistor where 9.09 kΩ is needed, into a x11 non-inverting stage
  with a 20 mV budget;
* ``frontend.kicad_sch`` — the root: the four sheets and the connectors.

Run ``python -m tests.make_demo`` from the repository root; ``tests/test_demo.py``
checks the committed files are current and asserts the demo's findings.
"""

from __future__ import annotations

from pathlib import Path

from .synth import Sheet

OUT = Path(__file__).resolve().parents[1] / "fixtures" / "demo"
DUAL = "Amplifier_Operational:Generic_Dual"
PROJECT = "frontend"


def stage(s: Sheet, x: float, y: float, *, ref: str, unit: int, value: str,
          fields: dict[str, str] | None = None, ri: str | None = "10k", rf: str = "100k",
          rp: str | None = None, signal: str = "minus", in_label: str = "IN",
          out_label: str = "OUT", refs: tuple[str, str, str] = ("R1", "R2", "R3"),
          in_kind: str = "global_label", out_kind: str = "global_label",
          plus_part: str | None = None, minus_part: str | None = None,
          feedback_cap: str | None = None, lib: str = DUAL) -> None:
    """One gain stage around op-amp unit ``ref``/``unit`` at (x, y), drawn mirrored
    so the - input is the upper pin. ``signal`` says where the input label goes."""
    u = s.place(lib, ref, value, x, y, mirror="x", unit=unit, fields=fields or {})
    minus_pin, plus_pin, out_pin = (("2", "3", "1") if unit == 1 else ("6", "5", "7"))
    minus, plus, out = u.pin(minus_pin), u.pin(plus_pin), u.pin(out_pin)
    r_in, r_f, r_p = refs
    # - input: an input element (resistor or photodiode) from the left
    if minus_part == "photodiode":
        d = s.place("Device:D", r_in, "PD-1", x - 20.32, y - 2.54)
        s.wire(d.pin("2"), minus)
        s.place("power:GND", f"#PWR{ref}{unit}a", "GND", *d.pin("1"))
    elif ri is not None:
        r = s.place("Device:R", r_in, ri, x - 20.32, y - 2.54, angle=90)
        s.wire(r.pin("2"), minus)
        if signal in ("minus", "both"):
            s.label(in_label, r.pin("1"), kind=in_kind)
        else:
            s.place("power:GND", f"#PWR{ref}{unit}a", "GND", *r.pin("1"))
    # feedback
    s.junction((x - 12.7, y - 2.54))
    s.wire((x - 12.7, y - 2.54), (x - 12.7, y - 12.7))
    f = s.place("Device:R", r_f, rf, x, y - 12.7, angle=90)
    s.wire((x - 12.7, y - 12.7), f.pin("1"))
    s.path(f.pin("2"), (x + 12.7, y - 12.7), (x + 12.7, y))
    s.wire(out, (x + 12.7, y))
    s.junction((x + 12.7, y))
    s.wire((x + 12.7, y), (x + 20.32, y))
    s.label(out_label, (x + 20.32, y), kind=out_kind)
    if feedback_cap:
        c = s.place("Device:C", feedback_cap, "2p2", x, y - 22.86, angle=90)  # noqa: E501
        s.path((x - 12.7, y - 12.7), (x - 12.7, y - 22.86), c.pin("1"))
        s.path(c.pin("2"), (x + 12.7, y - 22.86), (x + 12.7, y - 12.7))
    # + input
    if plus_part == "coupling":
        c = s.place("Device:C", r_p, "1u", x - 16.51, y + 2.54, angle=90)
        s.wire(c.pin("2"), plus)
        s.wire(c.pin("1"), (x - 24.13, y + 2.54))
        s.label(in_label, (x - 24.13, y + 2.54), kind=in_kind)
    elif signal == "plus" or signal == "both":
        if signal == "both":
            r3 = s.place("Device:R", r_p, rp or "10k", x - 20.32, y + 2.54, angle=90)
            s.wire(r3.pin("2"), plus)
            s.label(in_label + "_P", r3.pin("1"), kind=in_kind)
        else:
            s.wire(plus, (x - 24.13, y + 2.54))
            s.label(in_label, (x - 24.13, y + 2.54), kind=in_kind)
    if rp is not None and signal != "plus":
        ref_p = r_p if signal != "both" else refs[2][:-1] + str(int(refs[2][-1]) + 1)
        value_p = rp if signal != "both" else rf
        s.junction((x - 10.16, y + 2.54)) if signal == "both" else None
        if signal != "both":
            s.wire(plus, (x - 10.16, y + 2.54))
        r = s.place("Device:R", ref_p, value_p, x - 10.16, y + 8.89)
        s.wire((x - 10.16, y + 2.54), r.pin("1"))
        s.place("power:GND", f"#PWR{ref}{unit}b", "GND", *r.pin("2"))
    elif rp is None and signal == "minus" and plus_part is None:
        s.place("power:GND", f"#PWR{ref}{unit}b", "GND", *plus)


def power_unit(s: Sheet, ref: str, value: str, x: float, y: float) -> None:
    u = s.place(DUAL, ref, value, x, y, unit=3)
    s.place("power:VCC", f"#PWR{ref}v", "VCC", *u.pin("8"))
    s.place("power:VEE", f"#PWR{ref}e", "VEE", *u.pin("4"))


def child(seed: int) -> Sheet:
    return Sheet(project=PROJECT, seed=seed)


def photodiode() -> Sheet:
    s = child(31)
    stage(s, 101.6, 76.2, ref="U1", unit=1, value="LX-J1", minus_part="photodiode",
          ri=None, rf="10M", refs=("D101", "R101", ""), out_label="PD_OUT", feedback_cap="C101",
          fields={"DC_Budget": "5mV"})
    spare = s.place(DUAL, "U1", "LX-J1", 177.8, 76.2, unit=2)  # the spare half, tied off
    s.no_connect(spare.pin("7"))
    s.place("power:GND", "#PWRU1s1", "GND", *spare.pin("5"))
    s.place("power:GND", "#PWRU1s2", "GND", *spare.pin("6"))
    power_unit(s, "U1", "LX-J1", 101.6, 127)
    return s


def bridge() -> Sheet:
    s = child(32)
    stage(s, 101.6, 76.2, ref="U2", unit=1, value="LX-P7", signal="both", ri="10k", rf="100k",
          rp="10k", refs=("R201", "R202", "R203"), in_label="BRIDGE", out_label="BRIDGE_OUT")
    power_unit(s, "U2", "LX-P7", 101.6, 127)
    return s


def acpreamp() -> Sheet:
    s = child(33)
    stage(s, 101.6, 76.2, ref="U3", unit=1, value="LX-B27", signal="plus", ri="1k", rf="47k",
          plus_part="coupling", refs=("R301", "R302", "C301"), in_label="AC_IN",
          out_label="AC_OUT")
    power_unit(s, "U3", "LX-B27", 101.6, 127)
    return s


def chain() -> Sheet:
    s = child(34)
    stage(s, 76.2, 76.2, ref="U4", unit=1, value="LX-B27", ri="10k", rf="100k", rp="22k",
          refs=("R401", "R402", "R403"), in_label="CHAIN_IN", out_label="STAGE1",
          out_kind="label")
    stage(s, 152.4, 76.2, ref="U4", unit=2, value="LX-B27", signal="plus", ri="1k", rf="10k",
          refs=("R404", "R405", ""), in_label="STAGE1", in_kind="label", out_label="CHAIN_OUT",
          fields={"DC_Budget": "20mV"})
    power_unit(s, "U4", "LX-B27", 101.6, 127)
    return s


def root(children: dict[str, str]) -> Sheet:
    s = Sheet(project=PROJECT, seed=30)
    y = 30.48
    for number, (name, file) in enumerate(children.items()):
        s.sheet(name, file, 127, y + 30.48 * number, [])
    # connectors: bridge (with its output resistance), AC input, chain input, outputs
    j1 = s.place("Connector:Conn_01x02", "J1", "BRIDGE", 25.4, 40.64,
                 fields={"Source_R": "350"})
    s.label("BRIDGE", j1.pin("1"), kind="global_label")
    s.label("BRIDGE_P", j1.pin("2"), kind="global_label")
    j2 = s.place("Connector:Conn_01x02", "J2", "AC_IN", 25.4, 71.12)
    s.label("AC_IN", j2.pin("1"), kind="global_label")
    s.place("power:GND", "#PWR01", "GND", *j2.pin("2"))
    j3 = s.place("Connector:Conn_01x02", "J3", "CHAIN_IN", 25.4, 101.6)
    s.label("CHAIN_IN", j3.pin("1"), kind="global_label")
    s.place("power:GND", "#PWR02", "GND", *j3.pin("2"))
    return s


def main() -> None:
    OUT.mkdir(parents=True, exist_ok=True)
    children = {"Photodiode": "photodiode.kicad_sch", "Bridge": "bridge.kicad_sch",
                "AC preamp": "acpreamp.kicad_sch", "Chain": "chain.kicad_sch"}
    top = root(children)
    # the child symbols' instance paths: /<root uuid>/<sheet uuid>
    sheet_uuids = _sheet_uuids(top)
    for (name, file), make in zip(children.items(), (photodiode, bridge, acpreamp, chain)):
        sheet = make()
        path = f"/{top.uuid}/{sheet_uuids[name]}"
        for symbol in sheet.symbols:
            symbol.instances = [(path, symbol.ref, symbol.unit)]
        (OUT / file).write_text(sheet.text(), encoding="utf-8")
    (OUT / "frontend.kicad_sch").write_text(top.text(), encoding="utf-8")


def _sheet_uuids(top: Sheet) -> dict[str, str]:
    import re

    out = {}
    for item in top.items:
        if item.startswith("\t(sheet\n"):
            name = re.search(r'\(property "Sheetname" "([^"]+)"', item).group(1)
            out[name] = re.search(r'\(uuid "([^"]+)"\)', item).group(1)
    return out


if __name__ == "__main__":
    main()
