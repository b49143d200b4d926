"""Netlist build vs kiutils' load, on a generated sheet of 2,400+ symbols.

Prints ratios against ``kiutils.schematic.Schematic.from_file`` run in the same process
on the same file: (1) our load + connectivity in-process, (2) the whole
``schemcheck netlist`` command as a process (start-up included), with its modules'
bytecode cached as after any install (written to a temporary folder, outside the tree:
``PYTHONPYCACHEPREFIX``; a machine that sets ``PYTHONDONTWRITEBYTECODE`` otherwise compiles
every module at every start), and without that cache, (3) our tokenizer alone against
kiutils' ``parse_sexp``. Target: (1) and (2) at least 3x faster. The runs of (1), (2) and
the baseline are interleaved, best of five each.

Then the cost of checking that numeric lists (coordinates, sizes, widths) hold numbers
only, on this sheet and on the largest corpus sheet where present: the reader and its
tokenizer call with the check against the same without it (CPU time, the median ratio
of back-to-back pairs, as the machine may be shared). Target: under 5 % for the reader.

Run: .venv/bin/python benchmarks/bench_netlist.py
"""

from __future__ import annotations

import os
import statistics
import subprocess
import sys
import tempfile
import time
from collections.abc import Callable
from pathlib import Path
from unittest import mock

from _common import best_of, stage_sheet
from kiutils.schematic import Schematic
from kiutils.utils.sexpr import parse_sexp

from schemcheck.circuit.load import load_netlist
from schemcheck.io import sexpr

ROUNDS = 5


def main() -> None:
    sheet = stage_sheet(600)  # 600 stages x 4 symbols + 600 power symbols = 3,000 symbols
    folder = Path(tempfile.mkdtemp(prefix="schemcheck-bench-"))
    path = folder / "big.kicad_sch"
    path.write_text(sheet.text(), encoding="utf-8")
    text = path.read_text(encoding="utf-8")
    print(f"sheet: {len(sheet.symbols)} symbols, {path.stat().st_size / 1e6:.2f} MB")

    command = [sys.executable, "-m", "schemcheck", "netlist", str(path)]
    cached = dict(os.environ, PYTHONPYCACHEPREFIX=str(folder / "bytecode"))
    cached.pop("PYTHONDONTWRITEBYTECODE", None)
    subprocess.run(command, check=True, stdout=subprocess.DEVNULL, env=cached)  # writes it
    runs = {
        "baseline": lambda: Schematic.from_file(str(path), encoding="utf-8"),
        "ours": lambda: load_netlist(path),
        "process": lambda: subprocess.run(command, check=True, stdout=subprocess.DEVNULL,
                                          env=cached),
        "uncached": lambda: subprocess.run(command, check=True, stdout=subprocess.DEVNULL),
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
    print(f"  the same, no bytecode cache    {best['uncached'] * 1e3:8.1f} ms  ratio "
          f"{baseline / best['uncached']:5.2f}x")
    print(f"tokenizer: kiutils parse_sexp {kiutils_tokens * 1e3:.1f} ms, ours "
          f"{our_tokens * 1e3:.1f} ms, ratio {kiutils_tokens / our_tokens:.2f}x")

    sheets = [path]
    from tests.conftest import corpus_files  # _common puts the repository on the path

    corpus = corpus_files(".kicad_sch")
    if corpus:
        sheets.append(max(corpus, key=lambda p: p.stat().st_size))
    for sheet_path in sheets:
        numeric_check_cost(sheet_path)


def paired(first: Callable[[], object], second: Callable[[], object],
           pairs: int = 21) -> tuple[float, float, float]:
    """Best CPU time of each of two calls and the median ratio second/first of ``pairs``
    back-to-back runs (order alternating), robust to a machine shared with other work."""
    best = [float("inf"), float("inf")]
    ratios = []
    for k in range(pairs):
        taken = [0.0, 0.0]
        for i in ((0, 1) if k % 2 else (1, 0)):
            start = time.process_time()
            (first, second)[i]()
            taken[i] = time.process_time() - start
            best[i] = min(best[i], taken[i])
        ratios.append(taken[1] / taken[0])
    return best[0], best[1], statistics.median(ratios)


def numeric_check_cost(sheet_path: Path) -> None:
    """The reader (load + connectivity) and its tokenizer call, with and without the
    check of numeric lists."""
    text = sheet_path.read_text(encoding="utf-8")
    unchecked = {(True, True): sexpr._TOKEN_RES[True, False]}

    def reader_unchecked() -> None:
        with mock.patch.dict(sexpr._TOKEN_RES, unchecked):
            load_netlist(sheet_path)

    base, checked, ratio = paired(reader_unchecked, lambda: load_netlist(sheet_path))
    print(f"{sheet_path.name}: reader without the numeric-list check {base * 1e3:7.1f} ms, "
          f"with it {checked * 1e3:7.1f} ms (best of each); median ratio with/without "
          f"{ratio:.3f}, cost {100 * (ratio - 1):+.1f} % (target < 5 %)")
    base, checked, ratio = paired(
        lambda: sexpr.parse(text, drop_cosmetic=True, check_numbers=False),
        lambda: sexpr.parse(text, drop_cosmetic=True))
    print(f"{sheet_path.name}: its tokenizer call without {base * 1e3:7.1f} ms, with "
          f"{checked * 1e3:7.1f} ms; median ratio {ratio:.3f}, cost {100 * (ratio - 1):+.1f} %")


if __name__ == "__main__":
    main()
