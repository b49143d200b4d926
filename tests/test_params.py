"""Op-amp parameters over temperature: typical-only figures, input types, hot values.

Outside sources (named per test):
* linear offset drift, Vos(T) = Vos(25 °C) + TCVos·|T - 25 °C|: the definition of the
  drift coefficient as datasheets specify it (e.g. W. Jung, "Op Amp Applications
  Handbook", Analog Devices 2005, section 1.4 on offset drift; from memory);
* FET-input bias current doubling about every 10 °C, Ib(T) = Ib(25)·2^((T-25)/10):
  the handbook rule of thumb for junction leakage (Jung, same handbook, section 1.4 on
  bias current; Analog Devices tutorial MT-038; from memory), common practice;
* interpolation between the 25 °C and hot figures: numpy.interp on the currents (linear)
  or on their logarithms (exponential), computed independently here;
* the handbook inverting-stage error Vos(1 + Rf/Ri) + Ib- Rf (Franco, "Design with
  Operational Amplifiers and Analog Integrated Circuits", DC errors; from memory), with
  Ib- = Ib + Ios/2 at its worst sign.
"""

from __future__ import annotations

import numpy as np
import pytest

from schemcheck.audit import audit_netlist
from schemcheck.engine.params import at_temperature, from_library, resolve
from schemcheck.report.json import to_data
from schemcheck.settings import Settings

from .circuits import circuit

FOLLOWER = ("U1 p=GND m=out out=out value=OPX-1",)
INVERTING = ("R1 GND m 10k", "R2 m out 100k", "U1 p=GND m=m out=out value=OPX-1")


def audit(lines, library, **settings):
    result = audit_netlist(circuit(*lines), Settings(mc_samples=0, **settings), library)
    return to_data(result)


def test_typical_only_drift_is_used_and_marked():
    library = {"OPX-1": {"input": "bipolar", "vos": {"max": "2mV"}, "ib": "1nA", "ios": "1nA",
                         "tcvos": {"typ": "4uV/°C"}}}
    design = audit(FOLLOWER, library, temp_range=(0.0, 70.0))
    stage = design["stages"][0]
    # a follower on a grounded + input: the output is Vos alone (no resistance for Ib)
    # linear drift (handbook definition): 2 mV + 4 µV/°C x (70 - 25) °C = 2.18 mV
    assert stage["worst_case_over_temp_v"] == pytest.approx(2e-3 + 4e-6 * 45, rel=1e-12)
    assert stage["worst_temp_c"] == 70.0
    assert stage["params"]["source"]["tcvos"] == "library:OPX-1 (typical only)"
    assert stage["params"]["typical_only"] == ["tcvos"]
    assert ("typical only (no maximum given; the true worst case can be larger): TCVos of U1"
            in design["assumptions"])
    assert not any("no drift data" in line for line in design["assumptions"])


def test_max_wins_over_typ_and_typ_only_marks_only_that_figure():
    params = from_library("OPX-1", {"vos": {"typ": "1mV", "max": "3mV"},
                                    "ib": {"typ": "2nA"}, "ios": "1nA"})
    assert params.vos == pytest.approx(3e-3, rel=1e-12)
    assert params.typical["vos"] == pytest.approx(1e-3, rel=1e-12)
    assert params.ib == pytest.approx(2e-9, rel=1e-12)
    assert params.typical_only == ("ib",)


def test_ios_defaulted_from_a_typical_ib_is_typical_too():
    params = resolve(circuit("U1 p=GND m=out out=out value=OPX-1").parts[0],
                     {"OPX-1": {"vos": "1mV", "ib": {"typ": "2nA"}}})
    assert params.ios == params.ib and params.source["ios"] == "default (Ios = Ib)"
    assert params.typical_only == ("ib", "ios")


def test_a_field_replaces_a_typical_only_figure():
    part = circuit("U1 p=GND m=out out=out value=OPX-1 TCVos=6uV/°C").parts[0]
    params = resolve(part, {"OPX-1": {"vos": "1mV", "tcvos": {"typ": "4uV/°C"}}})
    assert params.tcvos == pytest.approx(6e-6, rel=1e-12) and params.typical_only == ()


