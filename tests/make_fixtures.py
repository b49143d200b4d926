"""Write the hand-made reader fixtures in ``fixtures/reader/`` and the DC network traps
in ``fixtures/network/`` (drawn by :mod:`tests.network_sheets`).

Run ``python -m tests.make_fixtures`` from the repository root after changing this
file; ``tests/test_connectivity.py`` checks that the committed files are current. What
each fixture must give is stated in ``fixtures/README.md`` and asserted in the tests.
"""

from __future__ import annotations

from pathlib import Path

from .network_sheets import SHEETS
from .synth import Sheet, _uuid

OUT = Path(__file__).resolve().parents[1] / "fixtures" / "reader"
NETWORK_OUT = Path(__file__).resolve().parents[1] / "fixtures" / "network"

DUAL = "Amplifier_Operational:Generic_Dual"
ORIENTATIONS = [  # (ref, unit, x, y, angle, mirror)
    ("U1", 1, 50.8, 50.8, 0, ""),
    ("U1", 2, 101.6, 50.8, 90, ""),
    ("U2", 1, 50.8, 101.6, 270, "y"),
    ("U2", 2, 101.6, 101.6, 180, "x"),
    ("U3", 2, 152.4, 101.6, 90, "x"),
]


def rules_sheet() -> Sheet:
    s = Sheet(project="rules", seed=11)
    # Rotated and mirrored units of dual op-amps: a label on every pin end.
    for ref, unit, x, y, angle, mirror in ORIENTATIONS:
        sym = s.place(DUAL, ref, "OPX", x, y, angle=angle, mirror=mirror, unit=unit)
        pins = ("3", "2", "1") if unit == 1 else ("5", "6", "7")
        for number, role in zip(pins, ("P", "N", "O")):
            s.label(f"{ref}{'AB'[unit - 1]}_{role}", sym.pin(number))
    # The power unit of U1, supplies through power symbols.
    power = s.place(DUAL, "U1", "OPX", 152.4, 50.8, angle=180, unit=3)
    vcc = s.place("power:VCC", "#PWR01", "VCC", *power.pin("8"))
    vee = s.place("power:VEE", "#PWR02", "VEE", *power.pin("4"))
    del vcc, vee
    # A single op-amp whose supply pins are hidden power inputs named VCC / VEE.
    s.place("Amplifier_Operational:Generic_HiddenSupply", "U4", "OPH", 203.2, 50.8)

    # T: a wire end on the interior of another wire, no junction dot.
    s.wire((30.48, 139.7), (71.12, 139.7))
    s.label("TNET", (30.48, 139.7))
    r2 = s.place("Device:R", "R2", "1k", 50.8, 143.51)
    s.wire((50.8, 139.7), r2.pin("1"))
    s.place("Device:R", "R3", "1k", 71.12, 143.51)  # pin 1 on the wire's right end
    s.place("power:GND", "#PWR03", "GND", *r2.pin("2"))
    # Wires crossing without a junction: two nets.
    s.place("Device:R", "R4", "1k", 91.44, 125.73)  # pin 2 at (91.44, 129.54)
    s.place("Device:R", "R5", "1k", 91.44, 153.67)  # pin 1 at (91.44, 149.86)
    s.wire((91.44, 129.54), (91.44, 149.86))
    s.place("Device:R", "R6", "1k", 77.47, 139.7, angle=90)  # pin 2 at (81.28, 139.7)
    s.place("Device:R", "R7", "1k", 105.41, 139.7, angle=90)  # pin 1 at (101.6, 139.7)
    s.wire((81.28, 139.7), (101.6, 139.7))
    # The same crossing with a junction dot: one net.
    s.place("Device:R", "R14", "1k", 132.08, 125.73)
    s.place("Device:R", "R15", "1k", 132.08, 153.67)
    s.wire((132.08, 129.54), (132.08, 149.86))
    s.place("Device:R", "R16", "1k", 118.11, 139.7, angle=90)
    s.place("Device:R", "R17", "1k", 146.05, 139.7, angle=90)
    s.wire((121.92, 139.7), (142.24, 139.7))
    s.junction((132.08, 139.7))
    # Two separate wires joined by a local label of the same name; a DNP part on them.
    r8 = s.place("Device:R", "R8", "10k", 20.32, 173.99)
    s.wire(r8.pin("1"), (30.48, 170.18))
    s.label("JOIN", (30.48, 170.18))
    r10 = s.place("Device:R", "R10", "10k", 71.12, 173.99)
    s.wire((60.96, 170.18), r10.pin("1"))
    s.label("JOIN", (60.96, 170.18))
    s.place("Device:R", "R9", "10k", 60.96, 173.99, dnp=True)  # pin 1 at (60.96, 170.18)
    # A label on the interior of a wire names it.
    r11 = s.place("Device:R", "R11", "10k", 121.92, 173.99)
    r12 = s.place("Device:R", "R12", "10k", 142.24, 173.99)
    s.wire(r11.pin("1"), r12.pin("1"))
    s.label("MIDLBL", (132.08, 170.18))
    # A placed symbol naming its library symbol through lib_name.
    r13 = s.place("Device:R", "R13", "2k2", 172.72, 173.99, lib_name="R_small_1")
    s.label("LIBNAME_1", r13.pin("1"))
    # Ground for the rest, one PWR_FLAG on it (its output pin names no net).
    for r in (r8, r10, r11, r12, r13):
        s.place("power:GND", f"#PWR{len(s.symbols):02d}", "GND", *r.pin("2"))
    s.place("power:PWR_FLAG", "#FLG01", "PWR_FLAG", *r13.pin("2"))
    # A pin with a no-connect flag stays a one-pin net.
    r18 = s.place("Device:R", "R18", "1k", 203.2, 173.99)
    s.no_connect(r18.pin("1"))
    s.label("NC_OTHER", r18.pin("2"))
    return s


