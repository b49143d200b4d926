"""Class estimates of op-amp DC figures, and the input type read from a symbol's words.

Used only on request (``--estimate-missing`` or ``estimate_missing = true``): a reviewer
without the datasheet at hand gets an order-of-magnitude budget, every such figure marked
``estimate (class jfet)``. The values are common practice orders of magnitude of the
maximum at 25 °C for each class of input stage, chosen at the pessimistic end of what
the class usually guarantees; they come from no datasheet and no published source.
"""

from __future__ import annotations

import re
from functools import lru_cache

#: Class -> maximum at 25 °C (V, A, A, V/°C). Common practice orders of magnitude, no source.
CLASS_VALUES: dict[str, dict[str, float]] = {
    # general-purpose bipolar
    "bipolar": {"vos": 5e-3, "ib": 500e-9, "ios": 200e-9, "tcvos": 20e-6},
    # precision bipolar with bias-current cancellation (Ib of either sign, Ios ~ Ib)
    "bipolar-compensated": {"vos": 100e-6, "ib": 5e-9, "ios": 5e-9, "tcvos": 1e-6},
    "jfet": {"vos": 10e-3, "ib": 200e-12, "ios": 100e-12, "tcvos": 20e-6},
    "cmos": {"vos": 5e-3, "ib": 100e-12, "ios": 100e-12, "tcvos": 10e-6},
    # zero-drift: bias current set by the switching, Ios as large as Ib or larger
    "chopper": {"vos": 20e-6, "ib": 1e-9, "ios": 2e-9, "tcvos": 0.1e-6},
}

CLASS_NAMES = {
    "bipolar": "general-purpose bipolar",
    "bipolar-compensated": "precision bipolar, bias-current cancelled",
    "jfet": "JFET-input",
    "cmos": "CMOS-input",
    "chopper": "zero-drift (chopper)",
}

_CHOPPER = re.compile(r"\b(?:zero[- ]?drift|chopper|auto[- ]?zero(?:ed|ing)?)\b", re.IGNORECASE)
_WORDS = {
    "jfet": re.compile(r"\bj-?fet\b", re.IGNORECASE),
    "cmos": re.compile(r"\bcmos\b", re.IGNORECASE),
    # "bipolar supply" / "bipolar output" speak of the supply or the output, not the inputs
    "bipolar": re.compile(r"\bbipolar\b(?!\s*(?:suppl|power|output|rail|swing|signal))",
                          re.IGNORECASE),
}


@lru_cache(maxsize=4096)  # one description per library symbol, seen on many parts
def input_type_from_text(text: str) -> str | None:
    """The input type a symbol's description or keywords name (``JFET``, ``CMOS``,
    ``zero-drift``, ``chopper``, ``bipolar``), or None when they name none or several."""
    if not text:
        return None
    if _CHOPPER.search(text):
        return "chopper"
    found = [kind for kind, pattern in _WORDS.items() if pattern.search(text)]
    return found[0] if len(found) == 1 else None