@pytest.mark.parametrize("temp", [35.0, 50.0, 70.0, 85.0])
def test_jfet_bias_current_doubles_every_10c(temp):
    params = from_library("OPX-J", {"input": "jfet", "vos": "1mV", "ib": "20pA", "ios": "10pA"})
    at = at_temperature(params, temp, 85.0)
    # handbook rule of thumb: x2 every 10 °C
    assert at.ib == pytest.approx(20e-12 * 2 ** ((temp - 25) / 10), rel=1e-12)
    assert at.ios == pytest.approx(10e-12 * 2 ** ((temp - 25) / 10), rel=1e-12)


@pytest.mark.parametrize("temp", [-40.0, 0.0, 25.0, 50.0, 85.0, 125.0])
def test_chopper_bias_current_flat_without_hot_values(temp):
    # zero-drift inputs: the switching, not a junction leakage, sets the bias current;
    # without hot values it is taken as flat (never the FET doubling)
    params = from_library("OPX-Z", {"input": "chopper", "vos": "5uV", "ib": "300pA",
                                    "ios": "600pA", "tcvos": "50nV/°C"})
    at = at_temperature(params, temp, 125.0)
    assert (at.ib, at.ios) == (300e-12, 600e-12)
    assert at.vos == pytest.approx(5e-6 + 50e-9 * abs(temp - 25), rel=1e-12)


@pytest.mark.parametrize("temp", [40.0, 70.0, 100.0, 125.0])
def test_chopper_hot_values_interpolated_linearly(temp):
    params = from_library("OPX-Z", {"input": "chopper", "vos": "5uV", "ib": "300pA",
                                    "ios": "600pA", "ib_hot": "1.5nA", "ios_hot": "3nA",
                                    "t_hot": 125})
    at = at_temperature(params, temp, 85.0)
    assert at.ib == pytest.approx(np.interp(temp, [25, 125], [300e-12, 1.5e-9]), rel=1e-12)
    assert at.ios == pytest.approx(np.interp(temp, [25, 125], [600e-12, 3e-9]), rel=1e-12)


@pytest.mark.parametrize("temp", [40.0, 70.0, 85.0])
def test_cmos_hot_values_interpolated_exponentially(temp):
    params = from_library("OPX-C", {"input": "cmos", "vos": "1mV", "ib": "1pA", "ios": "1pA",
                                    "ib_hot": "50pA", "t_hot": 85})
    at = at_temperature(params, temp, 70.0)
    expected = np.exp(np.interp(temp, [25, 85], np.log([1e-12, 50e-12])))
    assert at.ib == pytest.approx(expected, rel=1e-12)


def test_chopper_stage_and_its_assumption_line():
    library = {"OPX-1": {"input": "chopper", "vos": "5uV", "ib": "300pA", "ios": "600pA",
                         "tcvos": "50nV/°C"}}
    design = audit(INVERTING, library, temp_range=(-40.0, 85.0))
    stage = design["stages"][0]
    # Franco's inverting-stage error at the worst end (-40 °C: 65 °C from 25 °C):
    # Vos(T)(1 + Rf/Ri) + (Ib + Ios/2) Rf, currents flat
    vos = 5e-6 + 50e-9 * 65
    assert stage["worst_case_over_temp_v"] == pytest.approx(
        vos * 11 + (300e-12 + 600e-12 / 2) * 100e3, rel=1e-9)
    assert ("chopper (zero-drift) inputs without hot values: bias currents taken as flat over "
            "temperature (set by the input switching, not doubling like a FET's) for U1"
            in design["assumptions"])


@pytest.mark.parametrize(("entry", "matched"), [
    pytest.param({"input": "bipolar", "ib": "10nA", "ios": "1nA"}, True, id="bipolar"),
    pytest.param({"input": "bipolar-compensated", "ib": "3nA", "ios": "3nA"}, False,
                 id="bipolar-compensated"),
    pytest.param({"input": "bipolar-compensated", "ib": "3nA", "ios": "0.3nA"}, False,
                 id="compensated-even-with-small-ios"),
    pytest.param({"input": "jfet", "ib": "10pA", "ios": "1pA"}, False, id="jfet"),
    pytest.param({"input": "cmos", "ib": "10pA", "ios": "1pA"}, False, id="cmos"),
    pytest.param({"input": "chopper", "ib": "100pA", "ios": "10pA"}, False, id="chopper"),
])
def test_which_inputs_have_matched_bias_currents(entry, matched):
    # Common practice: a compensation resistor cancels Ib only on plain bipolar inputs,
    # whose Ib+ and Ib- flow in one direction and track.
    params = from_library("OPX-1", {"vos": "1mV", **entry})
    assert params.bias_currents_matched is matched
    assert params.ib_either_sign is (entry["input"] == "bipolar-compensated")


