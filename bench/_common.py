"""Helpers shared by the benchmarks: timing and generated designs."""

from __future__ import annotations

import sys
import time
from pathlib import Path
from typing import Callable

ROOT = Path(__file__).resolve().parents[1]
if str(ROOT) not in sys.path:
    sys.path.insert(0, str(ROOT))

from tests.synth import Sheet  # noqa: E402


def best_of(fn: Callable[[], object], repeat: int = 5) -> float:
    """Best wall time of ``repeat`` calls, in seconds."""
    best = float("inf")
    for _ in range(repeat):
        start = time.perf_counter()
        fn()
        best = min(best, time.perf_counter() - start)
    return best


def stage_sheet(stages: int, seed: int = 3) -> Sheet:
    """A sheet of ``stages`` inverting op-amp stages in a grid (4 symbols and a ground
    each: op-amp unit, input and feedback resistors, compensation resistor)."""
    sheet = Sheet(project="bench", seed=seed)
    for i in range(stages):
        x, y = 30.48 + 50.8 * (i % 40), 30.48 + 40.64 * (i // 40)
        unit = 1 + i % 2
        ref = f"U{i // 2 + 1}"
        u = sheet.place("Amplifier_Operational:Generic_Dual", ref, "OPX", x, y, unit=unit,
                        fields={"Vos": "1mV", "Ib": "20nA", "Ios": "2nA"})
        plus, minus, out = ("3", "2", "1") if unit == 1 else ("5", "6", "7")
        ri = sheet.place("Device:R", f"R{3 * i + 1}", "10k", x - 15.24, y - 2.54, angle=90)
        rf = sheet.place("Device:R", f"R{3 * i + 2}", "100k", x, y - 10.16, angle=90)
        rp = sheet.place("Device:R", f"R{3 * i + 3}", "9k1", x - 15.24, y + 7.62)
        sheet.path(ri.pin("2"), u.pin(minus))
        sheet.path(u.pin(minus), (u.pin(minus)[0], rf.pin("1")[1]), rf.pin("1"))
        sheet.path(rf.pin("2"), (u.pin(out)[0], rf.pin("2")[1]), u.pin(out))
        sheet.path(u.pin(plus), (rp.pin("1")[0], u.pin(plus)[1]), rp.pin("1"))
        sheet.place("power:GND", f"#PWR{i + 1:04d}", "GND", *rp.pin("2"))
        sheet.label(f"IN{i}", ri.pin("1"))
        sheet.label(f"OUT{i}", u.pin(out))
    return sheet
