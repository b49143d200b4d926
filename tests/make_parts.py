"""Write the part-data fixture in ``fixtures/parts/`` (invented parts and figures).

``matching.kicad_sch``: one sheet of inverting x10 stages (10 kΩ / 100 kΩ, + input
grounded, each driven from a connector J<n>), one op-amp per way a part finds its
library entry:

* U1 ``LX1612AxD`` -> entry ``LX1612`` by family (typical-only drift);
* U2 Value ``OPAMP``, field ``mpn`` = ``opx-22`` -> ``OPX-22`` by part-number field;
* U3 Value ``~``, lib_id ``Invented:OPX-33`` -> ``OPX-33`` by the lib_id's symbol name;
* U4 ``OPX-44S`` -> ``OPX-44`` by alias (bias-compensated bipolar);
* U5 ``OPX-55CD`` -> ambiguous: ``OPX-55A`` and ``OPX-55B`` share its family;
* U6 ``OPX-Z6`` -> chopper entry, no hot values;
* U7 ``OPX-77`` on a symbol described as JFET-input -> no data (class estimate jfet on
  request);
* U8 ``OPX-88`` -> no data in the project's library; the team library ``team.toml``
  (installed as the user library by the tests) has it.

Run ``python -m tests.make_parts`` from the repository root; ``tests/test_partmatch.py``
checks the committed file is current.
"""

from __future__ import annotations

from pathlib import Path

from . import synth
from .make_demo import DUAL, stage
from .synth import Sheet

OUT = Path(__file__).resolve().parents[1] / "fixtures" / "parts"

#: Our own dual op-amp symbols named like parts (same drawing as the generic dual).
SYMBOLS = {
    "Invented:OPX-33": "Dual CMOS operational amplifier (invented)",
    "Invented:OPX_JFET": "Dual JFET-input operational amplifier (invented)",
}

#: ref -> (Value, fields, lib_id)
STAGES: dict[str, tuple[str, dict[str, str], str]] = {
    "U1": ("LX1612AxD", {}, DUAL),
    "U2": ("OPAMP", {"mpn": "opx-22"}, DUAL),
    "U3": ("~", {}, "Invented:OPX-33"),
    "U4": ("OPX-44S", {}, DUAL),
    "U5": ("OPX-55CD", {}, DUAL),
    "U6": ("OPX-Z6", {}, DUAL),
    "U7": ("OPX-77", {}, "Invented:OPX_JFET"),
    "U8": ("OPX-88", {}, DUAL),
}


def _register_symbols() -> None:
    for lib_id, description in SYMBOLS.items():
        if lib_id in synth.LIBRARY:
            continue
        generic = synth.LIBRARY[DUAL]
        text = generic.replace(f"(symbol \"{DUAL}\"", f"(symbol \"{lib_id}\"", 1)
        text = text.replace("Generic_Dual_", lib_id.split(":", 1)[1] + "_")
        text = text.replace('"Generic_Dual"', f'"{lib_id.split(":", 1)[1]}"')
        text = text.replace("Dual operational amplifier, generic", description)
        synth.LIBRARY[lib_id] = text
        synth.PIN_AT[lib_id] = synth.PIN_AT[DUAL]


def matching() -> Sheet:
    _register_symbols()
    s = Sheet(project="matching", seed=61)
    for number, (ref, (value, fields, lib)) in enumerate(STAGES.items()):
        x = 76.2 + 101.6 * (number % 2)
        y = 50.8 + 45.72 * (number // 2)
        n = ref[1:]
        stage(s, x, y, ref=ref, unit=1, value=value, fields=fields, ri="10k", rf="100k",
              refs=(f"R{n}1", f"R{n}2", ""), in_label=f"IN{n}", in_kind="label",
              out_label=f"OUT{n}", out_kind="label", lib=lib)
        j = s.place("Connector:Conn_01x02", f"J{n}", "IN", x - 40.64, y + 5.08)
        s.label(f"IN{n}", j.pin("1"))
        s.place("power:GND", f"#PWRJ{n}", "GND", *j.pin("2"))
    return s


def main() -> None:
    OUT.mkdir(parents=True, exist_ok=True)
    (OUT / "matching.kicad_sch").write_text(matching().text(), encoding="utf-8")


if __name__ == "__main__":
    main()
