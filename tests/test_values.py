"""Resistance values in every notation the trade and the editor's libraries use.

Outside sources: the SI prefixes (BIPM SI Brochure, 9th ed.: k = 1e3, M = 1e6, G = 1e9,
T = 1e12, m = 1e-3, µ = 1e-6); the RKM code of IEC 60062 (the multiplier letter as the
decimal mark: 4k7 = 4.7 kΩ, R47 = 0.47 Ω, 4M7 = 4.7 MΩ); SPICE's ``Meg`` suffix for 1e6
(ngspice manual, "Scale factors", from memory); potentiometer taper letters A (audio,
logarithmic), B (linear), C (reverse audio) (common practice of panel-pot makers);
the editor's ``Sim.Value`` field (KiCad 7 simulator model fields, from memory).
"""

from __future__ import annotations

import pytest

from schemcheck.circuit.values import UnreadableValue, ValueRules, is_not_fitted, part_value
from schemcheck.model import Part, Pin
from schemcheck.units import ValueFormatError, parse_resistance, read_resistance


@pytest.mark.parametrize(("text", "ohms"), [
    # a space between number and prefix: once cut at the blank and read as 10 Ω
    pytest.param("10 kΩ", 10e3, id="space-kilo-ohm"),
    pytest.param("3.9 MΩ", 3.9e6, id="space-mega-ohm"),
    pytest.param("2.2 k", 2.2e3, id="space-kilo"),
    pytest.param("10 k\u2126", 10e3, id="ohm-sign"),
    pytest.param("10\u00a0k", 10e3, id="no-break-space"),
    pytest.param("10k", 10e3, id="kilo"), pytest.param("10K", 10e3, id="kilo-capital"),
    pytest.param("4k7", 4.7e3, id="rkm-kilo"), pytest.param("R47", 0.47, id="rkm-leading-R"),
    pytest.param("2R2", 2.2, id="rkm-R"), pytest.param("4M7", 4.7e6, id="rkm-mega"),
    pytest.param("10K0", 10e3, id="rkm-trailing-zero"),
    pytest.param("100R", 100.0, id="R-unit"), pytest.param("100r", 100.0, id="r-unit"),
    pytest.param("0R", 0.0, id="zero-ohm"), pytest.param("0", 0.0, id="zero"),
    pytest.param("47", 47.0, id="bare"), pytest.param("1e5", 1e5, id="exponent"),
    pytest.param("10Meg", 10e6, id="spice-Meg"), pytest.param("10MEG", 10e6, id="spice-MEG"),
    pytest.param("10 meg", 10e6, id="spice-meg-space"), pytest.param("1M", 1e6, id="mega"),
    pytest.param("1G", 1e9, id="giga"), pytest.param("1T", 1e12, id="tera"),
    pytest.param("100u", 100e-6, id="micro-u"), pytest.param("100µ", 100e-6, id="micro-sign"),
    pytest.param("100μ", 100e-6, id="greek-mu"), pytest.param("1mR", 1e-3, id="milli-ohm"),
    pytest.param("10 ohm", 10.0, id="ohm-word"), pytest.param("10 Ohms", 10.0, id="ohms-word"),
    pytest.param("10Ω", 10.0, id="omega"),
    pytest.param("10k 1%", 10e3, id="tolerance"), pytest.param("10k/0.1%", 10e3, id="slash-tol"),
    pytest.param("10k,1%", 10e3, id="comma-tol"), pytest.param("10k ±1%", 10e3, id="pm-tol"),
    pytest.param("10k 0.25W", 10e3, id="power"), pytest.param("10k 1/4W", 10e3, id="power-frac"),
    pytest.param("10k 1% 250mW", 10e3, id="tol-and-power"),
])
def test_resistance_notations(text, ohms):
    assert read_resistance(text).ohms == pytest.approx(ohms, rel=1e-12)
    assert parse_resistance(text) == pytest.approx(ohms, rel=1e-12)


