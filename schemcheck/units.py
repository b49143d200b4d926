"""Engineering values in the trade's notation -> SI floats, parsed once.

Accepted: ``10k``, ``4k7`` (the prefix letter as the decimal mark; ``R`` for ohms),
``100R``, ``1M``, ``2.2 kΩ``, ``0R``, ``2mV``, ``500uV``, ``250µV``, ``±50pA``,
``1.5 nA``, ``5uV/°C``, ``1%``, ``100dB``, ``1e5``. ``M`` is mega and ``m`` milli; a bare
``1m`` on a resistor is refused as ambiguous (``1M`` mega-ohm, ``1mR`` milli-ohm).
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass

from schemcheck.errors import SchemcheckError

PREFIXES = {"f": 1e-15, "p": 1e-12, "n": 1e-9, "u": 1e-6, "µ": 1e-6, "μ": 1e-6, "m": 1e-3,
            "": 1.0, "k": 1e3, "K": 1e3, "M": 1e6, "G": 1e9, "R": 1.0, "r": 1.0}


class ValueFormatError(SchemcheckError, ValueError):
    """A field value is not a number in the trade's notation."""


@dataclass(frozen=True, slots=True)
class Quantity:
    """A parsed value: SI magnitude and whether it was written with ± (either sign)."""

    value: float
    either_sign: bool = False


_NUMBER = r"[-+]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][-+]?\d+)?"
_SPLIT_DECIMAL = re.compile(r"^(\d+)([RrkKMmunpfµμG])(\d+)$")  # 4k7, 2R2, 4n7
_VALUE = re.compile(
    r"^(?P<sign>±|\+/-|\+-)?\s*(?P<num>" + _NUMBER + r")\s*(?P<prefix>[fpnuµμmkKMGRr]?)\s*"
    r"(?P<unit>[A-Za-zΩ°%/]*.*)$"
)
_UNITS = {
    "ohm": ("", "ω", "ohm", "ohms", "r"),
    "volt": ("", "v"),
    "amp": ("", "a"),
    "volt_per_deg": ("", "v/°c", "v/c", "v/k", "v/degc", "v/°", "v/deg"),
}


def _clean(text: str) -> str:
    # thin and no-break spaces; the ohm sign U+2126 is folded to the Greek omega
    return text.strip().replace("\u2009", " ").replace("\u00a0", " ").replace("\u2126", "Ω")


def parse_quantity(text: str, kind: str, *, what: str = "value") -> Quantity:
    """Parse ``text`` as a quantity of ``kind`` (``ohm``, ``volt``, ``amp``,
    ``volt_per_deg``).

    Raises :class:`ValueFormatError` saying what was expected.
    """
    raw = _clean(text)
    split = _SPLIT_DECIMAL.match(raw)
    if split:
        head, prefix, tail = split.groups()
        raw = f"{head}.{tail}{'' if prefix in 'Rr' else prefix}"
    match = _VALUE.match(raw)
    if not match:
        raise ValueFormatError(f"expected a number for {what} (like 10k, 4k7, 2mV, ±50pA), "
                               f"found {text!r}")
    number = float(match.group("num"))
    prefix = match.group("prefix")
    unit = match.group("unit").strip().lower().replace(" ", "")
    if prefix in ("R", "r") and kind == "ohm":
        prefix, unit = "", unit or "r"
    elif prefix == "m" and kind == "ohm" and unit in ("",):
        raise ValueFormatError(f"expected a resistance for {what}: {text!r} is ambiguous "
                               "(write 1M for mega-ohm, 1mR for milli-ohm)")
    if unit not in _UNITS[kind]:
        raise ValueFormatError(f"expected {what} in {_describe(kind)}, found {text!r}")
    value = number * PREFIXES[prefix]
    if not math.isfinite(value):
        raise ValueFormatError(f"expected a finite number for {what}, found {text!r}")
    return Quantity(value, bool(match.group("sign")))


def _describe(kind: str) -> str:
    return {"ohm": "ohms (10k, 4k7, 100R, 2.2 kΩ)", "volt": "volts (2mV, 500uV, 250µV)",
            "amp": "amperes (1.5nA, ±50pA)", "volt_per_deg": "volts per °C (5uV/°C)"}[kind]


def parse_resistance(text: str, what: str = "resistance") -> float | None:
    """Ohms from a resistor's Value; None for do-not-populate spellings (``DNP``, ``NC``).
    ``0R`` / ``0`` is 0.0 (a short)."""
    raw = _clean(text)
    first = raw.split()[0] if raw.split() else ""
    if first.upper() in ("DNP", "NC", "N/C", "NF", "NOFIT", "DNF", "OPEN", "-"):
        return None
    # '10k 1%' and '4k7/0.1%' carry a tolerance after the value
    value = re.split(r"[\s/,]+", raw, maxsplit=1)[0] if re.search(r"[\s/,]", raw) else raw
    return parse_quantity(value, "ohm", what=what).value


