"""Design-defect rules on small circuits.

Outside sources: handbook and common-practice facts of the trade, named per test
(the compensating resistor is Ri||Rf for inverting and non-inverting stages; a
capacitor blocks DC so an input reached only through one has no bias path; an
integrator without a DC feedback resistor has unbounded DC gain; FET-input bias
currents do not track, so a compensating resistor adds error). Closed forms are
worked out in each test.
"""

from __future__ import annotations

import pytest

from schemcheck.audit import audit_netlist
from schemcheck.settings import Settings

from .circuits import circuit

BIPOLAR = "Vos=1mV Ib=80nA Ios=10nA Input=bipolar"


def run(*lines, **settings):
    return audit_netlist(circuit(*lines), Settings(mc_samples=0, **settings))


def rules(result):
    return sorted((f.rule, f.severity, f.ref) for f in result.findings)


def test_no_bias_path_through_capacitor():
    # Common practice: an AC-coupled input with no resistor to ground has no DC path.
    result = run("J1 IN GND", "C1 IN p 100n", "R1 GND m 10k", "R2 m out 100k",
                 f"U1 p=p m=m out=out {BIPOLAR}")
    assert rules(result) == [("no-bias-path", "error", "U1")]
    finding = result.findings[0]
    assert finding.message == ("the non-inverting (+) input of U1/1 (net p) has no DC path "
                               "for its bias current: it reaches the rest of the circuit only "
                               "through C1; the output has no defined DC level")
    stage = result.stages[0]
    assert stage.status == "no-bias-path" and stage.worst_case_own_v is None


def test_no_dc_feedback_integrator():
    # Common practice: an integrator without a resistor across its capacitor.
    result = run("R1 GND m 10k", "C1 m out 1u", f"U1 p=GND m=m out=out {BIPOLAR}")
    assert rules(result) == [("no-dc-feedback", "error", "U1")]
    assert result.stages[0].topology == "integrator"
    assert "the feedback goes only through C1" in result.findings[0].message


def test_dependent_stage_is_unknown_not_made_up():
    result = run("R1 GND m 10k", "C1 m o1 1u", f"U1 p=GND m=m out=o1 {BIPOLAR}",
                 "R2 o1 m2 10k", "R3 m2 o2 10k", f"U2 p=GND m=m2 out=o2 {BIPOLAR}")
    second = next(s for s in result.stages if s.ref == "U2")
    assert second.worst_case_own_v is not None  # its own sources are known
    assert second.worst_case_total_v is None and second.depends_on_undefined_output


@pytest.mark.parametrize("stage", ["inverting", "non-inverting"])
def test_mismatch_ideal_value_is_ri_parallel_rf(stage):
    # Common practice (and handbook): the compensating resistor is Ri||Rf for both
    # stages. Ri = 4.7k, Rf = 47k -> 4.2727k; nearest E96 4.32k, E24 4.3k (IEC 60063).
    source = "GND"  # the signal source is 0 V for the error analysis either way
    lines = [f"R1 {source} m 4.7k", "R2 m out 47k", "R3 p GND 22k", f"U1 p=p m=m out=out {BIPOLAR}"]
    result = run(*lines)
    mismatch = [f for f in result.findings if f.rule == "bias-resistor-mismatch"]
    assert len(mismatch) == 1 and mismatch[0].severity == "warning"
    assert mismatch[0].suggestion == "change R3 to 4.27 kΩ (E96 4.32 kΩ, E24 4.3 kΩ)"


def test_matched_compensation_is_quiet():
    result = run("R1 GND m 10k", "R2 m out 100k", "R3 p GND 9.09k", f"U1 p=p m=m out=out {BIPOLAR}")
    assert rules(result) == []


