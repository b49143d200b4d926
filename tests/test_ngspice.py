"""The DC error engine against ngspice on seeded random circuits.

Outside source: ngspice, the open-source SPICE circuit simulator
(https://ngspice.sourceforge.io), Debian package ``ngspice`` (checked with ngspice-39,
package version 39.3+ds-1), run as a subprocess in batch mode. ``.ci/run`` installs it
where it is missing; these tests skip, saying so, where it cannot run.

Each circuit (``tests/random_circuits.py``) is drawn as a KiCad schematic
(``tests/draw_circuits.py``, through the fixture writer ``tests/synth.py``) and read back
by schemcheck exactly as a user's file would be; the same circuit is written as an
ngspice deck straight from its description (``tests/spice_deck.py``), so the reader,
stage recognition, network build and solver are all under test. Every op-amp output's
sensitivity to every op-amp's Vos, Ib+ and Ib- must agree to 1e-4 relative.

More circuits, locally: ``.venv/bin/python benchmarks/ngspice_sweep.py --count 5000``.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

from .draw_circuits import draw, drawn_nets
from .random_circuits import FAMILIES, NOTATIONS, Amp, RandomCircuit, TwoPin, circuits
from .spice_deck import compare, deck, engine, net_problems, ngspice_version, run, simulate

NGSPICE = ngspice_version()
needs_ngspice = pytest.mark.skipif(
    NGSPICE is None, reason="ngspice cannot run here: install the Debian package ngspice "
                            "(apt-get install ngspice) to compare the engine with it")

COUNT = 300  # circuits in the test suite (about 10 s); benchmarks/ngspice_sweep.py for more
SEED = 1


def _check(batch: list[RandomCircuit], folder: Path) -> list[str]:
    results = []
    for circuit in batch:
        path = folder / f"{circuit.name}.kicad_sch"
        path.write_text(draw(circuit).text(), encoding="utf-8")
        results.append(engine(path))
    references = simulate(batch, folder)
    failures = []
    for circuit, ours, reference in zip(batch, results, references):
        problems = net_problems(drawn_nets(circuit), ours) or compare(circuit, ours, reference)
        if problems:
            failures.append(f"{circuit.name} ({', '.join(circuit.families)}; "
                            f"{folder / circuit.name}.kicad_sch):\n  " + "\n  ".join(problems))
    return failures


@needs_ngspice
def test_random_circuits_match_ngspice(tmp_path):
    # Reference: ngspice DC sweeps of each error source (superposition), extrapolated to
    # an ideal op-amp where the part gives no Aol; see tests/spice_deck.py.
    failures = _check(circuits(COUNT, SEED), tmp_path)
    assert not failures, (f"{len(failures)} of {COUNT} circuits disagree with {NGSPICE}:\n"
                          + "\n".join(failures[:10]))


@needs_ngspice
def test_deck_conventions_match_handbook(tmp_path):
    # Checks the deck itself, without the engine. Handbook (Franco, "Design with
    # Operational Amplifiers and Analog Integrated Circuits", ch. on DC errors; from
    # memory): an inverting stage Ri, Rf with Rp from + to ground shows at its output
    # Vos (1 + Rf/Ri) - Ib+ Rp (1 + Rf/Ri) + Ib- Rf (Vos in series with +, Ib into the
    # pins); with a finite open-loop gain Aol the noise gain 1 + Rf/Ri becomes
    # (1 + Rf/Ri) / (1 + (1 + Rf/Ri) / Aol).
    ri, rf, rp = 10e3, 100e3, 9.1e3
    for aol in (None, 1e4):
        circuit = RandomCircuit(seed=0, families=["inverting"], parts=[
            TwoPin("R1", "Device:R", "GND", "M", "10k", ri),
            TwoPin("R2", "Device:R", "M", "OUT", "100k", rf),
            TwoPin("R3", "Device:R", "P", "GND", "9k1", rp)],
            amps=[Amp("P", "M", "OUT", "U1", 1, aol=aol)])
        ideal_ng = 1 + rf / ri
        ng = ideal_ng if aol is None else ideal_ng / (1 + ideal_ng / aol)
        found = simulate([circuit], tmp_path)[0]
        key = ("U1", 1)
        np.testing.assert_allclose(found[(key, key, "vos")], ng, rtol=1e-7)
        np.testing.assert_allclose(found[(key, key, "ib_plus")], -rp * ng, rtol=1e-7)
        np.testing.assert_allclose(found[(key, key, "ib_minus")], rf * ng / ideal_ng,
                                   rtol=1e-7)
        if aol is not None:  # one run at the part's gain: nothing to extrapolate
            single = run(deck([circuit]), tmp_path / "single.cir")[0]
            np.testing.assert_allclose(single[(key, key, "vos")], ng, rtol=1e-10)


def test_random_circuits_cover_every_feature():
    # The generator, not the engine: the suite's circuits exercise every stage family,
    # value notation, package, orientation and way of joining a net the test claims.
    features: set[str] = set()
    for circuit in circuits(COUNT, SEED):
        features |= circuit.features()
        draw(circuit, features)
    wanted = set(FAMILIES) | {f"notation:{n}" for n in NOTATIONS} | {
        "package:single", "package:dual", "package:hidden-supply", "finite-aol",
        "spare-unit", "source-resistance", "global-input", "inductor-short", "jumper-0R",
        "angle:0", "angle:90", "angle:180", "angle:270", "mirror:none", "mirror:x",
        "mirror:y", "join:label", "join:wire", "join:mixed", "label", "global_label",
        "power-symbol", "tag-on-pin", "no-connect", "wire-end-on-wire", "label-on-wire"}
    assert wanted <= features, sorted(wanted - features)


def test_drawings_read_back_as_drawn(tmp_path):
    # The generator's drawings against the reader, ngspice or not: every net drawn is
    # read back with exactly its pins (a fault here is the reader's or the drawing's,
    # and would make the comparison with ngspice meaningless).
    for circuit in circuits(60, SEED + 1):
        path = tmp_path / f"{circuit.name}.kicad_sch"
        path.write_text(draw(circuit).text(), encoding="utf-8")
        assert net_problems(drawn_nets(circuit), engine(path)) == [], circuit.name