@pytest.mark.parametrize(("text", "ohms", "taper"), [
    pytest.param("100kA", 100e3, "A", id="audio-letter"),
    pytest.param("50kB", 50e3, "B", id="linear-letter"),
    pytest.param("10kC", 10e3, "C", id="reverse-letter"),
    pytest.param("A100k", 100e3, "A", id="letter-first"),
    pytest.param("10k lin", 10e3, "lin", id="lin-word"),
    pytest.param("10k log", 10e3, "log", id="log-word"),
    pytest.param("100K-A", 100e3, "A", id="dash-letter"),
    pytest.param("10k", 10e3, "", id="none"),
])
def test_potentiometer_tapers(text, ohms, taper):
    reading = read_resistance(text, taper=True)
    assert (reading.ohms, reading.taper) == (pytest.approx(ohms, rel=1e-12), taper)


@pytest.mark.parametrize(("text", "message"), [
    ("1m", "expected a resistance for resistance: '1m' is ambiguous, milli-ohm or mega-ohm "
           "(write 1M or 1Meg for mega-ohm, 1mR for milli-ohm)"),
    ("4m7", "expected a resistance for resistance: '4m7' is ambiguous, milli-ohm or mega-ohm "
            "(write 1M or 1Meg for mega-ohm, 1mR for milli-ohm)"),
    ("t2k", "expected a resistance for resistance (like 10k, 4k7, 2.2 kΩ, 10Meg), found 't2k'"),
    ("100kA", "expected a resistance for resistance (like 10k, 4k7, 2.2 kΩ, 10Meg), found "
              "'100kA'"),
    ("CRCW060310K0", "expected a resistance for resistance (like 10k, 4k7, 2.2 kΩ, 10Meg), "
                     "found 'CRCW060310K0'"),
])
def test_unreadable_resistances(text, message):
    with pytest.raises(ValueFormatError) as caught:
        read_resistance(text)
    assert str(caught.value) == message


def test_ambiguous_milli_on_a_potentiometer_with_taper():
    with pytest.raises(ValueFormatError, match="ambiguous"):
        read_resistance("1mA", taper=True)


@pytest.mark.parametrize("text", ["DNP", "dnp", "NC", "n.f.", "DNF", "NF", "-", "OPEN 10k"])
def test_not_fitted(text):
    assert read_resistance(text).ohms is None
    assert is_not_fitted(text)


def _resistor(value: str, **fields: str) -> Part:
    return Part("R3", 1, value, "Device:R", "/", {"Reference": "R3", "Value": value, **fields},
                (Pin("1", "~", "passive"), Pin("2", "~", "passive")))


def test_part_value_fields_in_order():
    # Value first; where it holds a part number, the simulator's field, then Resistance.
    assert part_value(_resistor("4k7")).ohms == pytest.approx(4.7e3)
    sim = part_value(_resistor("CRCW060310K0", **{"Sim.Value": "10k"}))
    assert (sim.ohms, sim.field) == (pytest.approx(10e3), "Sim.Value")
    res = part_value(_resistor("RC0603-2K2", Resistance="2.2 kΩ"))
    assert (res.ohms, res.field) == (pytest.approx(2.2e3), "Resistance")


def test_part_value_from_settings():
    rules = ValueRules(by_ref={"R3": "1M"}, notations=((r"^t(.+)$", r"\1"),))
    given = part_value(_resistor("1m"), rules)
    assert (given.ohms, given.field) == (pytest.approx(1e6), "settings")
    house = part_value(_resistor("t2k"), ValueRules(notations=((r"^t(.+)$", r"\1"),)))
    assert (house.ohms, house.field, house.text) == (pytest.approx(2e3), "Value", "t2k")


def test_unreadable_part_value_names_reference_field_and_text():
    with pytest.raises(UnreadableValue) as caught:
        part_value(_resistor("t2k"))
    error = caught.value
    assert (error.ref, error.field, error.text) == ("R3", "Value", "t2k")
    assert str(error) == ("R3 Value 't2k' could not be read: not a resistance in any notation "
                          "the tool reads")