def test_info_when_adding_compensation_halves_the_error():
    # Bipolar part, Ib >> Vos/Rf: without Rp the output error is dominated by Ib*Rf.
    # Worked out: NG = 2, Rf = 1M: own worst case = 2*0.1mV + 1M*200nA + 0.5M*20nA
    # = 0.2 + 200 + 10 mV; with Rp = 500k: 0.2 + 0 + 1M*20nA = 20.2 mV.
    result = run("R1 GND m 1M", "R2 m out 1M", "U1 p=GND m=m out=out Vos=0.1mV Ib=200nA "
                 "Ios=20nA Input=bipolar")
    info = [f for f in result.findings if f.rule == "bias-resistor-mismatch"]
    # Thermal noise of the E96 value, sqrt(4kTR) (Johnson-Nyquist; k = 1.380649e-23 J/K by
    # the SI definition) at the top of the default range, 70 °C = 343.15 K:
    # sqrt(4 * 1.380649e-23 * 343.15 * 499e3) = 97.2 nV/sqrt(Hz).
    assert [(f.severity, f.suggestion) for f in info] == [
        ("info", "add 500 kΩ (E96 499 kΩ, E24 510 kΩ) in series with the + input, bypassed with "
                 "a capacitor if noise matters (unbypassed, 499 kΩ adds its thermal noise, "
                 "97.2 nV/√Hz at 70 °C)")]
    assert info[0].data["noise_v_per_rthz"] == pytest.approx(
        (4 * 1.380649e-23 * 343.15 * 499e3) ** 0.5, rel=1e-12)
    assert result.stages[0].worst_case_own_v == pytest.approx(0.2e-3 + 0.2 + 0.01, rel=1e-9)
    # Verified by solving again with 499k at the + input: NG 2 -> 0.2 mV; Ib+ x 499k x 2 -
    # Ib- x 1M: |s_ib| = |-998k + 1M| = 2k -> 0.4 mV; |s_ios| = (998k + 1M)/2 = 999k ->
    # 19.98 mV; Ib flat for bipolar parts, so the worst case over 0..70 °C is 20.58 mV.
    assert info[0].data["worst_case_v"] == pytest.approx(0.2e-3 + 0.2 + 0.01, rel=1e-9)
    assert info[0].data["worst_case_after_v"] == pytest.approx(0.2e-3 + 0.4e-3 + 19.98e-3,
                                                               rel=1e-9)
    assert "falls from 210 mV to 20.6 mV" in info[0].message


def test_compensation_is_not_called_harmful_where_it_lowers_the_error():
    # A FET-input part whose Ios equals its Ib. The budget's worst case (the handbook
    # decomposition Ib+ = Ib + Ios/2, Ib- = Ib - Ios/2, each term at its worst sign):
    # with Rp = 9.1k, s_ib+ = -11 x 9.1k = -100.1k, s_ib- = 100k, so |s_ib| = 0.1k and
    # |s_ios| = 100.05k: 0.1k x 50p + 100.05k x 50p = 5.008 uV; with Rp replaced by a wire,
    # 100k x 50p + 50k x 50p = 7.5 uV. Replacing it would raise the error: no advice to.
    result = run("R1 GND m 10k", "R2 m out 100k", "R3 p GND 9.1k",
                 "U1 p=p m=m out=out Vos=2mV Ib=±50pA Ios=50pA Input=jfet")
    assert [f for f in result.findings if f.rule.startswith("bias-resistor")] == []


def test_compensation_harmful_for_bias_cancelled_input():
    # An internally bias-cancelled bipolar part: Ib ±1 nA (either sign), Ios 3 nA (the
    # currents do not track: their difference may exceed the average). Worked out with the
    # budget's worst case, NG = 11, Vos 25 uV (275 uV at the output), bipolar currents flat:
    # as drawn (Rp = 9.1k): |s_ib| = 0.1k -> 0.1 uV, |s_ios| = 100.05k -> 300.15 uV, total
    # 575.25 uV; Rp replaced by a wire: 100k x 1n + 50k x 3n = 250 uV, total 525 uV; Rp at
    # the balancing E96 9.09k: 0.01k x 1n + 99.995k x 3n, total 574.995 uV. The wire is best.
    result = run("R1 GND m 10k", "R2 m out 100k", "R3 p GND 9.1k",
                 "U1 p=p m=m out=out Vos=25uV Ib=±1nA Ios=3nA Input=bipolar-compensated")
    harmful = [f for f in result.findings if f.rule == "bias-resistor-harmful"]
    assert [f.severity for f in harmful] == ["warning"]
    assert harmful[0].suggestion.startswith("replace R3 with 0 Ω")
    assert harmful[0].data["worst_case_v"] == pytest.approx(575.25e-6, rel=1e-9)
    assert harmful[0].data["worst_case_after_v"] == pytest.approx(525e-6, rel=1e-9)
    assert "falls from 575 µV to 525 µV" in harmful[0].message
    assert [f for f in result.findings if f.rule == "bias-resistor-mismatch"] == []


