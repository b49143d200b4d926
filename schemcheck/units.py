"""Engineering values in the trade's notation -> SI floats, parsed once.

Accepted: ``10k``, ``4k7`` (the prefix letter as the decimal mark; ``R`` for ohms),
``100R``, ``1M``, ``2.2 kΩ``, ``10 kΩ``, ``10Meg``, ``0R``, ``2mV``, ``500uV``, ``250µV``,
``±50pA``, ``1.5 nA``, ``5uV/°C``, ``1%``, ``100dB``, ``1e5``. ``M`` is mega and ``m`` milli; a bare
``1m`` on a resistor is refused as ambiguous (``1M`` mega-ohm, ``1mR`` milli-ohm).
"""

from __future__ import annotations

import functools
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


#: Values that say a part is not fitted (first word, any case).
NOT_FITTED = ("DNP", "DNF", "NC", "N/C", "NF", "N.F.", "NOFIT", "NO-FIT", "NP", "OPEN", "-",
              "NOT-FITTED", "NOTFITTED")

_OHM_UNIT = r"(?:Ω|[Oo]hms?|OHMS?)"
_OHM_MULT = r"(?:Meg|MEG|meg|[fpnuµμmkKMGTRr])"
_OHM_MULTIPLIERS = dict(PREFIXES, T=1e12, Meg=1e6, MEG=1e6, meg=1e6)
#: ``4k7``, ``2R2``, ``R47``, ``4M7``, ``1G5`` (IEC 60062 RKM code: the letter is the mark)
_OHM_RKM = re.compile(r"^(?P<head>\d*)(?P<mult>Meg|MEG|[RrkKmMGT])(?P<tail>\d+)\s*"
                      r"(?P<unit>" + _OHM_UNIT + r")?(?P<rest>.*)$")
_OHM_PLAIN = re.compile(r"^(?P<num>(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][-+]?\d+)?)\s*"
                        r"(?P<mult>" + _OHM_MULT + r")?\s*(?P<unit>" + _OHM_UNIT
                        + r"|(?<=[fpnuµμmkKMGT])[Rr])?(?P<rest>.*)$")
#: What may follow a resistance: tolerance, power, voltage and tempco ratings.
_OHM_QUALIFIER = re.compile(
    r"^[\s/,;]*(?:±?\s*\d+(?:\.\d+)?\s*%|\d+(?:\.\d+)?\s*[mk]?W|\d+/\d+\s*W|"
    r"\d+(?:\.\d+)?\s*k?V|\d+\s*ppm(?:/°?[CK])?)(?=[\s/,;]|$)", re.I)
#: Potentiometer tapers: letters (A audio, B linear, C reverse audio) and words.
_TAPER = re.compile(r"^[\s/,;-]*(?:taper\s*)?(?P<taper>lin(?:ear)?|log(?:arithmic)?|audio|"
                    r"rev(?:erse)?[\s-]?(?:log|audio)|anti-?log|[ABCabc])(?:\s*taper)?"
                    r"(?=[\s/,;]|$)", re.I)
_TAPER_FIRST = re.compile(r"^(?P<taper>[ABC])\s*(?=\d)")


@dataclass(frozen=True, slots=True)
class Resistance:
    """A resistor's value: ohms (None: not fitted) and a potentiometer taper if given."""

    ohms: float | None
    taper: str = ""


