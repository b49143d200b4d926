"""The results model and its descriptions agree: the library's dataclasses
(schemcheck.results) and the service's marshmallow schemas (the OpenAPI document's source)
name the same fields, nested the same way; the JSON form keeps the model's field order and
is strict JSON (RFC 8259 has no NaN or Infinity)."""

from __future__ import annotations

import dataclasses
import json
import typing

import pytest
from marshmallow import fields as mm
from schemcheck_api import schemas

from schemcheck import results
from schemcheck.model import Finding
from schemcheck.report.json import design_from_data, dumps, json_key, to_data

PAIRS = [
    (results.Report, schemas.ReportSchema),
    (results.Tool, schemas.ToolSchema),
    (results.Shard, schemas.ShardSchema),
    (results.DesignResult, schemas.DesignSchema),
    (results.StageResult, schemas.StageSchema),
    (results.Sensitivity, schemas.SensitivitySchema),
    (results.ParamsUsed, schemas.ParamsSchema),
    (results.Contributor, schemas.ContributorSchema),
    (results.NotAnalysed, schemas.NotAnalysedSchema),
    (results.ErrorSplit, schemas.ErrorSplitSchema),
    (results.Upstream, schemas.UpstreamSchema),
    (results.Compensation, schemas.CompensationSchema),
    (results.PartRequirements, schemas.PartRequirementsSchema),
    (results.TemperatureCurve, schemas.TemperatureCurveSchema),
    (results.Histogram, schemas.HistogramSchema),
    (results.MissingPart, schemas.MissingPartSchema),
    (results.MissingAcross, schemas.MissingAcrossSchema),
    (results.Estimate, schemas.EstimateSchema),
    (results.LibraryMatch, schemas.MatchSchema),
    (results.AmbiguousMatch, schemas.AmbiguousMatchSchema),
    (results.LibrarySource, schemas.LibrarySourceSchema),
    (Finding, schemas.FindingSchema),
]


@pytest.mark.parametrize("model,schema", PAIRS, ids=[m.__name__ for m, _ in PAIRS])
def test_schema_names_every_field_of_the_model(model, schema):
    declared = [f.data_key or name for name, f in schema._declared_fields.items()]
    assert [json_key(f) for f in dataclasses.fields(model)] == declared


def _nested(field):
    if isinstance(field, mm.List):
        field = field.inner
    return field.nested if isinstance(field, mm.Nested) else None


@pytest.mark.parametrize("model,schema", PAIRS, ids=[m.__name__ for m, _ in PAIRS])
def test_nested_fields_use_the_matching_schema(model, schema):
    by_model = dict(PAIRS)
    hints = {json_key(f): typing.get_type_hints(model)[f.name] for f in dataclasses.fields(model)}
    for name, field in schema._declared_fields.items():
        name = field.data_key or name
        nested = _nested(field)
        inner = [a for a in typing.get_args(hints[name]) if dataclasses.is_dataclass(a)]
        if dataclasses.is_dataclass(hints[name]):
            inner = [hints[name]]
        if nested is None:
            assert not inner, f"{model.__name__}.{name} is a model object but not Nested"
        else:
            assert inner and by_model[inner[0]] is nested, f"{model.__name__}.{name}"


def test_json_form_keeps_field_order_and_has_no_nan():
    finding = Finding("over-budget", "error", "U1", 1, "m", data={"worst_v": float("nan")})
    design = results.DesignResult(file="a.kicad_sch", findings=[finding],
                                  stages=[], settings={"x": -0.0})
    data = to_data(design)
    assert list(data) == [f.name for f in dataclasses.fields(results.DesignResult)]
    text = dumps(data)
    json.loads(text, parse_constant=lambda c: pytest.fail(f"{c} in strict JSON"))
    assert data["findings"][0]["data"] == {"worst_v": None}
    assert "-0.0" not in text


def test_round_trip_through_the_json_form(tmp_path):
    from schemcheck.audit import audit_netlist
    from schemcheck.circuit.load import load_netlist
    from schemcheck.settings import Settings

    from .conftest import FIXTURES

    design = audit_netlist(load_netlist(FIXTURES / "demo" / "frontend.kicad_sch"),
                           Settings(mc_samples=0))
    data = to_data(design)
    assert design.stages, "the demo has stages"
    assert to_data(design_from_data(json.loads(json.dumps(data)))) == data


def test_figures_that_are_not_finite_are_named_where_they_sit():
    # The audit names every figure of a stage that is not finite (JSON has no NaN or
    # Infinity; each is written as null): nested objects by field, lists by index, dicts
    # by key, finite figures and text left alone.
    import math

    from schemcheck.audit import _non_finite
    from schemcheck.results import Contributor, Sensitivity

    found: list[str] = []
    _non_finite({"sensitivity": Sensitivity(vos=math.inf, ib_plus=1.0),
                 "contributors": [Contributor("U1", 1, 2.0), Contributor("U2", 1, math.nan)],
                 "nets": {"plus": "IN", "gain": -math.inf}, "ok": 3.0}, "U1/1", found)
    assert found == ["U1/1.sensitivity.vos", "U1/1.contributors[1].worst_case_v",
                     "U1/1.nets.gain"]
    found = []
    _non_finite(Sensitivity(ios=math.nan), "", found)
    assert found == ["ios"]
