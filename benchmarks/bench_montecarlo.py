"""The Monte Carlo's ways of solving a sample, against each other and a bare numpy solve.

Prints, in the same process:

1. one stage, 100,000 samples: ``monte_carlo_run`` with the low-rank update (the
   default) and with the full per-sample solve, against ``numpy.linalg.solve`` alone over
   stacked matrices and right-hand sides of the same size (target: the default within
   3x of the bare solve);
2. on every circuit of the engine's tests (finite gain, a loop through two op-amps, a
   shared bias node, ...) at 1 % and 5 % tolerances, a bias current cancelled by 1/5/10 %
   resistors and an 8x8 resistor mesh: the largest deviation of the bound from the full
   solve's, on the same draws, for the first-order expansion around nominal (the update
   stopped after its first term) and for the update itself (target: within 1 %), over
   five seeds, and the time of each against the full solve.

Run: .venv/bin/python benchmarks/bench_montecarlo.py
"""

from __future__ import annotations

import numpy as np
from _common import best_of

from schemcheck.engine.montecarlo import monte_carlo_run
from tests.circuits import analysed, circuit
from tests.test_montecarlo import CASES

SAMPLES = 100_000
FIXTURE_SAMPLES = 20_000
SEEDS = range(1, 6)


def engine(lines: list[str]):
    return analysed(circuit(*lines))


def one_stage() -> None:
    network, solution, params = engine([
        "R1 GND m 10k Tolerance=1%", "R2 m out 100k Tolerance=1%", "R3 p GND 9.1k Tolerance=1%",
        "U1 p=p m=m out=out Vos=1mV Ib=80nA Ios=10nA Input=bipolar"])
    system = solution.systems[0]
    # the same stacked matrices, built once outside the timing of the baseline
    rng = np.random.default_rng(1)
    tol = np.array([r.tolerance for r in system.component.resistors])
    g = system.conductance / (1.0 + rng.uniform(-1, 1, (SAMPLES, len(tol))) * tol)
    a = np.stack([system.matrix(row) for row in g[:2000]] * (SAMPLES // 2000))
    b = rng.normal(size=(SAMPLES, system.rhs.shape[1])) @ system.rhs.T

    def run(how: str):
        return lambda: monte_carlo_run(network, solution, params, (0.0, 70.0), SAMPLES, 1, how)

    bare = best_of(lambda: np.linalg.solve(a, b[..., None]), 7)
    update = best_of(run("update"), 7)
    full = best_of(run("full"), 3)
    print(f"one stage, system size {a.shape[1]}x{a.shape[2]}, {SAMPLES} samples")
    print(f"bare numpy.linalg.solve (stacked)    {bare * 1e3:8.1f} ms  (baseline)")
    print(f"Monte Carlo, low-rank update         {update * 1e3:8.1f} ms  ratio "
          f"{update / bare:5.2f}x  (target <= 3x)")
    print(f"Monte Carlo, full solve per sample   {full * 1e3:8.1f} ms  ratio {full / bare:5.2f}x")


def fixtures() -> None:
    worst = {"first-order": (0.0, ""), "update": (0.0, "")}
    times = {"full": 0.0, "first-order": 0.0, "update": 0.0}
    for name, lines in sorted(CASES.items()):
        network, solution, params = engine(lines)
        samples = 2000 if name.startswith("mesh") else FIXTURE_SAMPLES

        def run(how: str, iterations: int = 40, seed: int = 1, network=network,
                solution=solution, params=params, samples=samples):
            return monte_carlo_run(network, solution, params, (0.0, 70.0), samples, seed, how,
                                   max_iterations=iterations)

        for seed in SEEDS:
            full = run("full", seed=seed).bounds
            for label, iterations in (("first-order", 0), ("update", 40)):
                got = run("update", iterations, seed).bounds
                for k, want in full.items():
                    deviation = abs(got[k] / want - 1.0)
                    if deviation > worst[label][0]:
                        worst[label] = (deviation, f"{name} {network.opamps[k].unit.part.ref}, "
                                                   f"seed {seed}")
        if not name.startswith("mesh"):
            times["full"] += best_of(lambda: run("full"), 3)
            times["first-order"] += best_of(lambda: run("update", 0), 3)
            times["update"] += best_of(lambda: run("update"), 3)
    print(f"\n{len(CASES)} circuits, {FIXTURE_SAMPLES} samples (mesh 2000), seeds "
          f"{SEEDS.start}-{SEEDS.stop - 1}, same draws: largest deviation of the bound from the "
          "full solve's")
    print(f"full solve per sample   (reference)          time {times['full'] * 1e3:7.1f} ms "
          "(baseline)")
    for label in ("first-order", "update"):
        deviation, where = worst[label]
        verdict = "holds" if deviation <= 0.01 else "misses"
        print(f"{label:12s} largest {deviation * 100:.2g} % ({where}; {verdict} 1 %)")
        print(f"{'':12s} time {times[label] * 1e3:7.1f} ms  ratio "
              f"{times['full'] / times[label]:5.1f}x faster than the full solve")


if __name__ == "__main__":
    one_stage()
    fixtures()
