"""Engineering notation of the trade -> SI values.

Outside source: SI prefixes (BIPM SI Brochure, 9th ed.); the RKM code of IEC 60062
(letter as decimal mark: 4k7 = 4.7 kΩ, 2R2 = 2.2 Ω).
"""

from __future__ import annotations

import pytest

from schemcheck.units import (
    ValueFormatError,
    format_si,
    parse_gain,
    parse_quantity,
    parse_resistance,
    parse_temperature_range,
    parse_tolerance,
)


@pytest.mark.parametrize(
    ("text", "kind", "value", "either"),
    [
        ("10k", "ohm", 10e3, False), ("4k7", "ohm", 4.7e3, False), ("100R", "ohm", 100.0, False),
        ("1M", "ohm", 1e6, False), ("2.2 kΩ", "ohm", 2.2e3, False), ("0R", "ohm", 0.0, False),
        ("2R2", "ohm", 2.2, False), ("10 ohm", "ohm", 10.0, False), ("1mR", "ohm", 1e-3, False),
        ("2.2 k\u2126", "ohm", 2.2e3, False),
        ("2mV", "volt", 2e-3, False), ("500uV", "volt", 500e-6, False),
        ("250µV", "volt", 250e-6, False), ("±50pA", "amp", 50e-12, True),
        ("1.5 nA", "amp", 1.5e-9, False), ("5uV/°C", "volt_per_deg", 5e-6, False),
        ("1e-9A", "amp", 1e-9, False), ("-20nA", "amp", -20e-9, False),
    ],
)
def test_quantities(text, kind, value, either):
    q = parse_quantity(text, kind)
    assert q.value == pytest.approx(value, rel=1e-12, abs=1e-30)
    assert q.either_sign is either


@pytest.mark.parametrize(("text", "message"), [
    ("abc", "expected a number for value (like 10k, 4k7, 2mV, ±50pA), found 'abc'"),
    ("1m", "expected a resistance for value: '1m' is ambiguous (write 1M for mega-ohm, 1mR "
           "for milli-ohm)"),
    ("2mA", "expected value in ohms (10k, 4k7, 100R, 2.2 kΩ), found '2mA'"),
])
def test_bad_resistances(text, message):
    with pytest.raises(ValueFormatError) as caught:
        parse_quantity(text, "ohm")
    assert str(caught.value) == message


def test_resistor_values_and_tolerances():
    assert parse_resistance("10k 1%") == 10e3
    assert parse_resistance("DNP") is None
    assert parse_tolerance("0.1%") == pytest.approx(0.001)
    assert parse_tolerance("±5 %") == pytest.approx(0.05)


def test_gain_and_range():
    # 100 dB = 10^(100/20) = 1e5 (definition of the decibel for voltage ratios)
    assert parse_gain("100dB") == pytest.approx(1e5)
    assert parse_gain("200 V/mV") == pytest.approx(2e5)
    assert parse_temperature_range("-40:85") == (-40.0, 85.0)
    with pytest.raises(ValueFormatError):
        parse_temperature_range("85:-40")


def test_format():
    assert format_si(0.00123, "V") == "1.23 mV"
    assert format_si(4.5e-8, "A") == "45 nA"
    assert format_si(None, "V") == "unknown"
