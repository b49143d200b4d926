"""The DC network solve against independent references.

Outside sources:
* lcapy (PyPI, symbolic linear circuit analysis): ideal op-amp component
  ``E out 0 opamp p m Ad`` with the limit Ad -> oo (or a numeric Ad for finite gain);
  its current source ``I 0 n I`` draws current out of node n;
* an independent sympy nodal analysis written here from Kirchhoff's current law;
* handbook closed forms (e.g. Franco, "Design with Operational Amplifiers and Analog
  Integrated Circuits", ch. on DC errors; from memory): output error of an inverting or
  non-inverting stage Vos(1 + Rf/Ri) - Ib+ Rp (1 + Rf/Ri) + Ib- Rf, and with Rp = Ri||Rf,
  Vos(1 + Rf/Ri) - Ios Rf.
"""

from __future__ import annotations

import numpy as np
import pytest
import sympy

from schemcheck.engine.dcerror import solve
from schemcheck.engine.network import build_network
from schemcheck.engine.params import at_temperature, resolve
from schemcheck.engine.stages import recognise

from .circuits import circuit

# (kind, name, nodes..., value); "GND" is the reference node (fixed at 0 V).
CIRCUITS = {
    "inverting-with-Rp": [("R", "R1", "GND", "m", 10e3), ("R", "R2", "m", "out", 100e3),
                          ("R", "R3", "p", "GND", 9.1e3), ("U", "U1", "p", "m", "out", None)],
    "non-inverting-source-R": [("R", "R1", "GND", "p", 4.7e3), ("R", "R2", "m", "GND", 1e3),
                               ("R", "R3", "m", "out", 49.9e3), ("U", "U1", "p", "m", "out", None)],
    "buffer": [("R", "R1", "GND", "p", 100e3), ("U", "U1", "p", "out", "out", None)],
    "t-network": [("R", "R1", "GND", "m", 10e3), ("R", "R2", "m", "tee", 100e3),
                  ("R", "R3", "tee", "out", 100e3), ("R", "R4", "tee", "GND", 1e3),
                  ("U", "U1", "GND", "m", "out", None)],
    "difference": [("R", "R1", "GND", "m", 10e3), ("R", "R2", "m", "out", 100e3),
                   ("R", "R3", "GND", "p", 10e3), ("R", "R4", "p", "GND", 100e3),
                   ("U", "U1", "p", "m", "out", None)],
    "transimpedance": [("R", "R1", "m", "out", 1e6), ("U", "U1", "GND", "m", "out", None)],
    "two-stage-chain": [("R", "R1", "GND", "m1", 10e3), ("R", "R2", "m1", "o1", 100e3),
                        ("R", "R3", "p1", "GND", 9.1e3), ("U", "U1", "p1", "m1", "o1", None),
                        ("R", "R4", "o1", "p2", 10e3), ("R", "R5", "m2", "GND", 1e3),
                        ("R", "R6", "m2", "o2", 10e3), ("U", "U2", "p2", "m2", "o2", None)],
    "finite-gain": [("R", "R1", "GND", "m", 10e3), ("R", "R2", "m", "out", 100e3),
                    ("R", "R3", "p", "GND", 9.1e3), ("U", "U1", "p", "m", "out", 1e4)],
    "summing": [("R", "R1", "GND", "m", 10e3), ("R", "R2", "GND", "m", 20e3),
                ("R", "R3", "m", "out", 100e3), ("R", "R4", "p", "GND", 5.6e3),
                ("U", "U1", "p", "m", "out", None)],
    "loop-through-two-opamps": [("R", "R4", "p1", "GND", 2.2e3), ("R", "R1", "o1", "n1", 10e3),
                                ("R", "R7", "n1", "GND", 10e3),
                                ("U", "U2", "n1", "o2", "o2", None),
                                ("R", "R2", "o2", "m1", 47e3), ("R", "R3", "m1", "GND", 4.7e3),
                                ("U", "U1", "p1", "m1", "o1", None)],
    "shared-bias-node": [("R", "R1", "GND", "d", 10e3), ("R", "R2", "d", "GND", 22e3),
                         ("U", "U1", "d", "o1", "o1", None), ("U", "U2", "d", "m2", "o2", None),
                         ("R", "R3", "m2", "GND", 1e3), ("R", "R4", "m2", "o2", 9.1e3)],
}


