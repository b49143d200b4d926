"""Where each millivolt comes from: the error split, the chain, the coefficients, the ideal
compensation and the part requirements of a stage.

Outside source for every expected number: the handbook closed form of an op-amp stage's
DC output error by superposition (W. Jung (ed.), Op Amp Applications Handbook, Analog
Devices / Newnes 2005, section 1.4 on DC errors; quoted from memory):

    output error = NG·Vos + Rf·Ib- - NG·Rp·Ib+,   NG = 1 + Rf/Ri,

for inverting and non-inverting stages alike (the signal source is 0 V), with
Ib+ = Ib + Ios/2, Ib- = Ib - Ios/2 (so the Ib term is |Rf - NG·Rp|·Ib and the Ios term
(Rf + NG·Rp)/2·Ios); the compensating resistor Rp = Ri||Rf (same source); a voltage at a
non-inverting stage's + input reaches its output times NG. Requirements are the same
forms solved for the largest parameter (budget / coefficient). Numbers are worked out in
each test.
"""

from __future__ import annotations

import json

import pytest

from schemcheck.audit import audit_netlist
from schemcheck.report import stage_lines
from schemcheck.report.json import dumps, to_data
from schemcheck.settings import Settings

from .circuits import circuit

BIPOLAR = "Vos=1mV Ib=80nA Ios=10nA Input=bipolar"


def audit(*lines, **settings):
    return audit_netlist(circuit(*lines), Settings(mc_samples=0, **settings))


def test_coefficients_of_a_non_inverting_stage_with_rp():
    # Ri = 11k, Rf = 10k, Rp = 1k: NG = 1 + 10/11 = 1.90909; Rf = 10 kΩ = 10 mV/µA;
    # NG·Rp = 1.90909 kΩ = 1.91 mV/µA (the example of the report's coefficient line).
    result = audit("R1 GND m 11k", "R2 m out 10k", "R3 p GND 1k", "U1 p=p m=m out=out")
    s = result.stages[0]
    ng = 1 + 10 / 11
    assert s.sensitivity.vos == pytest.approx(ng, rel=1e-12)
    assert s.sensitivity.ib_minus == pytest.approx(10e3, rel=1e-12)
    assert s.sensitivity.ib_plus == pytest.approx(-ng * 1e3, rel=1e-12)
    assert s.sensitivity.ib == pytest.approx(10e3 - ng * 1e3, rel=1e-12)
    assert s.sensitivity.ios == pytest.approx(-(10e3 + ng * 1e3) / 2, rel=1e-12)
    stage = to_data(s)
    assert stage_lines.coefficients(stage) == (
        "output error = 1.91·Vos + 10 mV/µA·Ib- - 1.91 mV/µA·Ib+")
    # R+ = Rp, R- = Ri||Rf = 5.238 kΩ; the compensating Rp should be Ri||Rf
    ri_rf = 11e3 * 10e3 / 21e3
    assert s.resistance_plus_ohm == pytest.approx(1e3, rel=1e-12)
    assert s.resistance_minus_ohm == pytest.approx(ri_rf, rel=1e-12)
    assert s.compensation.resistor == "R3"
    assert s.compensation.ideal_ohm == pytest.approx(ri_rf, rel=1e-12)
    assert s.compensation.useful is None  # no part data: whether it helps is unknown
    assert s.split.vos_v is None  # no figures: no split, but the coefficients