def test_missing_parameters_reports_sensitivities():
    result = run("R1 GND m 10k", "R2 m out 100k", "U1 p=GND m=m out=out")
    assert rules(result) == [("missing-parameters", "warning", "U1")]
    stage = result.stages[0]
    assert stage.noise_gain == pytest.approx(11.0)
    assert stage.sensitivity.ib_minus == pytest.approx(100e3)
    assert stage.worst_case_own_v is None and stage.monte_carlo_v is None


def test_over_budget_uses_worst_case_over_temperature():
    # Worked out: NG = 11; Vos(70 °C) = 1 mV + 45 * 10 uV/°C = 1.45 mV -> 15.95 mV;
    # s_ib = 100k - 11 * 9.09k = 10 -> 0.8 uV; s_ios = (11 * 9.09k + 100k) / 2 = 99.995k
    # -> 0.99995 mV; total 16.9508 mV, over a 15 mV budget.
    result = run("R1 GND m 10k", "R2 m out 100k", "R3 p GND 9.09k",
                 f"U1 p=p m=m out=out {BIPOLAR} TCVos=10uV/°C DC_Budget=15mV")
    assert rules(result) == [("over-budget", "error", "U1")]
    stage = result.stages[0]
    assert stage.worst_temp_c == 70.0
    assert stage.worst_case_over_temp_v == pytest.approx(15.95e-3 + 0.8e-6 + 0.99995e-3,
                                                            rel=1e-9)
    assert stage.within_budget is False


def test_rules_can_be_switched_off():
    result = run("R1 GND m 10k", "R2 m out 100k", "U1 p=GND m=m out=out",
                 disabled_rules=("missing-parameters",))
    assert result.findings == []


@pytest.mark.parametrize(
    ("lines", "source_ohms", "suggested", "ib_error"),
    [
        # A unity follower fed through 10 kΩ from a connector.
        pytest.param(("J1 IN GND", "R1 IN p 10k"), "10 kΩ", "E96 10 kΩ, E24 10 kΩ", "8 mV",
                     id="through-a-resistor"),
        # A follower biased by a 10k/10k divider: the + input sees 10k || 10k = 5k
        # (Thevenin); nearest E96 4.99k, E24 5.1k (IEC 60063).
        pytest.param(("R1 VCC p 10k", "R2 p GND 10k"), "5 kΩ", "E96 4.99 kΩ, E24 5.1 kΩ",
                     "4 mV", id="divider-biased"),
        # An AC-coupled follower whose + input is returned to ground through 10 kΩ (its
        # only DC path: never to be replaced by a wire).
        pytest.param(("J1 IN GND", "C1 IN p 100n", "R1 p GND 10k"), "10 kΩ",
                     "E96 10 kΩ, E24 10 kΩ", "8 mV", id="bias-resistor"),
    ],
)
def test_follower_with_input_resistance_gets_a_feedback_resistor(lines, source_ohms, suggested,
                                                                  ib_error):
    # Guards: the E-series lookup is never asked for 0 Ω (a follower's - input sees no
    # resistance); this once crashed the whole audit. Common practice: a follower whose
    # + input sees R balances its bias currents with R from the output to the - input
    # (the gain stays 1). Worked out: the Ib term is Ib+ x R = 800 nA x R at the output,
    # the Vos term 1 mV; with R in the feedback only Ios x R remains (10 nA x R).
    result = run(*lines, "U1 p=p m=out out=out Vos=1mV Ib=800nA Ios=10nA Input=bipolar")
    (finding,) = result.findings
    assert (finding.rule, finding.severity) == ("bias-resistor-mismatch", "info")
    assert (f"the + input sees {source_ohms} and the - input 0 Ω: the mismatch leaves "
            f"{ib_error} of Ib error") in finding.message
    assert finding.suggestion.startswith(f"add {source_ohms} ({suggested}) in the feedback "
                                         "path, from the output to the - input")
    source = finding.data["resistance_plus_ohm"]
    assert finding.data["worst_case_v"] == pytest.approx(1e-3 + 800e-9 * source
                                                         + 10e-9 * source / 2)
    assert finding.data["worst_case_after_v"] < 0.25 * finding.data["worst_case_v"]


def test_follower_with_matching_feedback_resistor_is_quiet():
    # Common practice: R in the feedback of a follower equal to what its + input sees
    # cancels the Ib term down to Ios x R.
    result = run("J1 IN GND", "R1 IN p 10k", "R2 out m 10k", f"U1 p=p m=m out=out {BIPOLAR}")
    assert rules(result) == []
