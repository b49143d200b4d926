"""The bundled demo design (fixtures/demo/, an invented scenario) and its findings.

Outside source for each expected figure: worked out by hand from the drawn values and
the demo parts library, with the handbook error formula of test_dcerror.py and the FET
rule of thumb (bias current doubles every 10 °C, common practice).
"""

from __future__ import annotations

import pytest

from schemcheck.run.batch import audit_paths
from schemcheck.run.runner import options_to_overrides

from . import make_demo
from .conftest import FIXTURES

DEMO = FIXTURES / "demo"


@pytest.fixture(scope="module")
def demo():
    overrides = options_to_overrides(parts=str(DEMO / "parts.toml"), samples=2000)
    return audit_paths([str(DEMO / "frontend.kicad_sch")], overrides=overrides,
                       jobs=1)["designs"][0]


def test_demo_files_are_current(tmp_path, monkeypatch):
    monkeypatch.setattr(make_demo, "OUT", tmp_path)
    make_demo.main()
    for made in tmp_path.glob("*.kicad_sch"):
        assert (DEMO / made.name).read_text(encoding="utf-8") == made.read_text(
            encoding="utf-8"), f"{made.name} is stale: run python -m tests.make_demo"


def test_demo_findings(demo):
    found = sorted((f["rule"], f["severity"], f["ref"], f["unit"]) for f in demo["findings"])
    assert found == [
        ("bias-resistor-mismatch", "warning", "U4", 1),  # 22k where Ri||Rf = 9.09k
        ("no-bias-path", "error", "U3", 1),  # AC-coupled + input
        ("over-budget", "error", "U1", 1),  # FET TIA: fine at 25 °C, not when hot
        ("over-budget", "error", "U4", 2),  # the chain's second stage
    ]
    mismatch = next(f for f in demo["findings"] if f["rule"] == "bias-resistor-mismatch")
    assert mismatch["suggestion"] == "change R403 to 9.09 kΩ (E96 9.09 kΩ, E24 9.1 kΩ)"
    # Verified by solving again with R403 = 9.09k: the Ib terms cancel to
    # |11 x 9.09k - 100k| x 120n and Ios gives (11 x 9.09k + 100k)/2 x 12 nA = 1.2 mV; at
    # 70 °C Vos 250 µV + 45 x 1.5 µV/°C = 317.5 µV x 11 (handbook error terms).
    s_ib = abs(11 * 9.09e3 - 100e3)
    s_ios = (11 * 9.09e3 + 100e3) / 2
    after = 11 * 317.5e-6 + s_ib * 120e-9 + s_ios * 12e-9
    assert mismatch["data"]["worst_case_after_v"] == pytest.approx(after, rel=1e-4)
    assert demo["not_analysed"][0]["ref"] == "U1" and demo["not_analysed"][0]["unit"] == 2


def test_demo_photodiode_channel_figures(demo):
    u1 = next(s for s in demo["stages"] if s["ref"] == "U1")
    assert u1["topology"] == "transimpedance"
    aol = 10 ** (110 / 20)  # 110 dB; a follower's gain with finite Aol is Aol / (1 + Aol)
    assert u1["noise_gain"] == pytest.approx(aol / (1 + aol), rel=1e-9)
    # 25 °C: 2 mV + 10 MΩ x 50 pA + 5 MΩ x 25 pA = 2.625 mV (finite gain shaves ~1 ppm)
    assert u1["worst_case_own_v"] == pytest.approx(2.625e-3, rel=1e-4)
    # 70 °C: Vos 2 mV + 45 x 10 µV; currents x 2^4.5 (FET, x2 per 10 °C)
    hot = 2.45e-3 + (10e6 * 50e-12 + 5e6 * 25e-12) * 2 ** 4.5
    assert u1["worst_case_over_temp_v"] == pytest.approx(hot, rel=1e-4)


def test_demo_chain_propagates(demo):
    first = next(s for s in demo["stages"] if s["ref"] == "U4" and s["unit"] == 1)
    second = next(s for s in demo["stages"] if s["ref"] == "U4" and s["unit"] == 2)
    assert first["topology"] == "inverting" and second["topology"] == "non-inverting"
    # the second stage (noise gain 11) carries the first stage's error times 11
    assert second["worst_case_total_v"] == pytest.approx(
        second["worst_case_own_v"] + 11 * first["worst_case_own_v"], rel=1e-4)
