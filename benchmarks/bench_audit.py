"""A 200-stage sheet audited end to end vs its netlist build alone.

Prints the ratio of ``schemcheck.batch.audit_paths`` (read, connect, recognise, solve,
budgets, findings, Monte Carlo with the default 10,000 samples per network) against
``schemcheck.io.loader.load_netlist`` on the same file in the same process, and the
same with the Monte Carlo switched off. Target: under 1.5x.

Run: .venv/bin/python bench/bench_audit.py
"""

from __future__ import annotations

import tempfile
from pathlib import Path

from _common import best_of, stage_sheet

from schemcheck.circuit.load import load_netlist
from schemcheck.run.batch import audit_paths


def main() -> None:
    folder = Path(tempfile.mkdtemp(prefix="schemcheck-bench-"))
    path = folder / "stages.kicad_sch"
    path.write_text(stage_sheet(200).text(), encoding="utf-8")
    build = best_of(lambda: load_netlist(path), 5)
    full = best_of(lambda: audit_paths([str(path)], jobs=1), 3)
    without = best_of(lambda: audit_paths([str(path)], overrides={"mc_samples": 0}, jobs=1), 5)
    stages = len(audit_paths([str(path)], overrides={"mc_samples": 0},
                             jobs=1)["designs"][0]["stages"])
    print(f"{stages} stages, {path.stat().st_size / 1e6:.2f} MB")
    print(f"netlist build alone          {build * 1e3:7.1f} ms  (baseline)")
    print(f"audit, Monte Carlo off       {without * 1e3:7.1f} ms  ratio {without / build:4.2f}x"
          "  (target < 1.5x)")
    print(f"audit, default Monte Carlo   {full * 1e3:7.1f} ms  ratio {full / build:4.2f}x")


if __name__ == "__main__":
    main()
