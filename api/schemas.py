"""marshmallow schemas of every request and response.

The report schemas describe the library's results model (:mod:`schemcheck.results`),
field for field (``tests/test_results.py`` proves they agree); the library serialises the
model itself and never imports this package."""

from __future__ import annotations

from marshmallow import RAISE, Schema, fields, validate

SEVERITIES = ("info", "warning", "error")


def _num(**kw):
    return fields.Float(allow_nan=False, allow_none=True, **kw)


class FindingSchema(Schema):
    rule = fields.String(required=True)
    severity = fields.String(required=True, validate=validate.OneOf(SEVERITIES))
    ref = fields.String(required=True)
    unit = fields.Integer(allow_none=True)
    message = fields.String(required=True)
    suggestion = fields.String()
    sheet = fields.String()
    file = fields.String()
    data = fields.Dict(keys=fields.String(), values=fields.Raw(allow_none=True),
                       metadata={"description": "The finding's numbers, SI units"})
    channel = fields.Integer(allow_none=True, metadata={
        "description": "The amplifier within the unit where one unit holds several"})
    stage = fields.String(metadata={"description": "The stage identifier, like U4/2"})
    line = fields.Integer(allow_none=True, metadata={"description": "1-based line in file"})
    column = fields.Integer(allow_none=True, metadata={"description": "1-based column"})


class SensitivitySchema(Schema):
    vos = _num(metadata={"description": "V/V: the noise gain"})
    ib_plus = _num(metadata={"description": "V/A"})
    ib_minus = _num(metadata={"description": "V/A"})
    ib = _num(metadata={"description": "V/A: ib_plus + ib_minus"})
    ios = _num(metadata={"description": "V/A: (ib_plus - ib_minus) / 2"})


class EstimateSchema(Schema):
    class_ = fields.String(data_key="class", attribute="class",
                           metadata={"description": "input class whose values were used"})
    figures = fields.List(fields.String())


class MatchSchema(Schema):
    entry = fields.String()
    by = fields.String(metadata={"description": "value, part-number, lib_id or family"})
    field = fields.String(metadata={"description": "Value, the part-number field, or lib_id"})
    key = fields.String()
    matched = fields.String(metadata={"description": "the entry name or alias met"})
    library = fields.String(allow_none=True)


class AmbiguousMatchSchema(Schema):
    key = fields.String()
    candidates = fields.List(fields.String())
    reason = fields.String()


class LibrarySourceSchema(Schema):
    origin = fields.String(metadata={"description": "user, project or command line"})
    path = fields.String()
    entries = fields.Integer()


class ParamsSchema(Schema):
    vos = _num()
    ib = _num()
    ios = _num()
    tcvos = _num()
    ib_hot = _num()
    ios_hot = _num()
    t_hot = _num()
    input = fields.String()
    aol = _num()
    ib_either_sign = fields.Boolean()
    typical = fields.Dict(keys=fields.String(), values=fields.Float(allow_nan=False))
    library_entry = fields.String(allow_none=True)
    source = fields.Dict(keys=fields.String(), values=fields.String())
    typical_only = fields.List(fields.String(), metadata={
        "description": "figures for which only a typical value was given (and used)"})
    estimate = fields.Nested(EstimateSchema, allow_none=True)
    match = fields.Nested(MatchSchema, allow_none=True)
    ambiguous_match = fields.Nested(AmbiguousMatchSchema, allow_none=True)


class ContributorSchema(Schema):
    ref = fields.String()
    unit = fields.Integer(allow_none=True)
    worst_case_v = _num()
    id = fields.String()


class ErrorSplitSchema(Schema):
    """Where the worst case over temperature comes from, volts."""

    vos_v = _num()
    ib_v = _num()
    ios_v = _num()
    ib_plus_v = _num(metadata={"description": "What Ib+ alone gives (signed)"})
    ib_minus_v = _num(metadata={"description": "What Ib- alone gives (signed)"})
    upstream_v = _num()
    drift_v = _num()
    worst_temp_c = _num()


class UpstreamSchema(Schema):
    id = fields.String()
    ref = fields.String()
    unit = fields.Integer(allow_none=True)
    channel = fields.Integer(allow_none=True)
    gain = _num(metadata={"description": "V/V from that stage's output to this one"})
    worst_case_v = _num()


class CompensationSchema(Schema):
    resistor = fields.String(allow_none=True)
    resistor_ohm = _num()
    ideal_ohm = _num()
    useful = fields.Boolean(allow_none=True)
    minus_ohm = _num(metadata={
        "description": "ohms to add in series with the - input (a follower: in the feedback "
                       "path) where the + input sees more and cannot be lowered"})


