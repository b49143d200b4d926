"""A 200-stage sheet audited end to end vs its netlist build alone.

Prints the ratio of ``schemcheck.run.batch.audit_paths`` (read, connect, recognise,
solve, budgets, findings, Monte Carlo with the default 10,000 samples per network)
against ``schemcheck.circuit.load.load_netlist`` on the same file in the same process,
with the Monte Carlo off, with the default Monte Carlo (target: within 2x) and with the
full per-sample solve (``--mc-solve full``, for comparison). The runs are interleaved and
the best of each kept, so a load that comes and goes on the machine hits all of them.

The sheet's stages are Vos-dominated (as most gain stages are): the advice on bias resistors
is mostly not solved there (a change cannot cut what Vos alone costs). A second sheet of
bias-dominated stages, where every suggestion is solved, is measured the same way.

Run: .venv/bin/python benchmarks/bench_audit.py
"""

from __future__ import annotations

import tempfile
import time
from pathlib import Path

from _common import BIAS_DOMINATED, best_of, stage_sheet

from schemcheck.circuit.load import load_netlist
from schemcheck.run.batch import audit_paths

ROUNDS = 9


def main() -> None:
    folder = Path(tempfile.mkdtemp(prefix="schemcheck-bench-"))
    path = folder / "stages.kicad_sch"
    path.write_text(stage_sheet(200).text(), encoding="utf-8")
    biased = folder / "biased.kicad_sch"
    biased.write_text(stage_sheet(200, fields=BIAS_DOMINATED, rp="47k").text(),
                      encoding="utf-8")
    runs = {
        "build": lambda: load_netlist(path),
        "off": lambda: audit_paths([str(path)], overrides={"mc_samples": 0}, jobs=1),
        "default": lambda: audit_paths([str(path)], jobs=1),
        "biased build": lambda: load_netlist(biased),
        "biased": lambda: audit_paths([str(biased)], jobs=1),
    }
    best = {name: float("inf") for name in runs}
    for _ in range(ROUNDS):
        for name, run in runs.items():
            start = time.perf_counter()
            run()
            best[name] = min(best[name], time.perf_counter() - start)
    best["full"] = best_of(lambda: audit_paths([str(path)], overrides={"mc_solve": "full"},
                                               jobs=1), 2)  # slow, only for comparison
    report = audit_paths([str(path)], jobs=1)["designs"][0]
    stages = len(report["stages"])
    samples = {s["monte_carlo_samples"] for s in report["stages"]}
    build = best["build"]
    print(f"{stages} stages, {path.stat().st_size / 1e6:.2f} MB, Monte Carlo samples {samples}")
    print(f"netlist build alone               {build * 1e3:7.1f} ms  (baseline)")
    print(f"audit, Monte Carlo off            {best['off'] * 1e3:7.1f} ms  ratio "
          f"{best['off'] / build:4.2f}x  (target < 1.5x)")
    print(f"audit, default Monte Carlo        {best['default'] * 1e3:7.1f} ms  ratio "
          f"{best['default'] / build:4.2f}x  (target <= 2x)")
    print(f"audit, Monte Carlo --mc-solve full{best['full'] * 1e3:7.1f} ms  ratio "
          f"{best['full'] / build:4.2f}x")
    advised = audit_paths([str(biased)], jobs=1)["designs"][0]["findings"]
    advice = sum(f["rule"].startswith("bias-resistor") for f in advised)
    print(f"bias-dominated sheet ({advice} suggestions given, every one solved):")
    print(f"  netlist build alone             {best['biased build'] * 1e3:7.1f} ms  (baseline)")
    print(f"  audit, default Monte Carlo      {best['biased'] * 1e3:7.1f} ms  ratio "
          f"{best['biased'] / best['biased build']:4.2f}x")


if __name__ == "__main__":
    main()
