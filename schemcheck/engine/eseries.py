"""Preferred resistor values of IEC 60063 (E24 and E96) and the nearest one to a value."""

from __future__ import annotations

import bisect
import math

#: IEC 60063 E24 (from the standard's table; eight values differ from rounding the
#: geometric series 10^(i/24): 27, 30, 33, 36, 39, 43, 47, 82).
E24 = (10, 11, 12, 13, 15, 16, 18, 20, 22, 24, 27, 30, 33, 36, 39, 43, 47, 51, 56, 62, 68, 75,
       82, 91)
#: IEC 60063 E96: 10^(i/96) rounded to three significant figures (no exceptions).
E96 = (100, 102, 105, 107, 110, 113, 115, 118, 121, 124, 127, 130, 133, 137, 140, 143, 147,
       150, 154, 158, 162, 165, 169, 174, 178, 182, 187, 191, 196, 200, 205, 210, 215, 221,
       226, 232, 237, 243, 249, 255, 261, 267, 274, 280, 287, 294, 301, 309, 316, 324, 332,
       340, 348, 357, 365, 374, 383, 392, 402, 412, 422, 432, 442, 453, 464, 475, 487, 499,
       511, 523, 536, 549, 562, 576, 590, 604, 619, 634, 649, 665, 681, 698, 715, 732, 750,
       768, 787, 806, 825, 845, 866, 887, 909, 931, 953, 976)
SERIES = {"E24": E24, "E96": E96}


def _decades(table: tuple[int, ...]) -> tuple[list[float], list[float]]:
    """The series over 30 decades (1e-6 to 1e24 ohms), as values and their logarithms."""
    scale = 10 ** (len(str(table[0])) - 1)
    values = [m / scale * 10.0 ** d for d in range(-6, 24) for m in table]
    return values, [math.log(v) for v in values]


_TABLES = {name: _decades(table) for name, table in SERIES.items()}


def nearest(value: float, series: str) -> float:
    """The value of ``series`` nearest to ``value`` (ohms), by ratio (log distance)."""
    if value <= 0 or not math.isfinite(value):
        raise ValueError(f"expected a positive resistance, found {value!r}")
    values, logs = _TABLES[series]
    target = math.log(value)
    i = bisect.bisect_left(logs, target)
    candidates = [j for j in (i - 1, i) if 0 <= j < len(values)]
    best = min(candidates, key=lambda j: abs(logs[j] - target))
    return float(f"{values[best]:.6g}")
