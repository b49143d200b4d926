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

#: What every analysis assumes, stated once per report; each design lists what is
#: particular to it (its settings, ideal sources, potentiometers, parts left open).
MODEL_ASSUMPTIONS = (
    "capacitors are open and inductors/ferrite beads short at DC; potentiometers are two "
    "resistors with the wiper at mid-travel; parts with no DC model are open",
    "op-amps are ideal (infinite open-loop gain) unless an Aol is given; Vos in series with "
    "the + input; Ib+ and Ib- flow into the pins",
    "rails, ground and nets driven from outside are 0 V sources (through their annotated "
    "source resistance): the analysis follows deviations only",
    "worst case: every source at its worst sign, |s_vos|·Vos + |s_ib|·Ib + |s_ios|·Ios with "
    "Ib+ = Ib + Ios/2 and Ib- = Ib - Ios/2, at nominal resistor values; RSS: the root of the "
    "sum of the squares of the same terms",
    "over temperature: the worst case at each end of the range, the larger; Vos grows by "
    "TCVos per °C away from 25 °C; without hot values, FET-input bias currents double every "
    "10 °C and bipolar ones are flat; hot values apply at the part's T_hot or else at the "
    "top of the range, and past T_hot a falling bias current is held at its hot value",
    "Monte Carlo: resistors uniform within tolerance; Vos, Ib, Ios Gaussian with the "
    "maximum as 3 sigma, truncated at the maximum, and random sign; 99.7 % bound at the "
    "worse end of the temperature range",
    "error split: the own Vos, Ib and Ios terms at 25 °C, each upstream stage's worst-case "
    "share (carried with the gain from its output) and the drift to the worse end of the "
    "range add up to the worst case over temperature",
    "part requirements: the largest Vos (with its drift), Ib and Ios over the range, each "
    "alone or with the budget split evenly between them, once upstream stages take their "
    "worst-case share at the worse end of the range",
    "referred-to-input figures divide the output error by the noise gain",
)

CAUTION = ("These figures come from the schematic as drawn and the part data given; they "
           "do not replace a review by a qualified engineer or the applicable standards.")


@dataclass(slots=True)
class Sensitivity:
    """The output's sensitivity to the stage's own error sources."""

    vos: float | None = None  # V/V: the noise gain
    ib_plus: float | None = None  # V/A
    ib_minus: float | None = None  # V/A
    ib: float | None = None  # V/A: ib_plus + ib_minus (Ib+ = Ib + Ios/2, Ib- = Ib - Ios/2)
    ios: float | None = None  # V/A: (ib_plus - ib_minus) / 2


@dataclass(slots=True)
class Estimate:
    """Figures filled from class values (``--estimate-missing``)."""

    class_: str = field(default="", metadata={"key": "class"})  # the input class used
    figures: list[str] = field(default_factory=list)


@dataclass(slots=True)
class LibraryMatch:
    """How a parts-library entry was found for a part."""

    entry: str = ""
    by: str = ""  # value, part-number, lib_id or family
    field: str = ""  # Value, the part-number field, or lib_id
    key: str = ""
    matched: str = ""  # the entry name or alias met
    library: str | None = None


@dataclass(slots=True)
class AmbiguousMatch:
    """No entry used because several fit."""

    key: str = ""
    candidates: list[str] = field(default_factory=list)
    reason: str = ""


@dataclass(slots=True)
class LibrarySource:
    """One parts library read for a design."""

    origin: str = ""  # user, project or command line
    path: str = ""
    entries: int = 0


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
    typical_only: list[str] = field(default_factory=list)  # figures given only as typical
    estimate: Estimate | None = None
    match: LibraryMatch | None = None
    ambiguous_match: AmbiguousMatch | None = None


@dataclass(slots=True)
class Contributor:
    """One op-amp whose error reaches this stage's output, and how much of it does."""

    ref: str
    unit: int | None
    worst_case_v: float | None
    id: str = ""  # the stage identifier (``U4/1``)