def test_split_of_an_inverting_stage():
    # Ri = 10k, Rf = 100k, Rp = 4.7k, NG = 11; Vos 1 mV, Ib 80 nA, Ios 10 nA, TCVos 10 µV/°C:
    # Vos 11 mV; Ib |100k - 51.7k| x 80 nA = 3.864 mV; Ios (100k + 51.7k)/2 x 10 nA = 0.7585 mV;
    # Ib+ alone -51.7k x 80 nA = -4.136 mV, Ib- alone 100k x 80 nA = 8 mV;
    # drift to 70 °C: 45 °C x 10 µV x 11 = 4.95 mV (bipolar currents flat).
    result = audit("R1 GND m 10k", "R2 m out 100k", "R3 p GND 4.7k",
                   f"U1 p=p m=m out=out {BIPOLAR} TCVos=10uV/°C DC_Budget=30mV")
    s = result.stages[0]
    sp = s.split
    assert (sp.vos_v, sp.ib_v, sp.ios_v) == pytest.approx((11e-3, 3.864e-3, 0.7585e-3), rel=1e-9)
    assert (sp.ib_plus_v, sp.ib_minus_v) == pytest.approx((-4.136e-3, 8e-3), rel=1e-9)
    assert sp.upstream_v == 0.0 and s.upstream == []
    assert sp.drift_v == pytest.approx(4.95e-3, rel=1e-9) and sp.worst_temp_c == 70.0
    assert sp.vos_v + sp.ib_v + sp.ios_v + sp.drift_v == pytest.approx(
        s.worst_case_over_temp_v, rel=1e-12)


def test_part_requirements_of_an_inverting_stage():
    # Same stage, budget 30 mV, 0 to 70 °C (45 °C from 25 °C): each alone
    # Vos < 30 mV / 11 = 2.727 mV, Ib < 30 mV / 48.3k = 621.1 nA, Ios < 30 mV / 75.85k
    # = 395.5 nA; even split: a third of each. The part over the range: Vos 1 + 0.45 = 1.45 mV,
    # Ib 80 nA, Ios 10 nA -> 11 x 1.45 + 3.864 + 0.7585 = 20.57 mV <= 30 mV: fits.
    result = audit("R1 GND m 10k", "R2 m out 100k", "R3 p GND 4.7k",
                   f"U1 p=p m=m out=out {BIPOLAR} TCVos=10uV/°C DC_Budget=30mV")
    need = result.stages[0].requirements
    alone = (30e-3 / 11, 30e-3 / 48.3e3, 30e-3 / 75.85e3)
    assert (need.vos_alone_v, need.ib_alone_a, need.ios_alone_a) == pytest.approx(alone, rel=1e-9)
    assert (need.vos_split_v, need.ib_split_a, need.ios_split_a) == pytest.approx(
        tuple(a / 3 for a in alone), rel=1e-9)
    assert need.delta_t_c == 45.0 and need.available_v == pytest.approx(30e-3)
    assert (need.part_vos_v, need.part_ib_a, need.part_ios_a) == pytest.approx(
        (1.45e-3, 80e-9, 10e-9), rel=1e-9)
    assert need.part_within is True
    # on the limits the stage is exactly at its budget (the closed form again)
    assert 11 * need.vos_split_v + 48.3e3 * need.ib_split_a + 75.85e3 * need.ios_split_a == \
        pytest.approx(30e-3, rel=1e-9)


def test_requirements_without_part_data():
    # A design with no parameters still gets its requirements: buffer-less inverting stage
    # Ri 10k, Rf 100k, + grounded: NG 11, s_ib = 100k, s_ios = 50k; budget 10 mV.
    result = audit("R1 GND m 10k", "R2 m out 100k", "U1 p=GND m=m out=out DC_Budget=10mV")
    need = result.stages[0].requirements
    assert (need.vos_alone_v, need.ib_alone_a, need.ios_alone_a) == pytest.approx(
        (10e-3 / 11, 100e-9, 200e-9), rel=1e-9)
    assert need.part_vos_v is None and need.part_within is None


