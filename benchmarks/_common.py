"""Helpers shared by the benchmarks: timing and generated designs."""

from __future__ import annotations

import os
import sys
import time
from collections.abc import Callable
from pathlib import Path

# as the command line does (schemcheck/cli.py): one BLAS thread per process
for _variable in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_variable, "1")

ROOT = Path(__file__).resolve().parents[1]
if str(ROOT) not in sys.path:
    sys.path.insert(0, str(ROOT))

from tests.make_demo import stage  # noqa: E402
from tests.synth import Sheet  # noqa: E402


def best_of(fn: Callable[[], object], repeat: int = 5) -> float:
    """Best wall time of ``repeat`` calls, in seconds."""
    best = float("inf")
    for _ in range(repeat):
        start = time.perf_counter()
        fn()
        best = min(best, time.perf_counter() - start)
    return best


#: the stages' part figures: Vos dominates (a gain of 11 with 1 mV Vos)
VOS_DOMINATED = {"Vos": "1mV", "Ib": "20nA", "Ios": "2nA", "TCVos": "2uV/°C"}
#: bias currents dominate (500 nA through a 47 kΩ compensation resistor that does not
#: match 10k || 100k): the advice has every suggestion to solve
BIAS_DOMINATED = {"Vos": "100uV", "Ib": "500nA", "Ios": "50nA", "TCVos": "1uV/°C",
                  "Input": "bipolar"}


def stage_sheet(stages: int, seed: int = 3, fields: dict[str, str] | None = None,
                rp: str = "9k1") -> Sheet:
    """A sheet of ``stages`` inverting op-amp stages in a grid (op-amp unit, input,
    feedback and compensation resistors, ground symbols), drawn by the demo's stage
    builder so every stage is wired as in the demo design."""
    sheet = Sheet(project="bench", seed=seed)
    for i in range(stages):
        x, y = 50.8 + 76.2 * (i % 20), 50.8 + 50.8 * (i // 20)
        stage(sheet, x, y, ref=f"U{i // 2 + 1}", unit=1 + i % 2, value="OPX",
              fields=dict(VOS_DOMINATED if fields is None else fields),
              ri="10k", rf="100k", rp=rp,
              refs=(f"R{3 * i + 1}", f"R{3 * i + 2}", f"R{3 * i + 3}"),
              in_label=f"IN{i}", out_label=f"OUT{i}", in_kind="global_label", out_kind="label")
    return sheet
