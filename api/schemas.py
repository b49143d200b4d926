"""marshmallow schemas of every request and response. The CLI's audit JSON is dumped
through :class:`ReportSchema` too: one definition of the shape, used by both."""

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


class SensitivitySchema(Schema):
    vos = _num(metadata={"description": "V/V: the noise gain"})
    ib_plus = _num(metadata={"description": "V/A"})
    ib_minus = _num(metadata={"description": "V/A"})


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


class ContributorSchema(Schema):
    ref = fields.String()
    unit = fields.Integer(allow_none=True)
    worst_case_v = _num()


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
    monte_carlo_samples = fields.Integer(allow_none=True, metadata={
        "description": "Monte Carlo samples behind monte_carlo_v (fewer than asked where "
                       "the design was too large for them; the assumptions say so)"})
    rti_v = _num()
    budget_v = _num()
    within_budget = fields.Boolean(allow_none=True)
    depends_on_undefined_output = fields.Boolean()
    contributors = fields.List(fields.Nested(ContributorSchema))


class NotAnalysedSchema(Schema):
    ref = fields.String()
    unit = fields.Integer(allow_none=True)
    sheet = fields.String()
    value = fields.String()
    reason = fields.String()


class DesignSchema(Schema):
    file = fields.String(required=True)
    stages = fields.List(fields.Nested(StageSchema), required=True)
    findings = fields.List(fields.Nested(FindingSchema), required=True)
    assumptions = fields.List(fields.String(), required=True)
    not_analysed = fields.List(fields.Nested(NotAnalysedSchema))
    settings = fields.Dict(keys=fields.String(), values=fields.Raw(allow_none=True))
    errors = fields.List(fields.String())
    caution = fields.String()


class ToolSchema(Schema):
    name = fields.String()
    version = fields.String()


class ReportSchema(Schema):
    """The audit report: the JSON of ``schemcheck audit`` and of the service."""

    tool = fields.Nested(ToolSchema)
    designs = fields.List(fields.Nested(DesignSchema), required=True)
    stats = fields.Dict(keys=fields.String(), values=fields.Integer())
    warnings = fields.List(fields.String())


class PathRequestSchema(Schema):
    class Meta:
        unknown = RAISE

    path = fields.String(required=True, validate=validate.Length(min=1, max=4096),
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