def engine_sensitivities(spec):
    lines = []
    for item in spec:
        if item[0] == "R":
            _, name, a, b, ohms = item
            lines.append(f"{name} {a} {b} {ohms!r}")
        else:
            _, name, p, m, out, aol = item
            extra = f" Aol={aol!r}" if aol else ""
            lines.append(f"{name} p={p} m={m} out={out}{extra}")
    netlist = circuit(*lines)
    units, skipped = recognise(netlist.parts)
    network = build_network(netlist, units, skipped)
    for op in network.opamps:
        op.aol = resolve(op.unit.part, {}).aol
    solution = solve(network)
    names = [op.unit.part.ref for op in network.opamps]
    result = {}
    for k, name in enumerate(names):
        assert solution.status[k] == "ok", (name, solution.status[k])
        for (j, source), value in solution.sensitivity[k].items():
            result[(name, names[j], source)] = value
    return names, result


def _symbols(name):
    return sympy.symbols(f"Vos{name} Ibp{name} Ibm{name}")


def lcapy_sensitivities(spec):
    from lcapy import Circuit

    node = lambda n: "0" if n == "GND" else n  # noqa: E731
    lines, outs = [], {}
    for item in spec:
        if item[0] == "R":
            _, name, a, b, ohms = item
            if node(a) != node(b):
                lines.append(f"{name} {node(a)} {node(b)} {ohms!r}")
        else:
            _, name, p, m, out, aol = item
            lines.append(f"Vos{name} pp{name} {node(p)} Vos{name}")
            lines.append(f"E{name} {node(out)} 0 opamp pp{name} {node(m)} "
                         f"{aol!r}" if aol else
                         f"E{name} {node(out)} 0 opamp pp{name} {node(m)} Ad")
            if node(p) != "0":
                lines.append(f"Ip{name} 0 {node(p)} Ibp{name}")
            if node(m) != "0":
                lines.append(f"Im{name} 0 {node(m)} Ibm{name}")
            outs[name] = node(out)
    cct = Circuit("\n".join(lines))
    result = {}
    for name, out in outs.items():
        expr = cct[out].v.sympy
        # lcapy's symbols carry assumptions: look them up by name, not by a new Symbol
        symbols = {str(sym): sym for sym in expr.free_symbols}
        if "Ad" in symbols:
            expr = sympy.limit(expr, symbols["Ad"], sympy.oo)
        for other in outs:
            for source, sym in zip(("vos", "ib_plus", "ib_minus"), _symbols(other)):
                found = symbols.get(str(sym))
                result[(name, other, source)] = float(sympy.diff(expr, found)) if found else 0.0
        assert any(result[(name, other, "vos")] for other in outs), "no Vos term found"
    return result


def sympy_sensitivities(spec):
    """Nodal analysis from KCL: unknown node voltages and op-amp output currents."""
    nodes = sorted({n for item in spec for n in item[2:-1] if isinstance(n, str)} - {"GND"})
    volt = {n: sympy.Symbol(f"V_{n}") for n in nodes}
    volt["GND"] = 0
    current = {item[1]: sympy.Symbol(f"I_{item[1]}") for item in spec if item[0] == "U"}
    kcl = {n: 0 for n in nodes}  # currents leaving each node
    equations = []
    for item in spec:
        if item[0] == "R":
            _, _, a, b, ohms = item
            g = 1 / sympy.Rational(str(ohms))
            for x, y in ((a, b), (b, a)):
                if x != "GND":
                    kcl[x] += (volt[x] - volt[y]) * g
        else:
            _, name, p, m, out, aol = item
            vos, ibp, ibm = _symbols(name)
            if p != "GND":
                kcl[p] += ibp
            if m != "GND":
                kcl[m] += ibm
            kcl[out] -= current[name]
            if aol:
                equations.append(sympy.Eq(volt[out], aol * (volt[p] + vos - volt[m])))
            else:
                equations.append(sympy.Eq(volt[p] + vos, volt[m]))
    equations += [sympy.Eq(expr, 0) for expr in kcl.values()]
    unknowns = [volt[n] for n in nodes] + list(current.values())
    answer = sympy.solve(equations, unknowns, dict=True)[0]
    result = {}
    for item in spec:
        if item[0] != "U":
            continue
        expr = answer[volt[item[4]]]
        for other in current:
            for source, sym in zip(("vos", "ib_plus", "ib_minus"), _symbols(other)):
                result[(item[1], other, source)] = float(sympy.diff(expr, sym))
    return result