def test_chain_carries_the_first_stage_with_the_second_gain():
    # U1: non-inverting NG 2 (Rf = Rg = 10k), + grounded: 2 x 1 mV + 10k x 80 nA + 5k x 10 nA
    # = 2.85 mV. U2 takes U1's output at its + input, NG 11 (Rg 1k, Rf 10k): U1's share
    # 11 x 2.85 = 31.35 mV; own 11 mV + 0.8 mV + 0.05 mV = 11.85 mV. Budget 100 mV on U2:
    # 100 - 31.35 = 68.65 mV left, Vos alone < 68.65 / 11 = 6.241 mV.
    result = audit("R1 GND m1 10k", "R2 m1 o1 10k", f"U1 p=GND m=m1 out=o1 {BIPOLAR}",
                   "R3 GND m2 1k", "R4 m2 o2 10k",
                   f"U2 p=o1 m=m2 out=o2 {BIPOLAR} DC_Budget=100mV")
    second = next(s for s in result.stages if s.ref == "U2")
    (up,) = second.upstream
    assert up.id == "U1/1" and up.gain == pytest.approx(11, rel=1e-12)
    assert up.worst_case_v == pytest.approx(31.35e-3, rel=1e-9)
    assert second.split.upstream_v == pytest.approx(31.35e-3, rel=1e-9)
    assert second.worst_case_own_v == pytest.approx(11.85e-3, rel=1e-9)
    need = second.requirements
    assert need.upstream_v == pytest.approx(31.35e-3, rel=1e-9)
    assert need.vos_alone_v == pytest.approx(68.65e-3 / 11, rel=1e-9)
    text = stage_lines.split(to_data(second))
    assert f"U1/1 ×11: {stage_lines.volts(up.worst_case_v)}" in text  # 31.35 mV, 3 digits
    assert text.endswith("= 43.2 mV")  # 11.85 + 31.35, no drift data (TCVos 0)


def test_upstream_without_data_is_named_not_counted():
    result = audit("R1 GND m1 10k", "R2 m1 o1 10k", "U1 p=GND m=m1 out=o1",
                   "R3 GND m2 1k", "R4 m2 o2 10k",
                   f"U2 p=o1 m=m2 out=o2 {BIPOLAR} DC_Budget=100mV")
    second = next(s for s in result.stages if s.ref == "U2")
    assert second.requirements.upstream_v is None
    assert second.requirements.upstream_unknown == ["U1/1"]
    assert second.requirements.available_v == pytest.approx(100e-3)
    assert second.split.upstream_v is None and second.upstream[0].worst_case_v is None


def test_no_negative_zero_or_rounding_noise():
    # A follower with + on ground: R+ = R- = 0 exactly (no -0.0, no -2e-15 Ω).
    result = audit("R1 GND p 0R", "U1 p=GND m=out out=out Vos=1mV Ib=1nA Ios=1nA")
    s = result.stages[0]
    assert s.resistance_plus_ohm == 0.0 and s.resistance_minus_ohm == 0.0
    text = dumps(to_data(result))
    assert "-0.0" not in text and "e-1" not in text.replace("e-10", "")
    assert stage_lines.ohms(-0.0) == "0 Ω"


def test_zero_contributors_are_left_out_of_the_demo_chain():
    from schemcheck.run.batch import audit_paths

    from .conftest import FIXTURES

    demo = audit_paths([str(FIXTURES / "demo" / "frontend.kicad_sch")],
                       overrides={"mc_samples": 0}, jobs=1)["designs"][0]
    first = next(s for s in demo["stages"] if s["id"] == "U4/1")
    # U4/2's bias current flows into U4/1's ideal output: no share (was 6e-20 V of noise)
    assert [c["id"] for c in first["contributors"]] == ["U4/1"]
    assert first["upstream"] == []
    json.dumps(demo, allow_nan=False)


def test_matched_difference_amplifier_has_no_ib_term():
    # The + input through 10k and 100k to two 0 V sources, as in a difference amplifier
    # (Ri = 10k, Rf = 100k on the - side): both inputs see 10k||100k = 9.09 kΩ, so
    # Rf·Ib- - NG·Rp·Ib+ cancels for Ib+ = Ib- (handbook, as above): the Ib coefficient is
    # exactly 0 (not 1e-11 of rounding) and the term is left out of the split.
    result = audit("R1 GND m 10k", "R2 m out 100k", "R3 GND p 10k", "R4 p GND 100k",
                   f"U1 p=p m=m out=out {BIPOLAR}")
    s = result.stages[0]
    assert s.resistance_plus_ohm == pytest.approx(s.resistance_minus_ohm, rel=1e-12)
    assert s.sensitivity.ib == 0.0 and s.split.ib_v == 0.0
    assert s.split.ios_v == pytest.approx(100e3 * 10e-9, rel=1e-9)  # (Rf + NG·Rp)/2 = 100k
    assert " Ib " not in f" {stage_lines.split(to_data(s))}"
    assert s.compensation.ideal_ohm == 0.0  # nothing to add
