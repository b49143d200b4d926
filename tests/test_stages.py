"""Op-amp recognition, including the traps of real designs.

Outside source: the real files of ../shared/corpus and their SOURCES.tsv notes, which
say which symbols are op-amps and which only look like them (OTAs, comparators, fully
differential and variable-gain amplifiers).
"""

from __future__ import annotations

import pytest

from schemcheck.circuit.load import load_netlist
from schemcheck.engine.stages import recognise
from schemcheck.model import Part, Pin

from .conftest import CORPUS, needs_corpus


def found(path):
    units, skipped = recognise(load_netlist(path).parts)
    return ({(u.part.ref, u.part.unit, u.channel) for u in units},
            {s.part.ref: s.reason for s in skipped})


@needs_corpus
@pytest.mark.parametrize(("path", "opamps", "skipped"), [
    ("bristol-communal-modular__magnum-percussion-instrument/kicad/filter.kicad_sch", set(),
     {"U4": "transconductance amplifier", "U7": "transconductance amplifier"}),
    ("DangerousPrototypes__BusPirate5-hardware/bus_pirate_pcb/5XL-REV0/"
     "bpu-current_limiter.kicad_sch", set(),
     {"U601": "comparator", "U602": "comparator", "U603": "comparator"}),
    ("vikulin__OpenGammaKit/preamp.kicad_sch", {("U2", 1, None)}, {}),
    ("CMGeldenhuys__kleinvoet/ADC_Frontend.kicad_sch", set(),
     {"U5": "fully differential amplifier (two outputs)"}),
    ("zoemaestra__hair-electrolysis-machine-usb-c/mcu.kicad_sch",
     {("U8", 1, None), ("U8", 2, None)}, {}),
])
def test_corpus_traps(path, opamps, skipped):
    units, skips = found(CORPUS / path)
    assert units == opamps
    assert skips == skipped


@needs_corpus
def test_eagle_conversion_dual_in_one_unit_and_fda():
    units, skips = found(CORPUS / "drandyhaas__HaasoscopePro" / "adc board" / "Kicad" /
                         "Input_amps_1.kicad_sch")
    assert {("IC18", 1, 1), ("IC18", 1, 2), ("FL1", 1, None)} == units
    assert set(skips) == {"IC13", "IC14"}  # LMH5401 fully differential, LMH6401 VGA


@needs_corpus
def test_power_units_alone_are_not_stages():
    units, skips = found(CORPUS / "Alloyed__KitsBlips" / "kicad" / "mixer" / "power.kicad_sch")
    assert units == set() and skips == {}


@needs_corpus
def test_symbol_comparator_with_opamp_value_is_a_comparator():
    # U404/U506 use symbol Comparator:LMV331 but Value LMV321 (an op-amp part number).
    _, skips = found(CORPUS / "DangerousPrototypes__BusPirate5-hardware" / "bus_pirate_pcb" /
                     "5XL-REV0" / "IO-expand-595-mux.kicad_sch")
    assert skips == {"U404": "comparator", "U506": "comparator"}


def _part(pins, description="", fields=None):
    return Part("X1", 1, "v", "Lib:Sym", "/", fields or {"Reference": "X1"},
                tuple(Pin(n, name, t, 1) for n, name, t in pins), description=description)


def test_battery_and_bridge_are_not_amplifiers():
    battery = _part([("1", "+", "passive"), ("2", "-", "passive")], "Multiple-cell battery")
    bridge = _part([("1", "+", "passive"), ("2", "-", "passive"), ("3", "~", "passive"),
                    ("4", "~", "passive")], "Diode bridge rectifier")
    assert recognise([battery, bridge]) == ([], [])


def test_supply_pins_are_not_inputs_and_field_forces():
    pins = [("1", "+IN", "input"), ("2", "-IN", "input"), ("3", "OUT", "output"),
            ("4", "V+", "power_in"), ("5", "V-", "power_in")]
    units, _ = recognise([_part(pins, "Operational amplifier")])
    assert [(u.plus.name, u.minus.name, u.out.name) for u in units] == [("+IN", "-IN", "OUT")]
    units, skipped = recognise([_part(pins, "Operational amplifier", {"Opamp": "no"})])
    assert units == [] and skipped == []
    comparator = [("1", "+", "input"), ("2", "-", "input"), ("3", "~", "open_collector")]
    units, skipped = recognise([_part(comparator, "comparator", {"Opamp": "yes"})])
    assert len(units) == 1 and skipped == []