@dataclass(slots=True)
class ErrorSplit:
    """Where the stage's worst case over temperature comes from, volts.

    ``vos_v + ib_v + ios_v`` is the own worst case at 25 °C; adding ``upstream_v`` (the
    upstream stages' shares, listed under ``upstream``) gives the total at 25 °C, and
    adding ``drift_v`` the worst case at ``worst_temp_c``. ``ib_plus_v`` and ``ib_minus_v``
    are what each bias current alone gives (signed, Ib+ = Ib- = Ib); their sum is the Ib
    term before its magnitude is taken. None where a figure is unknown."""

    vos_v: float | None = None
    ib_v: float | None = None
    ios_v: float | None = None
    ib_plus_v: float | None = None
    ib_minus_v: float | None = None
    upstream_v: float | None = None
    drift_v: float | None = None
    worst_temp_c: float | None = None


@dataclass(slots=True)
class Upstream:
    """A stage feeding this one: the gain from its output to this output (V/V) and its
    worst-case share of this output's error at 25 °C (V)."""

    id: str
    ref: str
    unit: int | None
    channel: int | None
    gain: float | None
    worst_case_v: float | None


@dataclass(slots=True)
class Compensation:
    """The bias-current compensation at the + input: with matched bias currents (bipolar
    inputs without internal cancellation) the Ib term vanishes when the + input sees what
    the - input sees.

    ``resistor`` is the one resistor from the + input to a rail, if that is all the + input
    has; ``ideal_ohm`` is the value it should have, or (without one) the resistance to add
    in series with the + input; None where the + input already sees more than the - input
    and no resistor there can be lowered: then ``minus_ohm`` is the resistance to add in
    series with the - input (for a follower, in the feedback path) instead. ``useful``
    False for parts whose bias currents do not track (the resistor cancels little; whether
    it adds error is a finding, solved again), None where the part is not known."""

    resistor: str | None = None
    resistor_ohm: float | None = None
    ideal_ohm: float | None = None
    useful: bool | None = None
    minus_ohm: float | None = None


@dataclass(slots=True)
class PartRequirements:
    """The largest own Vos, Ib and Ios that keep the stage within its budget, each alone and
    with the budget left after upstream stages split evenly between the sources that reach
    the output. Limits are maxima over the temperature range (Vos with its drift over
    ``delta_t_c``); None: that source does not reach the output (no limit). Volts, amperes."""

    budget_v: float
    upstream_v: float | None  # upstream worst case at the worse end; None: not all known
    upstream_unknown: list[str]  # stages feeding this one whose share is unknown
    available_v: float  # budget minus the known upstream share (negative: already over)
    delta_t_c: float
    vos_alone_v: float | None
    ib_alone_a: float | None
    ios_alone_a: float | None
    vos_split_v: float | None
    ib_split_a: float | None
    ios_split_a: float | None
    part_vos_v: float | None  # the part's own figures at their largest over the range
    part_ib_a: float | None
    part_ios_a: float | None
    part_within: bool | None  # the part's own worst case fits in what is available


@dataclass(slots=True)
class MissingPart:
    """One part number without Vos, Ib or Ios, and the stages using it."""

    part: str
    missing: list[str]
    units: int
    stages: list[str] = field(default_factory=list)


@dataclass(slots=True)
class MissingAcross:
    """One part number without data, across the designs of a report."""

    part: str
    missing: list[str]
    units: int
    designs: list[str] = field(default_factory=list)


#: Field metadata: a field with a default that a report read back must still have.
REQUIRED = {"required": True}
#: Field metadata: the key is left out of the JSON when the value is None.
OMIT_WHEN_NONE = {"omit_when_none": True}


@dataclass(slots=True)
class TemperatureCurve:
    """The stage's output error at each of ``temps_c`` (°C) across the range, volts.

    ``worst_case_v`` and ``rss_v`` are computed at every temperature (the worst case meets
    ``worst_case_over_temp_v`` at the worse end). The Monte Carlo is sampled at
    ``monte_carlo_temp_c`` only; ``monte_carlo_v`` carries its 99.7 % bound to the other
    temperatures by ``monte_carlo_method``: "rss-scaled", in proportion to the RSS (exact
    for Gaussian sources; the resistors' spread kept in proportion). None without a Monte
    Carlo."""

    temps_c: list[float]
    worst_case_v: list[float]
    rss_v: list[float]
    monte_carlo_v: list[float] | None = None
    monte_carlo_temp_c: float | None = None
    monte_carlo_method: str | None = None


