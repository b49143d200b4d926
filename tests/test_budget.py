"""Budgets: RSS and the seeded Monte Carlo.

Outside source for the Monte Carlo: with resistors at nominal values the output error is
sum_i t_i X_i, each X_i an independent standard normal truncated to +-3 and scaled by
1/3 (t_i = the worst-case term of source i: maximum = 3 sigma, cut there). Its
distribution is built here from scipy.stats.truncnorm densities by numerical convolution
(scipy.signal.fftconvolve, in ``truncated_sum_bound``), independently of the engine, and
the 99.7th percentile of its magnitude read from it.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy.signal import fftconvolve
from scipy.stats import truncnorm

from schemcheck.audit import audit_netlist
from schemcheck.report.json import to_data
from schemcheck.settings import Settings

from .circuits import circuit


def truncated_sum_bound(terms, percent=99.7, steps=40_000):
    """99.7th percentile of |sum t_i X_i|, X_i ~ truncnorm(-3, 3) / 3 (outside reference:
    scipy.stats densities on a grid, convolved with scipy.signal; grid error below 1e-5)."""
    h = 2 * sum(terms) / steps
    density = np.array([1.0])
    for t in terms:
        x = np.arange(-np.floor(t / h), np.floor(t / h) + 1) * h
        piece = truncnorm(-3, 3, scale=t / 3).pdf(x)
        density = fftconvolve(density, piece / piece.sum())
    x = (np.arange(len(density)) - (len(density) - 1) / 2) * h
    magnitude_cdf = np.cumsum(density[x >= 0] + density[x <= 0][::-1]) - density[x == 0]
    return float(np.interp(percent / 100, magnitude_cdf, x[x >= 0]))

LINEAR = ("R1 GND m 10k Tolerance=0%", "R2 m out 100k Tolerance=0%", "R3 p GND 4.7k Tolerance=0%",
          "U1 p=p m=m out=out Vos=1mV Ib=80nA Ios=10nA Input=bipolar")


def stage(samples, seed, lines=LINEAR):
    result = audit_netlist(circuit(*lines), Settings(mc_samples=samples, seed=seed))
    return to_data(result.stages[0])


# Worked out: NG = 11, Rp = 4.7k: s_ib+ = -51.7k, s_ib- = 100k;
# terms: 11 mV, |48.3k| * 80 nA = 3.864 mV, |(-51.7k - 100k)/2| * 10 nA = 0.7585 mV.
LINEAR_TERMS = (11e-3, 48.3e3 * 80e-9, 75.85e3 * 10e-9)


def test_truncated_sum_reference_matches_known_quantiles():
    # the reference itself: one term is truncnorm's own quantile (scipy ppf, 0.9985 ->
    # 2.7650 sigma); many equal terms approach the Gaussian z(0.9985) = 2.9677 of the RSS
    assert truncated_sum_bound([3.0]) == pytest.approx(truncnorm(-3, 3).ppf(0.9985), rel=1e-4)
    many = truncated_sum_bound([1.0] * 16, steps=200_000)
    assert many == pytest.approx(2.9677 * (0.97334 * 16) ** 0.5 / 3, rel=0.01)


@pytest.mark.parametrize("solve", ["update", "full"])
def test_monte_carlo_converges_to_truncated_sum(solve):
    result = audit_netlist(circuit(*LINEAR), Settings(mc_samples=200_000, seed=7,
                                                      mc_solve=solve))
    s = to_data(result.stages[0])
    # tolerance stated: 1.5 % (sampling error of a 99.7th percentile at 2e5 samples is ~0.5 %)
    assert s["monte_carlo_v"] == pytest.approx(truncated_sum_bound(LINEAR_TERMS), rel=0.015)
    assert s["monte_carlo_samples"] == 200_000


@pytest.mark.parametrize("seed", range(1, 21))
def test_monte_carlo_bound_never_exceeds_worst_case_at_nominal_resistors(seed):
    # Vos alone, exact resistors: every sample is within the worst case |NG| * Vos (the
    # parameters are truncated at their maximum), so the bound is too. An untruncated
    # Gaussian puts 0.27 % of samples beyond it: with 1000 samples its 99.7th percentile
    # passed the worst case for 5 of these 20 seeds.
    lines = ("R1 GND m 10k Tolerance=0%", "R2 m out 100k Tolerance=0%",
             "U1 p=GND m=m out=out Vos=1mV Ib=0nA Ios=0nA")
    s = stage(1000, seed, lines)
    assert s["worst_case_over_temp_v"] == pytest.approx(11e-3, rel=1e-12)  # |NG| Vos
    assert 0.0 < s["monte_carlo_v"] <= s["worst_case_over_temp_v"]


def test_monte_carlo_is_seeded_and_reproducible():
    a, b, c = stage(20_000, 3), stage(20_000, 3), stage(20_000, 4)
    assert a["monte_carlo_v"] == b["monte_carlo_v"]
    assert a["monte_carlo_v"] != c["monte_carlo_v"]


def test_resistor_tolerance_widens_the_spread():
    # Rp = Ri||Rf cancels a large Ib exactly at nominal values; 5 % resistors leave
    # Ib x (resistance mismatch) x NG, of the order of 1 uA * 450 ohm * 11 = 5 mV, far above
    # the 0.11 mV Vos term, so the Monte Carlo bound must grow well beyond the RSS.
    lines = ("R1 GND m 10k Tolerance={t}", "R2 m out 100k Tolerance={t}",
             "R3 p GND 9.0909k Tolerance={t}", "U1 p=p m=m out=out Vos=10uV Ib=1uA Ios=1nA")
    tight = stage(20_000, 3, tuple(line.format(t="0%") for line in lines))
    loose = stage(20_000, 3, tuple(line.format(t="5%") for line in lines))
    # terms at nominal values: Vos 10 uV * 11; Ib 1 uA * |R+ - R-| * 11 (about 0); Ios 1 nA
    # * (9.0909k + 100k) / 2 * ... taken from the engine's own sensitivities, checked
    # against the handbook in test_dcerror
    sens = tight["sensitivity"]
    terms = [abs(sens["vos"]) * 10e-6, abs(sens["ib_plus"] + sens["ib_minus"]) * 1e-6,
             abs(sens["ib_plus"] - sens["ib_minus"]) / 2 * 1e-9]
    assert tight["monte_carlo_v"] == pytest.approx(truncated_sum_bound(terms), rel=0.05)
    assert loose["monte_carlo_v"] > 10 * tight["monte_carlo_v"]
    # resistor tolerances are what carries the bound past the worst case (which uses
    # nominal values): a bias current through mismatched resistors
    assert loose["monte_carlo_v"] > loose["worst_case_over_temp_v"]


def test_rss_and_worst_case_of_one_stage():
    s = stage(0, 1)
    terms = LINEAR_TERMS  # worked out above
    assert s["worst_case_own_v"] == pytest.approx(sum(terms), rel=1e-9)
    assert s["rss_v"] == pytest.approx(sum(t * t for t in terms) ** 0.5, rel=1e-9)
    assert s["monte_carlo_v"] is None  # switched off with 0 samples