def hierarchy() -> tuple[Sheet, Sheet]:
    top = Sheet(project="hier", seed=21)
    child = Sheet(project="hier", seed=22)
    seed = [777]
    a_uuid, b_uuid = _uuid(seed), _uuid(seed)
    j1 = top.place("Connector:Conn_01x02", "J1", "SENSORS", 25.4, 50.8)
    top.label("IN_A", j1.pin("1"))
    top.label("IN_B", j1.pin("2"))
    for name, sheet_uuid, y in (("Channel A", a_uuid, 40.64), ("Channel B", b_uuid, 91.44)):
        letter = name[-1]
        top.sheet(name, "channel.kicad_sch", 76.2, y,
                  [("IN", (76.2, y + 5.08)), ("OUT", (96.52, y + 5.08))], uuid=sheet_uuid)
        top.wire((68.58, y + 5.08), (76.2, y + 5.08))
        top.label(f"IN_{letter}", (68.58, y + 5.08))
        top.wire((96.52, y + 5.08), (104.14, y + 5.08))
        top.label(f"OUT_{letter}", (104.14, y + 5.08))
    rtop = top.place("Device:R", "R1", "100k", 139.7, 50.8)
    top.label("VREF", rtop.pin("1"), kind="global_label")
    top.place("power:GND", "#PWR01", "GND", *rtop.pin("2"))

    base = f"/{top.uuid}"
    paths = {"A": f"{base}/{a_uuid}", "B": f"{base}/{b_uuid}"}

    def inst(number: int, prefix: str = "R") -> list[tuple[str, str, int]]:
        return [(paths["A"], f"{prefix}{100 + number}", 1),
                (paths["B"], f"{prefix}{200 + number}", 1)]

    r1 = child.place("Device:R", "R101", "10k", 50.8, 50.8, angle=90, instances=inst(1))
    r2 = child.place("Device:R", "R102", "10k", 76.2, 50.8, angle=90, instances=inst(2))
    c1 = child.place("Device:C", "C101", "100n", 63.5, 60.96, instances=inst(1, "C"))
    r3 = child.place("Device:R", "R103", "1M", 101.6, 50.8, angle=90, instances=inst(3))
    child.label("IN", r1.pin("1"), kind="hierarchical_label")
    child.wire(r1.pin("2"), r2.pin("1"))
    child.label("MID", (63.5, 50.8))
    child.wire((63.5, 50.8), c1.pin("1"))
    child.label("OUT", r2.pin("2"), kind="hierarchical_label")
    child.label("MID", r3.pin("1"))
    child.label("VREF", r3.pin("2"), kind="global_label")
    for i, sym in enumerate((c1,)):
        child.place("power:GND", f"#PWR1{i}", "GND", *sym.pin("2"),
                    instances=[(paths["A"], f"#PWR1{i}", 1), (paths["B"], f"#PWR2{i}", 1)])
    return top, child


def main() -> None:
    OUT.mkdir(parents=True, exist_ok=True)
    (OUT / "rules.kicad_sch").write_text(rules_sheet().text(), encoding="utf-8")
    top, child = hierarchy()
    hier = OUT / "hier"
    hier.mkdir(exist_ok=True)
    (hier / "hier.kicad_sch").write_text(top.text(), encoding="utf-8")
    (hier / "channel.kicad_sch").write_text(child.text(), encoding="utf-8")
    NETWORK_OUT.mkdir(parents=True, exist_ok=True)
    for name, draw in SHEETS.items():
        (NETWORK_OUT / f"{name}.kicad_sch").write_text(draw().text(), encoding="utf-8")


if __name__ == "__main__":
    main()
