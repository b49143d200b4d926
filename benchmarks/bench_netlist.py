"""Netlist build vs kiutils' load, on a generated sheet of 2,400+ symbols.

Prints ratios against ``kiutils.schematic.Schematic.from_file`` run in the same process
on the same file: (1) our load + connectivity in-process, (2) the whole
``schemcheck netlist`` command as a process (start-up included), (3) our tokenizer
alone against kiutils' ``parse_sexp``. Target: (1) and (2) at least 3x faster. The runs
of (1), (2) and the baseline are interleaved, best of five each.

Run: .venv/bin/python bench/bench_netlist.py
"""

from __future__ import annotations

import subprocess
import sys
import tempfile
from pathlib import Path

from _common import best_of, stage_sheet

from kiutils.schematic import Schematic
from kiutils.utils.sexpr import parse_sexp

from schemcheck.io import sexpr
from schemcheck.circuit.load import load_netlist

ROUNDS = 5


def main() -> None:
    sheet = stage_sheet(600)  # 600 stages x 4 symbols + 600 power symbols = 3,000 symbols
    folder = Path(tempfile.mkdtemp(prefix="schemcheck-bench-"))
    path = folder / "big.kicad_sch"
    path.write_text(sheet.text(), encoding="utf-8")
    text = path.read_text(encoding="utf-8")
    print(f"sheet: {len(sheet.symbols)} symbols, {path.stat().st_size / 1e6:.2f} MB")

    command = [sys.executable, "-m", "schemcheck", "netlist", str(path)]
    runs = {
        "baseline": lambda: Schematic.from_file(str(path), encoding="utf-8"),
        "ours": lambda: load_netlist(path),
        "process": lambda: subprocess.run(command, check=True, stdout=subprocess.DEVNULL),
    }
    # interleaved rounds, best of each: a load that comes and goes hits all of them
    best = {name: float("inf") for name in runs}
    for _ in range(ROUNDS):
        for name, run in runs.items():
            best[name] = min(best[name], best_of(run, 1))
    baseline, ours, process = best["baseline"], best["ours"], best["process"]
    kiutils_tokens = best_of(lambda: parse_sexp(text), 3)
    our_tokens = best_of(lambda: sexpr.parse(text), 5)

    print(f"kiutils Schematic.from_file      {baseline * 1e3:8.1f} ms  (baseline)")
    print(f"schemcheck load + connectivity   {ours * 1e3:8.1f} ms  ratio {baseline / ours:5.2f}x"
          "  (target >= 3x)")
    print(f"schemcheck netlist, whole process{process * 1e3:8.1f} ms  ratio "
          f"{baseline / process:5.2f}x  (target >= 3x)")
    print(f"tokenizer: kiutils parse_sexp {kiutils_tokens * 1e3:.1f} ms, ours "
          f"{our_tokens * 1e3:.1f} ms, ratio {kiutils_tokens / our_tokens:.2f}x")


if __name__ == "__main__":
    main()
