"""Batch audits of generated libraries: cold vs from the cache, one worker vs two, and
the designs per second of a large library.

Prints, in the same process:

1. 60 designs of six stages: the cold audit (empty results database) against the warm
   re-audit of the unchanged library (target: warm at least 20x faster);
2. the same 60 designs without the cache, --jobs 1 against --jobs 2, in five
   interleaved rounds, each round's ratio (target: at least 1.6x in every round on
   2 cores), with the cores other processes kept busy during each round;
3. 1,000 small designs (two stages each), audited cold with every core and then warm
   from the cache: designs per second of each.

Run: .venv/bin/python benchmarks/bench_batch.py
"""

from __future__ import annotations

import os
import statistics
import tempfile
import time
from pathlib import Path

from _common import stage

from schemcheck.run.batch import audit_paths
from schemcheck.run.cache import ResultCache
from tests.synth import Sheet

DESIGNS = 60
ROUNDS = 5
SMALL_DESIGNS = 1000


def library(root: Path, designs: int = DESIGNS, stages: int = 6) -> None:
    for i in range(designs):
        sheet = Sheet(project=f"d{i}", seed=i)
        for n in range(stages):
            stage(sheet, 76.2 + 101.6 * (n % 3), 76.2 + 76.2 * (n // 3), ref=f"U{n // 2 + 1}",
                  unit=1 + n % 2, value="OPX", rp="9k1",
                  refs=(f"R{3 * n + 1}", f"R{3 * n + 2}", f"R{3 * n + 3}"),
                  in_label=f"IN{n}", out_label=f"OUT{n}",
                  fields={"Vos": "1mV", "Ib": "20nA", "Ios": "2nA"})
        folder = root / f"p{i:04d}"
        folder.mkdir()
        (folder / f"d{i:04d}.kicad_sch").write_text(sheet.text(), encoding="utf-8")


def timed(fn) -> float:
    start = time.perf_counter()
    fn()
    return time.perf_counter() - start


def _machine_busy() -> float | None:
    """CPU seconds the whole machine has been busy (Linux /proc/stat), or None."""
    try:
        with open("/proc/stat", encoding="ascii") as handle:
            fields = [int(v) for v in handle.readline().split()[1:]]
    except (OSError, ValueError):
        return None
    idle = fields[3] + fields[4]
    return (sum(fields[:8]) - idle) / os.sysconf("SC_CLK_TCK")


def _ours() -> float:
    """CPU seconds of this process and its finished workers."""
    t = os.times()
    return t.user + t.system + t.children_user + t.children_system


def timed_with_others(fn) -> tuple[float, float | None]:
    """Wall time of ``fn`` and the cores other processes kept busy meanwhile (on a shared
    machine a round where they took most of a core cannot show two cores' speed-up)."""
    busy, ours = _machine_busy(), _ours()
    wall = timed(fn)
    after = _machine_busy()
    if busy is None or after is None:
        return wall, None
    return wall, max(0.0, (after - busy) - (_ours() - ours)) / wall


def main() -> None:
    root = Path(tempfile.mkdtemp(prefix="schemcheck-batch-"))
    library(root)
    overrides = {"mc_samples": 2000}
    cache = ResultCache(str(root / "results.sqlite3"))
    cold = timed(lambda: audit_paths([str(root)], overrides=overrides, jobs=2, cache=cache))
    warm = min(timed(lambda: audit_paths([str(root)], overrides=overrides, jobs=2, cache=cache))
               for _ in range(3))
    cache.close()
    ratios = []
    for _ in range(ROUNDS):
        one, others_one = timed_with_others(
            lambda: audit_paths([str(root)], overrides=overrides, jobs=1))
        two, others_two = timed_with_others(
            lambda: audit_paths([str(root)], overrides=overrides, jobs=2))
        others = None if others_one is None else max(others_one, others_two)
        ratios.append((one, two, others))
    print(f"{DESIGNS} designs, {os.cpu_count()} cores")
    print(f"cold (empty cache)     {cold * 1e3:8.1f} ms  (baseline)")
    print(f"warm (from the cache)  {warm * 1e3:8.1f} ms  ratio {cold / warm:5.1f}x  "
          "(target >= 20x)")
    for number, (one, two, others) in enumerate(ratios, 1):
        shared = "" if others is None else f"  other processes: {others:4.2f} cores"
        print(f"round {number}: --jobs 1 {one * 1e3:7.1f} ms (baseline), --jobs 2 "
              f"{two * 1e3:7.1f} ms  ratio {one / two:5.2f}x  (target >= 1.6x){shared}")
    held = sum(one / two >= 1.6 for one, two, _ in ratios)
    print(f"--jobs 2 at least 1.6x in {held} of {ROUNDS} rounds; median ratio "
          f"{statistics.median(one / two for one, two, _ in ratios):.2f}x")

    small = Path(tempfile.mkdtemp(prefix="schemcheck-batch-small-"))
    library(small, SMALL_DESIGNS, stages=2)
    cache = ResultCache(str(small / "results.sqlite3"))
    cold = timed(lambda: audit_paths([str(small)], cache=cache))
    warm = min(timed(lambda: audit_paths([str(small)], cache=cache)) for _ in range(3))
    cache.close()
    print(f"{SMALL_DESIGNS} small designs (two stages each, default settings, "
          f"{os.cpu_count()} workers)")
    print(f"cold (empty cache)     {cold:6.2f} s  {SMALL_DESIGNS / cold:7.0f} designs/s")
    print(f"warm (from the cache)  {warm:6.2f} s  {SMALL_DESIGNS / warm:7.0f} designs/s")


if __name__ == "__main__":
    main()
