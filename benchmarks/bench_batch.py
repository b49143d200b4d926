"""Batch audit of a generated library of 60 designs: cold vs from the cache, and one
worker vs two.

Prints, in the same process: the cold audit (empty results database) against the warm
re-audit of the unchanged library (target: warm at least 20x faster), and --jobs 1
against --jobs 2 without the cache (target: at least 1.6x on 2 cores).

Run: .venv/bin/python bench/bench_batch.py
"""

from __future__ import annotations

import os
import tempfile
import time
from pathlib import Path

from _common import stage

from schemcheck.run.batch import audit_paths
from schemcheck.run.cache import ResultCache
from tests.synth import Sheet

DESIGNS = 60


def library(root: Path) -> None:
    for i in range(DESIGNS):
        sheet = Sheet(project=f"d{i}", seed=i)
        for n in range(6):  # six stages a design
            stage(sheet, 76.2 + 101.6 * (n % 3), 76.2 + 76.2 * (n // 3), ref=f"U{n // 2 + 1}",
                  unit=1 + n % 2, value="OPX", rp="9k1",
                  refs=(f"R{3 * n + 1}", f"R{3 * n + 2}", f"R{3 * n + 3}"),
                  in_label=f"IN{n}", out_label=f"OUT{n}",
                  fields={"Vos": "1mV", "Ib": "20nA", "Ios": "2nA"})
        folder = root / f"p{i:02d}"
        folder.mkdir()
        (folder / f"d{i:02d}.kicad_sch").write_text(sheet.text(), encoding="utf-8")


def timed(fn) -> float:
    start = time.perf_counter()
    fn()
    return time.perf_counter() - start


def main() -> None:
    root = Path(tempfile.mkdtemp(prefix="schemcheck-batch-"))
    library(root)
    overrides = {"mc_samples": 2000}
    cache = ResultCache(str(root / "results.sqlite3"))
    cold = timed(lambda: audit_paths([str(root)], overrides=overrides, jobs=2, cache=cache))
    warm = min(timed(lambda: audit_paths([str(root)], overrides=overrides, jobs=2, cache=cache))
               for _ in range(3))
    cache.close()
    one = min(timed(lambda: audit_paths([str(root)], overrides=overrides, jobs=1))
              for _ in range(2))
    two = min(timed(lambda: audit_paths([str(root)], overrides=overrides, jobs=2))
              for _ in range(2))
    print(f"{DESIGNS} designs, {os.cpu_count()} cores")
    print(f"cold (empty cache)     {cold * 1e3:8.1f} ms  (baseline)")
    print(f"warm (from the cache)  {warm * 1e3:8.1f} ms  ratio {cold / warm:5.1f}x  (target >= 20x)")
    print(f"--jobs 1               {one * 1e3:8.1f} ms  (baseline)")
    print(f"--jobs 2               {two * 1e3:8.1f} ms  ratio {one / two:5.2f}x  (target >= 1.6x)")


if __name__ == "__main__":
    main()
