"""Budgets: RSS and the seeded Monte Carlo.

Outside source: for a linear combination of independent Gaussian terms with
sigma_i = max_i / 3, the error is Gaussian with sigma = RSS / 3, and the 99.7th
percentile of its magnitude is z * sigma with z = Phi^-1(0.9985) = 2.9677 (standard
normal quantile; scipy.stats.norm.ppf(0.9985), from memory to 4 digits).
"""

from __future__ import annotations

import pytest

from schemcheck.audit import audit_netlist
from schemcheck.settings import Settings

from .circuits import circuit

Z_9985 = 2.9677

LINEAR = ("R1 GND m 10k Tolerance=0%", "R2 m out 100k Tolerance=0%", "R3 p GND 4.7k Tolerance=0%",
          "U1 p=p m=m out=out Vos=1mV Ib=80nA Ios=10nA Input=bipolar")


def stage(samples, seed, lines=LINEAR):
    result = audit_netlist(circuit(*lines), Settings(mc_samples=samples, seed=seed))
    return result.stages[0]


def test_monte_carlo_converges_to_rss_for_linear_case():
    s = stage(200_000, 7)
    # tolerance stated: 1.5 % (sampling error of a 99.7th percentile at 2e5 samples is ~0.5 %)
    assert s.monte_carlo_v == pytest.approx(s.rss_v * Z_9985 / 3, rel=0.015)


def test_monte_carlo_is_seeded_and_reproducible():
    a, b, c = stage(20_000, 3), stage(20_000, 3), stage(20_000, 4)
    assert a.monte_carlo_v == b.monte_carlo_v
    assert a.monte_carlo_v != c.monte_carlo_v


def test_resistor_tolerance_widens_the_spread():
    # Rp = Ri||Rf cancels a large Ib exactly at nominal values; 5 % resistors leave
    # Ib x (resistance mismatch) x NG, of the order of 1 uA * 450 ohm * 11 = 5 mV, far above
    # the 0.11 mV Vos term, so the Monte Carlo bound must grow well beyond the RSS.
    lines = ("R1 GND m 10k Tolerance={t}", "R2 m out 100k Tolerance={t}",
             "R3 p GND 9.0909k Tolerance={t}", "U1 p=p m=m out=out Vos=10uV Ib=1uA Ios=1nA")
    tight = stage(20_000, 3, tuple(line.format(t="0%") for line in lines))
    loose = stage(20_000, 3, tuple(line.format(t="5%") for line in lines))
    assert tight.monte_carlo_v == pytest.approx(tight.rss_v * Z_9985 / 3, rel=0.05)
    assert loose.monte_carlo_v > 10 * tight.monte_carlo_v


def test_rss_and_worst_case_of_one_stage():
    # Worked out: NG = 11, Rp = 4.7k: s_ib+ = -51.7k, s_ib- = 100k;
    # terms: 11 mV, |48.3k| * 80 nA = 3.864 mV, |(-51.7k - 100k)/2| * 10 nA = 0.7585 mV.
    s = stage(0, 1)
    terms = (11e-3, 48.3e3 * 80e-9, 75.85e3 * 10e-9)
    assert s.worst_case_own_v == pytest.approx(sum(terms), rel=1e-9)
    assert s.rss_v == pytest.approx(sum(t * t for t in terms) ** 0.5, rel=1e-9)
    assert s.monte_carlo_v is None  # switched off with 0 samples