@dataclass(slots=True)
class Histogram:
    """The Monte Carlo's signed output errors, binned: ``counts[i]`` of the ``samples``
    lie between ``edges_v[i]`` and ``edges_v[i + 1]`` (volts), sampled at ``temp_c`` (°C);
    ``bound_v`` is the 99.7 % bound of their magnitude (the stage's ``monte_carlo_v``)."""

    edges_v: list[float]
    counts: list[int]
    samples: int
    bound_v: float | None
    temp_c: float | None


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
    id: str = ""  # the stage identifier every output uses (``U4/2``)
    split: ErrorSplit | None = None
    upstream: list[Upstream] = field(default_factory=list)
    compensation: Compensation | None = None
    requirements: PartRequirements | None = None
    #: the lowest and highest noise gain over the travel of the potentiometers the stage
    #: depends on (V/V), or None
    noise_gain_range: list[float] | None = None
    #: the potentiometer setting the budget is taken at (the worse end), if not mid-travel
    budget_at: str | None = None
    #: amplifiers not analysed whose outputs feed this stage: its totals leave them out
    excludes: list[str] = field(default_factory=list)
    #: stages whose outputs reach this stage's inputs through resistors alone (chain view)
    driven_by: list[str] = field(default_factory=list)
    #: kept when charts are asked for (``--format html``, ``--charts``)
    over_temperature: TemperatureCurve | None = field(default=None, metadata=OMIT_WHEN_NONE)
    histogram: Histogram | None = field(default=None, metadata=OMIT_WHEN_NONE)
    #: Monte Carlo samples behind monte_carlo_v (fewer than asked where the design was too
    #: large for them; the assumptions say so)
    monte_carlo_samples: int | None = None


@dataclass(slots=True)
class NotAnalysed:
    """An amplifier found but not analysed, and why."""

    ref: str
    unit: int | None
    sheet: str
    value: str
    reason: str
    id: str = ""
    channel: int | None = None
    #: what the unit is wired as where that is known ("comparator (open loop)", "spare")
    topology: str = ""


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
    #: what the reader noticed (a reference used twice, a child sheet outside the root's
    #: folder); the figures are computed all the same
    warnings: list[str] = field(default_factory=list)
    caution: str = CAUTION
    missing_parameters: list[MissingPart] = field(default_factory=list)
    parts_libraries: list[LibrarySource] = field(default_factory=list)


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


@dataclass(slots=True)
class Report:
    """One audit run over any number of designs."""

    tool: Tool = field(default_factory=Tool)
    designs: list[DesignResult] = field(default_factory=list, metadata=REQUIRED)
    stats: dict[str, int] = field(default_factory=dict)
    warnings: list[str] = field(default_factory=list)
    #: the model's assumptions, the same for every design (each design lists its own)
    assumptions: list[str] = field(default_factory=lambda: list(MODEL_ASSUMPTIONS))
    missing_parameters: list[MissingAcross] = field(default_factory=list)
    shard: Shard | None = field(default=None, metadata=OMIT_WHEN_NONE)


def missing_across(designs: list[dict[str, Any]]) -> list[MissingAcross]:
    """The serialised designs' ``missing_parameters`` merged per part number."""
    merged: dict[tuple[str, tuple[str, ...]], MissingAcross] = {}
    for design in designs:
        for item in design.get("missing_parameters") or ():
            key = (item["part"], tuple(item["missing"]))
            entry = merged.setdefault(key, MissingAcross(item["part"], list(item["missing"]),
                                                         0, []))
            entry.units += item["units"]
            if design["file"] not in entry.designs:
                entry.designs.append(design["file"])
    return sorted(merged.values(), key=lambda m: (-m.units, m.part))
