"""Monte Carlo of one stage with resistor tolerances vs a bare stacked solve.

Prints the ratio of ``schemcheck.budget.monte_carlo`` (sampling, stacking the per-sample
MNA matrices, solving, the 99.7 % bound) with 100,000 samples against
``numpy.linalg.solve`` alone over the same stacked matrices and right-hand sides, in the
same process. Target: within 3x.

Run: .venv/bin/python bench/bench_montecarlo.py
"""

from __future__ import annotations

import numpy as np
from _common import best_of

from schemcheck.engine.budget import monte_carlo
from schemcheck.engine.dcerror import solve
from schemcheck.engine.network import build_network
from schemcheck.engine.params import resolve
from schemcheck.engine.stages import recognise
from tests.circuits import circuit

SAMPLES = 100_000


def main() -> None:
    netlist = circuit("R1 GND m 10k Tolerance=1%", "R2 m out 100k Tolerance=1%",
                      "R3 p GND 9.1k Tolerance=1%",
                      "U1 p=p m=m out=out Vos=1mV Ib=80nA Ios=10nA Input=bipolar")
    units, skipped = recognise(netlist.parts)
    network = build_network(netlist, units, skipped)
    params = [resolve(op.unit.part, {}) for op in network.opamps]
    solution = solve(network)
    system = solution.systems[0]

    # the same stacked matrices, built once outside the timing of the baseline
    rng = np.random.default_rng(1)
    tol = np.array([network.resistors[i].tolerance for i in system.component.resistors])
    g = system.conductance / (1.0 + rng.uniform(-1, 1, (SAMPLES, len(tol))) * tol)
    a = np.stack([system.matrix(row) for row in g[:2000]] * (SAMPLES // 2000))
    b = rng.normal(size=(SAMPLES, system.rhs.shape[1])) @ system.rhs.T

    bare = best_of(lambda: np.linalg.solve(a, b[..., None]), 7)
    ours = best_of(lambda: monte_carlo(network, solution, params, (0.0, 70.0), SAMPLES, 1), 7)
    print(f"system size {a.shape[1]}x{a.shape[2]}, {SAMPLES} samples")
    print(f"bare numpy.linalg.solve (stacked)   {bare * 1e3:7.1f} ms  (baseline)")
    print(f"schemcheck Monte Carlo, end to end  {ours * 1e3:7.1f} ms  ratio {ours / bare:4.2f}x"
          "  (target <= 3x)")


if __name__ == "__main__":
    main()