@pytest.mark.parametrize("name", sorted(CIRCUITS))
def test_sensitivities_match_lcapy(name):
    spec = CIRCUITS[name]
    _, ours = engine_sensitivities(spec)
    reference = lcapy_sensitivities(spec)
    for key, value in reference.items():
        np.testing.assert_allclose(ours.get(key, 0.0), value, rtol=1e-9, atol=1e-9,
                                   err_msg=f"{name} {key}")


@pytest.mark.parametrize("name", sorted(CIRCUITS))
def test_sensitivities_match_sympy_nodal(name):
    spec = CIRCUITS[name]
    _, ours = engine_sensitivities(spec)
    reference = sympy_sensitivities(spec)
    for key, value in reference.items():
        np.testing.assert_allclose(ours.get(key, 0.0), value, rtol=1e-9, atol=1e-9,
                                   err_msg=f"{name} {key}")


@pytest.mark.parametrize(("ri", "rf", "rp"), [(10e3, 100e3, 9.1e3), (1e3, 47e3, 0.0),
                                              (4.7e3, 4.7e3, 2.2e3)])
def test_handbook_inverting_noninverting_error(ri, rf, rp):
    # Handbook: Eo = Vos(1 + Rf/Ri) - Ib+ Rp (1 + Rf/Ri) + Ib- Rf (same for both stages:
    # the signal source is zero for the error analysis).
    vos, ibp, ibm = 1e-3, 90e-9, 70e-9
    lines = [f"R1 GND m {ri!r}", f"R2 m out {rf!r}", "U1 p=p m=m out=out"]
    lines.append(f"R3 p GND {rp!r}" if rp else "R3 p GND 0")
    netlist = circuit(*lines)
    units, skipped = recognise(netlist.parts)
    solution = solve(build_network(netlist, units, skipped))
    s = solution.own(0)
    ours = s["vos"] * vos + s["ib_plus"] * ibp + s["ib_minus"] * ibm
    handbook = vos * (1 + rf / ri) - ibp * rp * (1 + rf / ri) + ibm * rf
    np.testing.assert_allclose(ours, handbook, rtol=1e-12)


def test_handbook_compensated_stage_leaves_ios_rf():
    # Handbook: with Rp = Ri||Rf, Eo = Vos(1 + Rf/Ri) - Ios Rf, Ios = Ib+ - Ib-.
    ri, rf = 10e3, 100e3
    rp = ri * rf / (ri + rf)
    vos, ibp, ibm = 0.5e-3, 85e-9, 75e-9
    netlist = circuit(f"R1 GND m {ri!r}", f"R2 m out {rf!r}", f"R3 p GND {rp!r}",
                      "U1 p=p m=m out=out")
    units, skipped = recognise(netlist.parts)
    s = solve(build_network(netlist, units, skipped)).own(0)
    ours = s["vos"] * vos + s["ib_plus"] * ibp + s["ib_minus"] * ibm
    np.testing.assert_allclose(ours, vos * (1 + rf / ri) - (ibp - ibm) * rf, rtol=1e-12)


