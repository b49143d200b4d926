"""The results model: what an audit says about one stage, one design and one report.

Typed, frozen-in-shape objects built by :func:`schemcheck.audit.audit_netlist` and the
batch edge; :mod:`schemcheck.report.json` serialises them (field order is the JSON key
order) and every other output format is rendered from that serialised form. The service's
marshmallow schemas describe this same model (``tests/test_results.py`` proves they agree
field for field). All quantities are SI floats: volts, amperes, ohms, °C.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

from schemcheck.model import Finding

CAUTION = ("These figures come from the schematic as drawn and the part data given; they "
           "do not replace a review by a qualified engineer or the applicable standards.")


@dataclass(slots=True)
class Sensitivity:
    """The output's sensitivity to the stage's own error sources."""

    vos: float | None = None  # V/V: the noise gain
    ib_plus: float | None = None  # V/A
    ib_minus: float | None = None  # V/A


@dataclass(slots=True)
class ParamsUsed:
    """The op-amp figures the budget used, each with where it came from (``source``)."""

    vos: float | None = None  # V
    ib: float | None = None  # A
    ios: float | None = None  # A
    tcvos: float | None = None  # V/°C
    ib_hot: float | None = None  # A
    ios_hot: float | None = None  # A
    t_hot: float | None = None  # °C
    input: str = "unknown"
    aol: float | None = None  # V/V
    ib_either_sign: bool = False
    typical: dict[str, float] = field(default_factory=dict)
    library_entry: str | None = None
    source: dict[str, str] = field(default_factory=dict)


@dataclass(slots=True)
class Contributor:
    """One op-amp whose error reaches this stage's output, and how much of it does."""

    ref: str
    unit: int | None
    worst_case_v: float | None


#: Field metadata: a field with a default that a report read back must still have.
REQUIRED = {"required": True}


@dataclass(slots=True)
class StageResult:
    """One op-amp stage: its network, its sensitivities and its budget."""

    ref: str
    unit: int | None
    channel: int | None
    sheet: str
    value: str
    topology: str
    status: str
    nets: dict[str, str]
    noise_gain: float | None
    sensitivity: Sensitivity
    resistance_plus_ohm: float | None
    resistance_minus_ohm: float | None
    params: ParamsUsed
    worst_case_own_v: float | None
    worst_case_total_v: float | None
    rss_own_v: float | None
    rss_v: float | None
    worst_case_over_temp_v: float | None
    worst_temp_c: float | None
    monte_carlo_v: float | None
    rti_v: float | None
    budget_v: float | None
    within_budget: bool | None
    depends_on_undefined_output: bool
    contributors: list[Contributor] = field(default_factory=list)


@dataclass(slots=True)
class NotAnalysed:
    """An amplifier found but not analysed, and why."""

    ref: str
    unit: int | None
    sheet: str
    value: str
    reason: str


@dataclass(slots=True)
class DesignResult:
    """Everything the audit says about one design."""

    file: str
    stages: list[StageResult] = field(default_factory=list, metadata=REQUIRED)
    findings: list[Finding] = field(default_factory=list, metadata=REQUIRED)
    assumptions: list[str] = field(default_factory=list, metadata=REQUIRED)
    not_analysed: list[NotAnalysed] = field(default_factory=list)
    settings: dict[str, Any] = field(default_factory=dict)
    errors: list[str] = field(default_factory=list)
    caution: str = CAUTION


@dataclass(slots=True)
class Tool:
    name: str = "schemcheck"
    version: str = ""


@dataclass(slots=True)
class Shard:
    """Which part of a batch split with ``--shard K/N`` a report holds."""

    index: int  # K
    count: int  # N
    total: int  # designs in the whole batch
    positions: list[int] = field(default_factory=list)  # each design's place in the batch


#: Field metadata: the key is left out of the JSON when the value is None.
OMIT_WHEN_NONE = {"omit_when_none": True}


@dataclass(slots=True)
class Report:
    """One audit run over any number of designs."""

    tool: Tool = field(default_factory=Tool)
    designs: list[DesignResult] = field(default_factory=list, metadata=REQUIRED)
    stats: dict[str, int] = field(default_factory=dict)
    warnings: list[str] = field(default_factory=list)
    shard: Shard | None = field(default=None, metadata=OMIT_WHEN_NONE)