class PartRequirementsSchema(Schema):
    """The largest own Vos, Ib, Ios keeping the stage within its budget (V, A)."""

    budget_v = _num()
    upstream_v = _num()
    upstream_unknown = fields.List(fields.String())
    available_v = _num()
    delta_t_c = _num()
    vos_alone_v = _num()
    ib_alone_a = _num()
    ios_alone_a = _num()
    vos_split_v = _num()
    ib_split_a = _num()
    ios_split_a = _num()
    part_vos_v = _num()
    part_ib_a = _num()
    part_ios_a = _num()
    part_within = fields.Boolean(allow_none=True)


class MissingPartSchema(Schema):
    part = fields.String()
    missing = fields.List(fields.String())
    units = fields.Integer()
    stages = fields.List(fields.String())


class MissingAcrossSchema(Schema):
    part = fields.String()
    missing = fields.List(fields.String())
    units = fields.Integer()
    designs = fields.List(fields.String())


class TemperatureCurveSchema(Schema):
    """The stage's output error across the temperature range, volts at each temperature."""

    temps_c = fields.List(fields.Float(allow_nan=False), required=True)
    worst_case_v = fields.List(fields.Float(allow_nan=False), required=True)
    rss_v = fields.List(fields.Float(allow_nan=False), required=True)
    monte_carlo_v = fields.List(fields.Float(allow_nan=False), allow_none=True, metadata={
        "description": "The Monte Carlo's 99.7 % bound, sampled at monte_carlo_temp_c and "
                       "carried to each temperature by monte_carlo_method"})
    monte_carlo_temp_c = _num()
    monte_carlo_method = fields.String(allow_none=True, metadata={
        "description": "rss-scaled: in proportion to the RSS at each temperature"})


class HistogramSchema(Schema):
    """The Monte Carlo's signed output errors binned (volts)."""

    edges_v = fields.List(fields.Float(allow_nan=False), required=True)
    counts = fields.List(fields.Integer(), required=True)
    samples = fields.Integer()
    bound_v = _num(metadata={"description": "The 99.7 % bound of the magnitude"})
    temp_c = _num()


class StageSchema(Schema):
    ref = fields.String(required=True)
    unit = fields.Integer(allow_none=True)
    channel = fields.Integer(allow_none=True)
    sheet = fields.String()
    value = fields.String()
    topology = fields.String()
    status = fields.String()
    nets = fields.Dict(keys=fields.String(), values=fields.String())
    noise_gain = _num()
    sensitivity = fields.Nested(SensitivitySchema)
    resistance_plus_ohm = _num()
    resistance_minus_ohm = _num()
    params = fields.Nested(ParamsSchema)
    worst_case_own_v = _num()
    worst_case_total_v = _num()
    rss_own_v = _num()
    rss_v = _num()
    worst_case_over_temp_v = _num()
    worst_temp_c = _num()
    monte_carlo_v = _num()
    rti_v = _num()
    budget_v = _num()
    within_budget = fields.Boolean(allow_none=True)
    depends_on_undefined_output = fields.Boolean()
    contributors = fields.List(fields.Nested(ContributorSchema))
    id = fields.String(metadata={"description": "The stage identifier, like U4/2"})
    split = fields.Nested(ErrorSplitSchema, allow_none=True)
    upstream = fields.List(fields.Nested(UpstreamSchema))
    compensation = fields.Nested(CompensationSchema, allow_none=True)
    requirements = fields.Nested(PartRequirementsSchema, allow_none=True)
    noise_gain_range = fields.List(_num(), allow_none=True, metadata={
        "description": "V/V: the lowest and highest noise gain over the travel of the "
                       "potentiometers the stage depends on (null: none)"})
    budget_at = fields.String(allow_none=True, metadata={
        "description": "the potentiometer setting the error budget is taken at (the worse "
                       "end), where it is not mid-travel"})
    excludes = fields.List(fields.String(), metadata={
        "description": "amplifiers that are not analysed whose outputs feed this stage: its "
                       "totals leave out their error"})
    driven_by = fields.List(fields.String(), metadata={
        "description": "Stages whose outputs reach this stage's inputs through resistors"})
    over_temperature = fields.Nested(TemperatureCurveSchema, allow_none=True, metadata={
        "description": "Present when charts were asked for"})
    histogram = fields.Nested(HistogramSchema, allow_none=True, metadata={
        "description": "Present when charts were asked for and the Monte Carlo ran"})
    monte_carlo_samples = fields.Integer(allow_none=True, metadata={
        "description": "Monte Carlo samples behind monte_carlo_v (fewer than asked where "
                       "the design was too large for them; the assumptions say so)"})


