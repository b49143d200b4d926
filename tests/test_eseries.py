"""IEC 60063 preferred values.

Outside source: IEC 60063:2015 defines E96 as 10^(i/96) rounded to three significant
figures and E24 as a table (from memory: eight E24 values differ from the rounded
geometric series: 2.7, 3.0, 3.3, 3.6, 3.9, 4.3, 4.7 and 8.2, where rounding gives
2.6, 2.9, 3.2, 3.5, 3.8, 4.2, 4.6 and 8.3).
"""

from __future__ import annotations

import pytest

from schemcheck.engine.eseries import E24, E96, nearest


def test_e96_is_the_rounded_geometric_series():
    assert list(E96) == [round(100 * 10 ** (i / 96)) for i in range(96)]
    assert len(set(E96)) == 96


def test_e24_exceptions_to_rounding():
    rounded = [round(10 * 10 ** (i / 24)) for i in range(24)]
    differs = {e: r for e, r in zip(E24, rounded) if e != r}
    assert differs == {27: 26, 30: 29, 33: 32, 36: 35, 39: 38, 43: 42, 47: 46, 82: 83}


@pytest.mark.parametrize(("value", "series", "expected"), [
    (9090.9, "E96", 9090.0), (9090.9, "E24", 9100.0), (1000.0, "E96", 1000.0),
    (99.5, "E24", 100.0), (4.7e3 * 47e3 / 51.7e3, "E96", 4320.0), (0.47, "E24", 0.47),
])
def test_nearest(value, series, expected):
    assert nearest(value, series) == pytest.approx(expected)
