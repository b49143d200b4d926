"""Error over the temperature range, the Monte Carlo histogram and the chain arrows.

Outside sources:
* the DC error of a non-inverting stage with Rg from the - input to ground, Rf from the
  output and the + input grounded: Vout = (1 + Rf/Rg)·Vos + Rf·Ib- (Analog Devices, "Op Amp
  Applications Handbook", section on DC errors, from memory); with Ib+ = Ib + Ios/2 and
  Ib- = Ib - Ios/2 the Ib and Ios terms are Rf·Ib and Rf/2·Ios;
* FET-input bias currents double every 10 °C above 25 °C (common practice, the model's
  stated assumption); Vos grows by TCVos per °C away from 25 °C;
* a sum of independent Gaussian terms is Gaussian with variance the sum of the variances
  (any probability textbook), so its 99.7 % bound is a fixed multiple of the RSS of the
  terms whatever their mix: the Monte Carlo bound at one temperature scales with the RSS;
* the standard normal distribution function Phi(x) = (1 + erf(x / sqrt 2)) / 2.
"""

from __future__ import annotations

import math
from dataclasses import replace

import numpy as np
import pytest

from schemcheck.audit import audit_netlist
from schemcheck.circuit.load import load_netlist
from schemcheck.engine import budget, dcerror, network, params, stages
from schemcheck.engine.chain import driven_by
from schemcheck.engine.histogram import histogram
from schemcheck.engine.sweep import sweep_temperatures
from schemcheck.io.partslib import load_parts_library
from schemcheck.run.batch import settings_for
from schemcheck.settings import Settings

from .circuits import circuit
from .conftest import FIXTURES

DEMO = FIXTURES / "demo" / "frontend.kicad_sch"

NON_INVERTING = ("R1 GND m 10k Tolerance=0%", "R2 m out 100k Tolerance=0%",
                 "U1 p=GND m=m out=out Vos=1mV TCVos=10uV/°C Ib=10pA Ios=5pA Input=jfet")


def _handbook(temp: float) -> tuple[float, float]:
    """Worst case and RSS of NON_INVERTING at ``temp`` from the closed form."""
    gain, rf = 1 + 100e3 / 10e3, 100e3
    doubling = 2 ** ((temp - 25) / 10) if temp > 25 else 1.0
    terms = (gain * (1e-3 + 10e-6 * abs(temp - 25)), rf * 10e-12 * doubling,
             rf / 2 * 5e-12 * doubling)
    return sum(terms), math.sqrt(sum(t * t for t in terms))


def test_worst_case_and_rss_over_the_range_match_the_closed_form():
    result = audit_netlist(circuit(*NON_INVERTING),
                           Settings(temp_range=(-40.0, 85.0), mc_samples=0, charts=True))
    curve = result.stages[0].over_temperature
    assert curve is not None
    temps = curve.temps_c
    assert temps[0] == -40.0 and temps[-1] == 85.0 and 25.0 in temps and len(temps) >= 30
    expected = [_handbook(t) for t in temps]
    # tolerance: 1e-9 relative (double-precision solve of a 2-node network)
    np.testing.assert_allclose(curve.worst_case_v, [w for w, _ in expected], rtol=1e-9)
    np.testing.assert_allclose(curve.rss_v, [r for _, r in expected], rtol=1e-9)
    # the curve meets the budget's figure at the worse end of the range
    assert max(curve.worst_case_v) == pytest.approx(result.stages[0].worst_case_over_temp_v,
                                                    rel=1e-12)
    assert curve.monte_carlo_v is None and result.stages[0].histogram is None  # MC off


def test_sweep_adds_the_bends_inside_the_range():
    part = params.OpampParams(vos=1e-3, ib=1e-9, ios=1e-10, t_hot=60.0)
    temps = sweep_temperatures((0.0, 70.0), [part], intervals=7)
    assert temps == [0.0, 10.0, 20.0, 25.0, 30.0, 40.0, 50.0, 60.0, 70.0]


def test_charts_are_kept_only_when_asked_for():
    plain = audit_netlist(circuit(*NON_INVERTING), Settings(mc_samples=200))
    assert plain.stages[0].over_temperature is None and plain.stages[0].histogram is None
    assert "charts" not in plain.settings


def _demo_network(samples: int):
    settings = settings_for(str(DEMO), Settings(), {"charts": True, "mc_samples": samples})
    library = load_parts_library(settings.parts_library)
    netlist = load_netlist(str(DEMO))
    result = audit_netlist(netlist, settings, library)
    units, skipped = stages.recognise(netlist.parts)
    net = network.build_network(netlist, units, skipped,
                                default_tolerance=settings.default_tolerance,
                                source_resistance=settings.source_resistance)
    found = []
    for op in net.opamps:
        p = params.resolve(op.unit.part, library)
        op.aol = p.aol
        found.append(p)
    return settings, result, net, dcerror.solve(net), found


