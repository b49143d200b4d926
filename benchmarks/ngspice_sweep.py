"""Seeded random circuits, schemcheck against ngspice, as many as you like.

The test suite compares 300 circuits (``tests/test_ngspice.py``); this script runs the
same comparison on ``--count`` circuits from ``--seed`` and prints how many circuits,
op-amp units and sensitivities agreed, the worst relative error among sensitivities well
above their absolute floor, the largest share of the allowed disagreement used (1 is the
limit), every disagreement, and the time schemcheck (read + solve) and ngspice (two
decks per batch) took on the same circuits in this process, as a ratio. ``--keep DIR`` copies
each disagreeing circuit's schematic and
its batch's decks to DIR. Exit status 1 when any circuit disagrees.

Needs ngspice on the PATH (Debian package ``ngspice``).

Run: .venv/bin/python benchmarks/ngspice_sweep.py --count 5000 --seed 2
"""

from __future__ import annotations

import argparse
import shutil
import sys
import tempfile
import time
from pathlib import Path

import _common  # noqa: F401  (puts the repository root on sys.path)

from schemcheck.engine.dcerror import SOURCES
from tests.draw_circuits import draw, drawn_nets
from tests.random_circuits import circuits
from tests.spice_deck import (
    BATCH,
    Entry,
    compare,
    engine,
    entries,
    net_problems,
    ngspice_version,
    simulate,
)


def _show(name: str, entry: Entry) -> str:
    return (f"({name}: output of {entry.out[0]}/{entry.out[1]}, {entry.source} of {entry.amp[0]}/"
            f"{entry.amp[1]}: ngspice {entry.reference:.9g}, schemcheck {entry.got:.9g})")


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--count", type=int, default=2000, help="circuits (default 2000)")
    parser.add_argument("--seed", type=int, default=2, help="base seed (the suite uses 1)")
    parser.add_argument("--keep", type=Path, help="copy disagreeing circuits here")
    args = parser.parse_args()
    version = ngspice_version()
    if version is None:
        print("ngspice cannot run here: apt-get install ngspice", file=sys.stderr)
        return 2
    chunk = 100 * BATCH
    engine_s = spice_s = 0.0
    units = compared = 0
    worst = used = (0.0, "")
    failures: list[str] = []
    everything = circuits(args.count, args.seed)
    for start in range(0, args.count, chunk):
        batch = everything[start:start + chunk]
        with tempfile.TemporaryDirectory(prefix="schemcheck-ngspice-") as name:
            folder = Path(name)
            paths = []
            for circuit in batch:
                path = folder / f"{circuit.name}.kicad_sch"
                path.write_text(draw(circuit).text(), encoding="utf-8")
                paths.append(path)
            began = time.perf_counter()
            results = [engine(path) for path in paths]
            engine_s += time.perf_counter() - began
            began = time.perf_counter()
            references = simulate(batch, folder)
            spice_s += time.perf_counter() - began
            for i, (circuit, ours, reference) in enumerate(zip(batch, results, references)):
                keys = [amp.key for amp in circuit.amps]
                units += len(keys)
                compared += len(keys) ** 2 * len(SOURCES)
                problems = net_problems(drawn_nets(circuit), ours) or \
                    compare(circuit, ours, reference)
                if problems:
                    failures.append(f"{circuit.name} ({', '.join(circuit.families)}):\n  "
                                    + "\n  ".join(problems))
                    if args.keep:
                        args.keep.mkdir(parents=True, exist_ok=True)
                        shutil.copy(paths[i], args.keep)
                        first = i - i % BATCH
                        for deck_file in folder.glob(f"deck{first:06d}_*.cir"):
                            shutil.copy(deck_file, args.keep / f"{circuit.name}_{deck_file.name}")
                    continue
                for e in entries(circuit, ours, reference):
                    error = abs(e.got - e.reference)
                    if e.allowed and error / e.allowed > used[0]:
                        used = (error / e.allowed, _show(circuit.name, e))
                    if abs(e.reference) > 100 * e.floor and error / abs(e.reference) > worst[0]:
                        worst = (error / abs(e.reference), _show(circuit.name, e))
    print(f"{version}: {args.count} circuits from seed {args.seed}, {units} op-amp units, "
          f"{compared} sensitivities")
    print(f"agree: {args.count - len(failures)}, disagree: {len(failures)}")
    print(f"worst relative error (sensitivities above 100x their absolute floor): "
          f"{worst[0]:.2e}  {worst[1]}")
    print(f"largest share of the allowance used: {used[0]:.2e}  {used[1]}")
    print(f"schemcheck read + solve  {engine_s:8.2f} s  (baseline)")
    print(f"ngspice, two decks       {spice_s:8.2f} s  ratio {spice_s / engine_s:5.1f}x")
    for failure in failures[:50]:
        print(failure)
    return 1 if failures else 0


if __name__ == "__main__":
    sys.exit(main())