def test_compensation_resistor_on_a_chopper_is_harmful():
    # A chopper whose Ios is twice its Ib (the input currents do not track). The budget's
    # worst case (handbook terms |s_vos| Vos + |s_ib| Ib + |s_ios| Ios, NG 11, currents flat):
    # with R3 = 47k, s_ib+ = -517k, s_ib- = 100k: 55u + 417k x 300p + 308.5k x 600p = 365 uV;
    # R3 replaced by a wire: 55u + 100k x 300p + 50k x 600p = 115 uV; R3 at the balancing
    # 9.09k: 55u + 0.01k x 300p + 99.995k x 600p = 115.0 uV, no better than the wire.
    library = {"OPX-1": {"input": "chopper", "vos": "5uV", "ib": "300pA", "ios": "600pA"}}
    design = audit(("R1 GND m 10k", "R2 m out 100k", "R3 p GND 47k",
                    "U1 p=p m=m out=out value=OPX-1"), library)
    harmful = [f for f in design["findings"] if f["rule"] == "bias-resistor-harmful"]
    assert len(harmful) == 1 and "the part is zero-drift (chopper)" in harmful[0]["message"]
    assert harmful[0]["data"]["worst_case_v"] == pytest.approx(
        55e-6 + 417e3 * 300e-12 + 308.5e3 * 600e-12, rel=1e-9)
    assert harmful[0]["data"]["worst_case_after_v"] == pytest.approx(115e-6, rel=1e-9)
    # With R3 = 9.1k the resistor neither helps nor harms by the same terms (115.06 uV as
    # drawn, 115 uV without): no advice either way.
    design = audit(("R1 GND m 10k", "R2 m out 100k", "R3 p GND 9.1k",
                    "U1 p=p m=m out=out value=OPX-1"), library)
    assert [f for f in design["findings"] if f["rule"].startswith("bias-resistor")] == []


@pytest.mark.parametrize(("words", "kind", "label"), [
    pytest.param("Dual JFET-input operational amplifier", "jfet", "symbol description",
                 id="jfet"),
    pytest.param("Zero-drift CMOS operational amplifier", "chopper", "symbol description",
                 id="zero-drift-beats-cmos"),
])
def test_input_type_from_the_symbol_description(words, kind, label):
    from schemcheck.model import Part, Pin

    part = Part("U1", 1, "OPX-1", "Lib:OPX-1", "/", {"Value": "OPX-1"},
                (Pin("3", "+", "input", 1),), description=words)
    params = resolve(part, {})
    assert params.input_type == kind and params.source["input_type"] == label


@pytest.mark.parametrize("temp", [50.0, 85.0, 125.0])
def test_a_falling_current_is_held_at_its_hot_value_past_t_hot(temp):
    # A bipolar input's bias current falling from 100 nA at 25 °C to 10 nA at T_hot 50 °C:
    # linear up to 50 °C, then held at 10 nA (common practice: a maximum is not
    # extrapolated below the last figure a datasheet gives; the straight line would reach
    # -8 nA at 55 °C and -350 nA at 125 °C, worked by hand). A rising one goes
    # on rising: 10 nA -> 20 nA at 50 °C gives 25 nA at 62.5 °C (linear, as before).
    falling = from_library("OPX-B", {"input": "bipolar", "vos": "1mV", "ib": "100nA",
                                     "ios": "10nA", "ib_hot": "10nA", "ios_hot": "1nA",
                                     "t_hot": 50})
    at = at_temperature(falling, temp, 125.0)
    assert (at.ib, at.ios) == pytest.approx((10e-9, 1e-9), rel=1e-12)
    rising = from_library("OPX-B", {"input": "bipolar", "vos": "1mV", "ib": "10nA",
                                    "ios": "1nA", "ib_hot": "20nA", "t_hot": 50})
    assert at_temperature(rising, 62.5, 125.0).ib == pytest.approx(25e-9, rel=1e-12)