class NotAnalysedSchema(Schema):
    ref = fields.String()
    unit = fields.Integer(allow_none=True)
    sheet = fields.String()
    value = fields.String()
    reason = fields.String()
    id = fields.String()
    channel = fields.Integer(allow_none=True)
    topology = fields.String(metadata={
        "description": "what the unit is wired as, where known: comparator (open loop), "
                       "spare, ..."})


class DesignSchema(Schema):
    file = fields.String(required=True)
    stages = fields.List(fields.Nested(StageSchema), required=True)
    findings = fields.List(fields.Nested(FindingSchema), required=True)
    assumptions = fields.List(fields.String(), required=True)
    not_analysed = fields.List(fields.Nested(NotAnalysedSchema))
    settings = fields.Dict(keys=fields.String(), values=fields.Raw(allow_none=True))
    errors = fields.List(fields.String())
    warnings = fields.List(fields.String(), metadata={
        "description": "What the reader noticed (a reference used twice, a child sheet "
                       "outside the root's folder); the figures are computed all the same"})
    caution = fields.String()
    missing_parameters = fields.List(fields.Nested(MissingPartSchema))
    parts_libraries = fields.List(fields.Nested(LibrarySourceSchema))


class ToolSchema(Schema):
    name = fields.String()
    version = fields.String()


class ShardSchema(Schema):
    index = fields.Integer(required=True, validate=validate.Range(min=1),
                           metadata={"description": "K of --shard K/N"})
    count = fields.Integer(required=True, validate=validate.Range(min=1),
                           metadata={"description": "N of --shard K/N"})
    total = fields.Integer(required=True, validate=validate.Range(min=0),
                           metadata={"description": "designs in the whole, unsplit batch"})
    positions = fields.List(fields.Integer(validate=validate.Range(min=0)), required=True,
                            metadata={"description": "where each of this report's designs "
                                                     "stands in the whole batch (0-based)"})


class ReportSchema(Schema):
    """The audit report: the JSON of ``schemcheck audit`` and of the service."""

    tool = fields.Nested(ToolSchema)
    designs = fields.List(fields.Nested(DesignSchema), required=True)
    stats = fields.Dict(keys=fields.String(), values=fields.Integer())
    warnings = fields.List(fields.String())
    assumptions = fields.List(fields.String(), metadata={
        "description": "The model's assumptions, the same for every design"})
    missing_parameters = fields.List(fields.Nested(MissingAcrossSchema))
    shard = fields.Nested(ShardSchema, metadata={"description": "present in the report of "
                                                                "one shard (--shard K/N)"})


class PathRequestSchema(Schema):
    class Meta:
        unknown = RAISE

    path = fields.String(
        required=True,
        validate=[validate.Length(min=1, max=4096),
                  # no NUL and no lone surrogate: no file can have such a name
                  validate.Regexp(r"^[^\x00\ud800-\udfff]*$",
                                  error="expected a file path without NUL characters or "
                                        "unpaired surrogates")],
        metadata={"description": "A design under one of the allowed folders"})


class AuditSchema(Schema):
    id = fields.String(required=True)
    name = fields.String()
    created = fields.Float()
    cached = fields.Boolean()
    result = fields.Nested(ReportSchema, required=True)


class AuditSummarySchema(Schema):
    id = fields.String(required=True)
    name = fields.String()
    created = fields.Float()
    designs = fields.Integer()
    errors = fields.Integer()
    warnings = fields.Integer()


class AuditListSchema(Schema):
    audits = fields.List(fields.Nested(AuditSummarySchema), required=True)


class ListQuerySchema(Schema):
    class Meta:
        unknown = RAISE

    limit = fields.Integer(load_default=20, validate=validate.Range(min=1, max=500))


class HealthSchema(Schema):
    status = fields.String()
    version = fields.String()


class PartsSchema(Schema):
    library = fields.String(allow_none=True)
    parts = fields.Dict(keys=fields.String(), values=fields.Dict())


class ProblemSchema(Schema):
    """RFC 9457 problem details."""

    type = fields.String(required=True)
    title = fields.String(required=True)
    status = fields.Integer(required=True)
    detail = fields.String()
    errors = fields.Dict(keys=fields.String(), values=fields.Raw())