@functools.lru_cache(maxsize=4096)  # pure; a design repeats its values (an error is not kept)
def read_resistance(text: str, what: str = "resistance", *, taper: bool = False
                    ) -> Resistance:
    """A resistance in any notation of the trade and of the editor's libraries.

    ``10k``, ``10 kΩ``, ``2.2 k``, ``4k7``, ``R47``, ``100R``, ``0R``, ``10Meg``,
    ``1G``, ``10 ohms``, with trailing tolerance, power or voltage ratings (``10k 1%``,
    ``10k/0.1%``, ``10k 0.25W``); with ``taper`` a potentiometer's taper letter or word
    (``100kA``, ``A100k``, ``10k lin``). ``M`` is mega and ``m`` milli: a bare ``1m`` is
    refused as ambiguous (``1M`` or ``1Meg`` mega-ohm, ``1mR`` milli-ohm). Not-fitted
    spellings (``DNP``, ``NC``, ``n.f.``) give ``ohms`` None.

    Raises :class:`ValueFormatError` saying what was expected.
    """
    raw = _clean(text)
    words = raw.split()
    if not words or words[0].upper() in NOT_FITTED:
        if not words:
            raise ValueFormatError(f"expected a resistance for {what}, found nothing")
        return Resistance(None)
    found_taper = ""
    if taper:
        first = _TAPER_FIRST.match(raw)
        if first:
            found_taper, raw = first.group("taper"), raw[first.end():]
    match = _OHM_RKM.match(raw)
    if match:
        mult = match.group("mult")
        number = float(f"{match.group('head') or '0'}.{match.group('tail')}")
    else:
        match = _OHM_PLAIN.match(raw)
        if not match:
            raise ValueFormatError(f"expected a resistance for {what} (like 10k, 4k7, 2.2 kΩ, "
                                   f"10Meg{', 100kA' if taper else ''}), found {text!r}")
        mult = match.group("mult") or ""
        number = float(match.group("num"))
    rest = match.group("rest")
    while rest.strip(" /,;"):
        qualifier = _OHM_QUALIFIER.match(rest)
        if qualifier:
            rest = rest[qualifier.end():]
            continue
        tapered = _TAPER.match(rest) if taper and not found_taper else None
        if tapered:
            found_taper, rest = tapered.group("taper"), rest[tapered.end():]
            continue
        raise ValueFormatError(f"expected a resistance for {what} (like 10k, 4k7, 2.2 kΩ, "
                               f"10Meg{', 100kA' if taper else ''}), found {text!r}")
    if mult == "m" and not match.group("unit"):
        raise ValueFormatError(f"expected a resistance for {what}: {text!r} is ambiguous, "
                               "milli-ohm or mega-ohm (write 1M or 1Meg for mega-ohm, 1mR for "
                               "milli-ohm)")
    scale = _OHM_MULTIPLIERS[mult]
    value = number * scale if scale >= 1 else number / round(1 / scale)
    if not math.isfinite(value):
        raise ValueFormatError(f"expected a finite resistance for {what}, found {text!r}")
    return Resistance(value, found_taper)


def parse_resistance(text: str, what: str = "resistance") -> float | None:
    """Ohms from a resistor's Value (:func:`read_resistance`); None for do-not-populate
    spellings (``DNP``, ``NC``). ``0R`` / ``0`` is 0.0 (a short)."""
    return read_resistance(text, what).ohms


_CAP = re.compile(r"^(?P<head>\d+(?:\.\d*)?|\.\d+)\s*(?P<mult>[pnuµμm]?)\s*(?P<tail>\d*)\s*"
                  r"(?:F\b|F(?=[\s/,;])|F$)?(?P<rest>.*)$")
_CAP_PREFIX = {"": 1.0, "m": 1e-3, "u": 1e-6, "µ": 1e-6, "μ": 1e-6, "n": 1e-9, "p": 1e-12}


def read_capacitance(text: str) -> float | None:
    """Farads from a capacitor's Value: ``100n``, ``100nF``, ``2n2``, ``4u7``, ``10 µF``,
    ``1uF 50V X7R``; a bare number is farads only with a unit (``0.1uF``), and a bare
    ``100`` (no prefix, no unit) is taken as picofarads (the usual marking). None where the
    text is no capacitance (the caller then states its figure per farad)."""
    raw = _clean(text)
    match = _CAP.match(raw)
    if not match:
        return None
    head, mult, tail = match.group("head"), match.group("mult"), match.group("tail")
    if tail and ("." in head or not mult):
        return None  # 4.7n7 or 47 7: not a value
    number = float(f"{head}.{tail}" if tail else head)
    rest = match.group("rest").strip()
    if rest and not re.match(r"^[/,;\s]*(?:±?\d+(?:\.\d+)?\s*%|\d+(?:\.\d+)?\s*[kK]?V|"
                             r"[XYCN]\d[A-Z0-9]*|NP0|C0G|COG)", rest, re.I):
        return None
    if not mult and not re.match(r"^\s*\S*F", raw[len(head):]):
        scale = 1e-12  # a bare number on a capacitor: picofarads
    else:
        scale = _CAP_PREFIX[mult]
    value = number * scale
    return value if math.isfinite(value) and value > 0 else None


_TIME = re.compile(r"^(" + _NUMBER + r")\s*(ms|us|µs|μs|ns|s)$")
_TIME_SCALE = {"s": 1.0, "ms": 1e-3, "us": 1e-6, "µs": 1e-6, "μs": 1e-6, "ns": 1e-9}


def parse_time(text: str, what: str = "time") -> float:
    """Seconds from ``1ms``, ``100 us``, ``0.5s``."""
    match = _TIME.match(_clean(text))
    if not match or float(match.group(1)) <= 0:
        raise ValueFormatError(f"expected {what} as a positive time (1ms, 100us, 0.5s), "
                               f"found {text!r}")
    return float(match.group(1)) * _TIME_SCALE[match.group(2)]


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
    value = value + 0.0  # -0.0 -> 0.0
    if value == 0 or not math.isfinite(value):
        return f"{value:g} {unit}"
    magnitude = abs(value)
    for scale, prefix in _SI:
        if magnitude >= scale * 0.9995:
            return f"{value / scale:.{digits}g} {prefix}{unit}"
    return f"{value:.{digits}g} {unit}"
