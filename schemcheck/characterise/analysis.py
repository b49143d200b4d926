"""Bench characterisation: test-loop readings -> op-amp DC parameters (pure, numpy).

The loop: the device under test (DUT) is held at balance by an auxiliary integrator
that drives the DUT's + input through a divider of loop gain G = 1 + R2/R1 (tap
buffered); a resistor Rs in series with each DUT input can be shorted by a switch.
With Vos the input difference V(+) - V(-) at balance and Ib+ / Ib- flowing into the
pins, the auxiliary output reads:

* both shorted:        V1 = G Vos
* Rs in + input only:  V2 = G (Vos + Ib+ Rs)
* Rs in - input only:  V3 = G (Vos - Ib- Rs)
* both in circuit:     V4 = G (Vos + (Ib+ - Ib-) Rs)   (optional, a direct Ios reading)

so Vos = V1/G, Ib+ = (V2 - V1)/(G Rs), Ib- = (V1 - V3)/(G Rs), Ib = (Ib+ + Ib-)/2,
Ios = Ib+ - Ib-; signs come out as measured.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

STEP_COUNTS = 3  # a step within this many meter resolutions is not readable
TARGET_COUNTS = 10  # a readable step, for the suggested Rs
SATURATION = 0.98  # a reading within 2 % of the rail counts as saturated


@dataclass(frozen=True, slots=True)
class Reading:
    """One row of the measurement file (volts, ohms, °C)."""

    row: int
    sample: str
    temp_c: float
    v1: float
    v2: float
    v3: float
    v4: float | None
    gain: float
    rs: float
    resolution: float
    rail: float | None = None


@dataclass(frozen=True, slots=True)
class Extracted:
    sample: str
    temp_c: float
    vos: float
    ib_plus: float
    ib_minus: float
    ib: float
    ios: float
    ios_direct: float | None

    def to_dict(self) -> dict:
        return {"sample": self.sample, "temp_c": self.temp_c, "vos": self.vos,
                "ib_plus": self.ib_plus, "ib_minus": self.ib_minus, "ib": self.ib,
                "ios": self.ios, "ios_direct": self.ios_direct}


@dataclass(slots=True)
class Problem:
    row: int
    sample: str
    check: str
    message: str

    def to_dict(self) -> dict:
        return {"row": self.row, "sample": self.sample, "check": self.check,
                "message": self.message}


def extract(r: Reading) -> Extracted:
    g, rs = r.gain, r.rs
    ib_plus = (r.v2 - r.v1) / (g * rs)
    ib_minus = (r.v1 - r.v3) / (g * rs)
    direct = (r.v4 - r.v1) / (g * rs) if r.v4 is not None else None
    return Extracted(r.sample, r.temp_c, r.v1 / g, ib_plus, ib_minus, (ib_plus + ib_minus) / 2,
                     ib_plus - ib_minus, direct)


def _ohms(value: float) -> str:
    from schemcheck.units import format_si

    return format_si(value, "Ω")


def check(r: Reading) -> list[Problem]:
    """Every problem of one reading (saturation, unreadable steps, inconsistency)."""
    problems = []
    if r.rail is not None and r.rail > 0:
        for name in ("v1", "v2", "v3", "v4"):
            value = getattr(r, name)
            if value is not None and abs(value) >= SATURATION * r.rail:
                problems.append(Problem(r.row, r.sample, "saturated",
                                        f"{name} = {value:g} V is at or beyond the auxiliary "
                                        f"amplifier's rail ({r.rail:g} V): the loop is saturated "
                                        "and the reading means nothing; lower the loop gain or Rs"))
    for name, step in (("|V2 - V1|", r.v2 - r.v1), ("|V1 - V3|", r.v1 - r.v3)):
        counts = abs(step) / r.resolution
        if counts <= STEP_COUNTS:
            factor = TARGET_COUNTS / max(counts, 1.0)
            needed = r.rs * factor
            problems.append(Problem(r.row, r.sample, "step-too-small",
                                    f"{name} = {abs(step):.3g} V is within {STEP_COUNTS} meter "
                                    f"resolutions ({r.resolution:g} V): Rs = {_ohms(r.rs)} is too "
                                    f"small for this part's bias current; Rs of at least "
                                    f"{_ohms(needed)} would give a readable step of "
                                    f"{TARGET_COUNTS} counts"))
    if r.v4 is not None:
        expected = r.v2 + r.v3 - r.v1
        allowed = 10 * r.resolution + 0.05 * abs(r.v2 - r.v3)
        if abs(r.v4 - expected) > allowed:
            problems.append(Problem(r.row, r.sample, "inconsistent",
                                    f"V4 = {r.v4:g} V is far from V2 + V3 - V1 = {expected:g} V: "
                                    "the readings contradict each other (a switch state or a "
                                    "reading is wrong)"))
    return problems


@dataclass(slots=True)
class Fit:
    """Temperature behaviour of one quantity over the readings."""

    kind: str  # "linear", "flat", "exponential", "single-temperature"
    slope: float | None = None  # per °C (TCVos)
    doubling_c: float | None = None  # exponential: °C per doubling
    residual: float | None = None  # RMS residual (V for Vos; relative for currents)
    per_sample: dict[str, float] = field(default_factory=dict)

    def to_dict(self) -> dict:
        return {"kind": self.kind, "slope": self.slope, "doubling_c": self.doubling_c,
                "residual": self.residual, "per_sample": dict(self.per_sample)}


def _stats(values: list[float]) -> dict:
    arr = np.array(values, dtype=float)
    return {"mean": float(arr.mean()), "std": float(arr.std(ddof=1)) if len(arr) > 1 else 0.0,
            "max_abs": float(np.abs(arr).max()), "count": int(arr.size)}


def fit_drift(results: list[Extracted]) -> Fit:
    """TCVos: least-squares slope of Vos against temperature, per sample and overall."""
    temps = sorted({r.temp_c for r in results})
    if len(temps) < 2:
        return Fit("single-temperature")
    t = np.array([r.temp_c for r in results])
    v = np.array([r.vos for r in results])
    per_sample = {}
    for sample in sorted({r.sample for r in results}):
        rows = [r for r in results if r.sample == sample]
        if len({r.temp_c for r in rows}) >= 2:
            slope, _ = np.polyfit([r.temp_c for r in rows], [r.vos for r in rows], 1)
            per_sample[sample] = float(slope)
    residual: list[float] = []
    for sample, slope in per_sample.items():
        rows = [r for r in results if r.sample == sample]
        ts = np.array([r.temp_c for r in rows])
        vs = np.array([r.vos for r in rows])
        intercept = float(np.mean(vs - slope * ts))
        residual.extend(vs - (slope * ts + intercept))
    slope_all = float(np.mean(list(per_sample.values()))) if per_sample else float(
        np.polyfit(t, v, 1)[0])
    rms = float(np.sqrt(np.mean(np.square(residual)))) if residual else None
    return Fit("linear", slope=slope_all, residual=rms, per_sample=per_sample)


def fit_bias(results: list[Extracted]) -> Fit:
    """Flat or exponential growth of |Ib| with temperature; the doubling interval (°C)
    by least squares on log2 |Ib|, with the relative RMS residual of the chosen model."""
    temps = sorted({r.temp_c for r in results})
    if len(temps) < 2:
        return Fit("single-temperature")
    t = np.array([r.temp_c for r in results])
    ib = np.abs(np.array([r.ib for r in results]))
    if np.any(ib <= 0):
        return Fit("flat", residual=None)
    slope, intercept = np.polyfit(t, np.log2(ib), 1)
    model = 2.0 ** (slope * t + intercept)
    exp_residual = float(np.sqrt(np.mean(np.square(ib / model - 1.0))))
    flat_residual = float(np.sqrt(np.mean(np.square(ib / ib.mean() - 1.0))))
    doubling = 1.0 / slope if slope > 0 else math.inf
    if slope > 0 and doubling < 100.0 and exp_residual < 0.5 * flat_residual:
        return Fit("exponential", doubling_c=float(doubling), residual=exp_residual)
    return Fit("flat", residual=flat_residual)


def summarise(results: list[Extracted]) -> dict:
    """Statistics over samples at each temperature, and the temperature fits."""
    by_temp: dict[float, list[Extracted]] = {}
    for r in results:
        by_temp.setdefault(r.temp_c, []).append(r)
    temperatures = []
    for temp in sorted(by_temp):
        rows = by_temp[temp]
        temperatures.append({"temp_c": temp, **{
            name: _stats([getattr(r, name) for r in rows])
            for name in ("vos", "ib_plus", "ib_minus", "ib", "ios")}})
    return {"temperatures": temperatures, "tcvos": fit_drift(results).to_dict(),
            "bias_current": fit_bias(results).to_dict()}


RULE = ("typical = mean of the magnitudes over samples; maximum = the larger of the "
        "largest magnitude seen and mean + 3 standard deviations")


def _typ_max(values: list[float]) -> tuple[float, float]:
    mags = np.abs(np.array(values, dtype=float))
    mean = float(mags.mean())
    std = float(mags.std(ddof=1)) if len(mags) > 1 else 0.0
    return mean, max(float(mags.max()), mean + 3 * std)


def library_values(results: list[Extracted]) -> dict:
    """Parts-library values from the readings (see :data:`RULE`), SI floats."""
    temps = sorted({r.temp_c for r in results})
    base = min(temps, key=lambda t: abs(t - 25.0))
    at_base = [r for r in results if r.temp_c == base]
    out: dict = {"base_temp_c": base}
    for name in ("vos", "ib", "ios"):
        out[name] = _typ_max([getattr(r, name) for r in at_base])
    signs = {math.copysign(1, v) for r in results for v in (r.ib_plus, r.ib_minus) if v}
    out["ib_either_sign"] = len(signs) > 1
    drift = fit_drift(results)
    if drift.kind == "linear" and drift.per_sample:
        out["tcvos"] = _typ_max(list(drift.per_sample.values()))
    if len(temps) >= 2 and temps[-1] > base:
        hot = [r for r in results if r.temp_c == temps[-1]]
        out["ib_hot"] = _typ_max([r.ib for r in hot])
        out["ios_hot"] = _typ_max([r.ios for r in hot])
        out["t_hot"] = temps[-1]
    return out