def test_rss_scaled_monte_carlo_curve_against_monte_carlo_sampled_at_each_temperature():
    settings, result, net, solution, found = _demo_network(10_000)
    low, high = settings.temp_range
    # hot values placed where the audit places them, so a one-temperature range samples the
    # same parts as the full range does at that temperature
    pinned = [replace(p, t_hot=p.t_hot if p.t_hot is not None else high) for p in found]
    checked = 0
    for temp in (low, 25.0, 45.0, high):
        sampled = budget.monte_carlo(net, solution, pinned, (temp, temp), settings.mc_samples,
                                     settings.seed)
        for k, s in enumerate(result.stages):
            curve = s.over_temperature
            if curve is None or curve.monte_carlo_v is None:
                continue
            estimate = float(np.interp(temp, curve.temps_c, curve.monte_carlo_v))
            if temp == curve.monte_carlo_temp_c:
                # the sampled point: the same draws, so the same number
                assert estimate == pytest.approx(s.monte_carlo_v, rel=1e-12)
                assert sampled[k] == pytest.approx(s.monte_carlo_v, rel=1e-12)
            # tolerance: 5 % (the 99.7th percentile of 10 000 samples varies by ~2-3 %; the
            # resistor spread is a second-order term)
            assert estimate == pytest.approx(sampled[k], rel=0.05), (s.id, temp)
            checked += 1
    assert checked >= 12


def test_histogram_holds_every_sample_and_the_bound():
    _, result, *_ = _demo_network(10_000)
    kept = [s for s in result.stages if s.histogram is not None]
    assert [s.id for s in kept] == ["U1/1", "U2/1", "U4/1", "U4/2"]  # U3/1 is not solved
    for s in kept:
        h = s.histogram
        assert sum(h.counts) == h.samples == 10_000
        assert h.edges_v[0] == pytest.approx(-h.edges_v[-1]) and len(h.edges_v) == 42
        assert h.bound_v == s.monte_carlo_v and h.temp_c == s.over_temperature.monte_carlo_temp_c
        edges = np.array(h.edges_v)
        counts = np.array(h.counts)
        inside = counts[(edges[:-1] >= -h.bound_v) & (edges[1:] <= h.bound_v)].sum()
        touching = counts[(edges[1:] > -h.bound_v) & (edges[:-1] < h.bound_v)].sum()
        # the 99.7th percentile of |error|: 99.7 % of the samples lie within +-bound. The
        # histogram is sampled apart from the bound (same distributions and seed), so the
        # share inside is 0.997 within the binomial spread of n samples: 3 sigma of it
        # (sigma = sqrt(p (1 - p) / n), 0.00055 at n = 10,000)
        spread = 3 * math.sqrt(0.997 * 0.003 / h.samples) * h.samples
        assert inside <= 0.997 * h.samples + spread
        assert 0.997 * h.samples - spread <= touching


def test_histogram_of_gaussian_samples_follows_the_normal_distribution():
    rng = np.random.default_rng(5)
    samples = rng.normal(0.0, 1e-3, size=200_000)
    binned = histogram(samples)

    def phi(x: float) -> float:
        return (1 + math.erf(x / 1e-3 / math.sqrt(2))) / 2

    for a, b, count in zip(binned.edges[:-1], binned.edges[1:], binned.counts):
        expected = 200_000 * (phi(b) - phi(a))
        # tolerance: 5 binomial standard deviations plus one sample
        assert abs(count - expected) <= 5 * math.sqrt(expected) + 1


def test_chain_arrows_follow_the_resistor_network():
    # U1 feeds U2 and U3 directly; U2 feeds U3 too (a summing node): U3 is driven by both,
    # although U1 also reaches U3 through U2. U1's own feedback ends at its output.
    net = circuit("R1 IN a 10k", "U1 p=a m=o1 out=o1 Vos=1mV Ib=1nA Ios=1nA",
                  "R2 o1 b 10k", "R3 b GND 10k", "U2 p=b m=o2 out=o2 Vos=1mV Ib=1nA Ios=1nA",
                  "R4 o1 s 10k", "R5 o2 s 10k", "R6 s o3 10k",
                  "U3 p=GND m=s out=o3 Vos=1mV Ib=1nA Ios=1nA")
    units, skipped = stages.recognise(net.parts)
    built = network.build_network(net, units, skipped)
    names = [op.unit.name for op in built.opamps]
    feeds = {names[k]: [names[j] for j in found] for k, found in enumerate(driven_by(built))}
    assert feeds == {"U1/1": [], "U2/1": ["U1/1"], "U3/1": ["U1/1", "U2/1"]}


def test_demo_chain_arrow():
    # fixtures/README.md: the chain sheet's U4B (x11) carries U4A's error
    _, result, *_ = _demo_network(0)
    assert {s.id: s.driven_by for s in result.stages} == {
        "U1/1": [], "U2/1": [], "U3/1": [], "U4/1": [], "U4/2": ["U4/1"]}