def parse_tolerance(text: str, what: str = "tolerance") -> float:
    """A tolerance as a fraction: ``1%`` -> 0.01, ``0.1 %`` -> 0.001, ``±5%`` -> 0.05."""
    raw = _clean(text).lstrip("±").strip()
    match = re.fullmatch(r"(" + _NUMBER + r")\s*%", raw)
    if not match:
        raise ValueFormatError(f"expected {what} as a percentage (1%, 0.1%), found {text!r}")
    value = float(match.group(1)) / 100.0
    if not 0 <= value < 1:
        raise ValueFormatError(f"expected {what} between 0% and 100%, found {text!r}")
    return value


def parse_gain(text: str, what: str = "open-loop gain") -> float:
    """Open-loop gain as V/V from ``1e5``, ``100000``, ``100dB``, ``120 dB``, ``100V/mV``.

    An amplifier's open-loop gain is at least 1 V/V (0 dB) and finite; anything else is
    refused (0 would leave the output undriven, infinity is the ideal-op-amp default
    written by leaving the field out).
    """
    raw = _clean(text)
    value: float | None = None
    match = re.fullmatch(r"(" + _NUMBER + r")\s*dB", raw, flags=re.I)
    if match:
        decibels = float(match.group(1))
        value = 10 ** (decibels / 20.0) if decibels < 6000 else math.inf
    else:
        match = re.fullmatch(r"(" + _NUMBER + r")\s*V/mV", raw, flags=re.I)
        if match:
            value = float(match.group(1)) * 1e3
        else:
            match = re.fullmatch(r"(" + _NUMBER + r")\s*(?:V/V)?", raw, flags=re.I)
            if match:
                value = float(match.group(1))
    if value is None:
        raise ValueFormatError(f"expected {what} as V/V or dB (1e5, 100dB), found {text!r}")
    if not (math.isfinite(value) and value >= 1.0):
        raise ValueFormatError(f"expected {what} of at least 1 V/V (0 dB) and finite, found "
                               f"{text!r}")
    return value


#: Absolute zero, °C: the lowest temperature a range may name.
ABSOLUTE_ZERO_C = -273.15
#: Hotter than any electronics operates (common practice: parts are rated to 125-225 °C).
HOTTEST_C = 1000.0


def parse_temperature_range(text: str) -> tuple[float, float]:
    """``-40:85`` -> (-40.0, 85.0)."""
    match = re.fullmatch(r"\s*(" + _NUMBER + r")\s*:\s*(" + _NUMBER + r")\s*", text)
    if not match:
        raise ValueFormatError(f"expected a temperature range MIN:MAX in °C (like -40:85), "
                               f"found {text!r}")
    low, high = float(match.group(1)), float(match.group(2))
    check_temperature_range(low, high, repr(text))
    return low, high


def check_temperature_range(low: float, high: float, shown: str) -> None:
    """Refuse a range that is not finite, outside absolute zero to :data:`HOTTEST_C` or
    upside down."""
    if not (math.isfinite(low) and math.isfinite(high)):
        raise ValueFormatError(f"expected finite temperatures in °C, found {shown}")
    if low < ABSOLUTE_ZERO_C or high > HOTTEST_C:
        raise ValueFormatError(f"expected temperatures from {ABSOLUTE_ZERO_C:g} °C (absolute "
                               f"zero) to {HOTTEST_C:g} °C, found {shown}")
    if low > high:
        raise ValueFormatError(f"expected MIN <= MAX in the temperature range, found {shown}")


_SI = [(1e9, "G"), (1e6, "M"), (1e3, "k"), (1.0, ""), (1e-3, "m"), (1e-6, "µ"), (1e-9, "n"),
       (1e-12, "p"), (1e-15, "f")]


def format_si(value: float | None, unit: str, digits: int = 3) -> str:
    """``0.00123, 'V'`` -> ``1.23 mV``; None -> ``unknown``."""
    if value is None:
        return "unknown"
    if value == 0 or not math.isfinite(value):
        return f"{value:g} {unit}"
    magnitude = abs(value)
    for scale, prefix in _SI:
        if magnitude >= scale * 0.9995:
            return f"{value / scale:.{digits}g} {prefix}{unit}"
    return f"{value:.{digits}g} {unit}"