def test_grounded_inverting_stage_shows_ib_rf():
    # Common practice: an inverting stage with grounded input and no compensation
    # resistor shows Ib x Rf at its output (Vos aside).
    netlist = circuit("R1 GND m 10k", "R2 m out 1M", "U1 p=GND m=m out=out")
    units, skipped = recognise(netlist.parts)
    s = solve(build_network(netlist, units, skipped)).own(0)
    assert s["ib_plus"] == 0.0
    np.testing.assert_allclose(s["ib_minus"], 1e6, rtol=1e-12)


def test_grounded_buffer_outputs_plus_vos():
    # The model's sign convention (Vos in series with the + input).
    netlist = circuit("U1 p=GND m=out out=out")
    units, skipped = recognise(netlist.parts)
    s = solve(build_network(netlist, units, skipped)).own(0)
    assert s["vos"] == pytest.approx(1.0, rel=1e-12)


def test_fet_bias_current_doubles_every_10c():
    # Common practice: FET-input bias current doubles about every 10 °C.
    part = circuit("U1 p=GND m=out out=out Vos=1mV Ib=10pA Ios=5pA Input=jfet").parts[0]
    params = resolve(part, {})
    assert at_temperature(params, 35.0, 70.0).ib == pytest.approx(20e-12, rel=1e-12)
    assert at_temperature(params, 65.0, 70.0).ib == pytest.approx(160e-12, rel=1e-12)
    assert at_temperature(params, 0.0, 70.0).ib == pytest.approx(10e-12, rel=1e-12)
    bipolar = resolve(circuit("U1 p=GND m=out out=out Vos=1mV Ib=10nA Ios=1nA "
                              "Input=bipolar").parts[0], {})
    assert at_temperature(bipolar, 70.0, 70.0).ib == pytest.approx(10e-9, rel=1e-12)


def test_vos_grows_with_drift():
    part = circuit("U1 p=GND m=out out=out Vos=1mV Ib=1nA Ios=1nA TCVos=5uV/°C").parts[0]
    params = resolve(part, {})
    assert at_temperature(params, -40.0, 85.0).vos == pytest.approx(1e-3 + 65 * 5e-6, rel=1e-12)


@pytest.mark.parametrize("ib", ["60fA", "20uA"])
def test_bias_current_range_of_the_trade(ib):
    # Common practice: bias currents span about 60 fA (electrometer CMOS) to tens of
    # µA (high-speed bipolar); both ends solve without loss of precision.
    netlist = circuit("R1 GND m 10k", "R2 m out 100k", "U1 p=GND m=m out=out "
                      f"Vos=1mV Ib={ib} Ios={ib}")
    units, skipped = recognise(netlist.parts)
    s = solve(build_network(netlist, units, skipped)).own(0)
    np.testing.assert_allclose(s["ib_minus"], 100e3, rtol=1e-12)


def test_tied_outputs_beside_a_network_of_the_same_count_are_solved():
    # Two outputs tied on one net count as two unknowns but are one row of the matrix; a
    # second network whose count is the same must not be stacked with it (it crashed the
    # audit: arrays of different shapes). The tied pair is reported as such, the other
    # stage solved: an inverting stage, noise gain 1 + Rf/Ri = 1 + R3/R7 = 2 (handbook
    # inverting amplifier; R4-R5-R6 only load its output).
    from schemcheck.audit import audit_netlist
    from schemcheck.settings import Settings

    part = "Vos=1mV Ib=10nA Ios=1nA"
    result = audit_netlist(circuit(
        "J1 IN GND", f"U1 p=GND m=m1 out=o {part}", f"U2 p=GND m=m2 out=o {part}",
        "R1 m1 o 10k", "R2 m2 o 10k", "R9 IN m1 10k", f"U3 p=GND m=a out=b {part}",
        "R3 a b 10k", "R4 b c 10k", "R5 c d 10k", "R6 d GND 10k", "R7 IN a 10k"),
        Settings(mc_samples=0))
    status = {s.id: s.status for s in result.stages}
    assert status == {"U1/1": "outputs-tied", "U2/1": "outputs-tied", "U3/1": "ok"}
    u3 = next(s for s in result.stages if s.id == "U3/1")
    assert u3.noise_gain == pytest.approx(2.0, rel=1e-12)
