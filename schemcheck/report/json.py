"""The results model <-> its JSON form (the ``--format json`` output, the cache's rows and
the service's bodies). Key order is the model's field order, so equal results give equal
bytes. No NaN or Infinity is ever written: a figure that is not finite is ``null`` (not
computed), and ``-0.0`` is written as ``0.0``."""

from __future__ import annotations

import dataclasses
import json
import math
import types
import typing
from typing import Any

from schemcheck.model import Finding
from schemcheck.results import (
    AmbiguousMatch,
    Compensation,
    Contributor,
    DesignResult,
    ErrorSplit,
    Estimate,
    Histogram,
    LibraryMatch,
    LibrarySource,
    MissingAcross,
    MissingPart,
    NotAnalysed,
    ParamsUsed,
    PartRequirements,
    Report,
    Sensitivity,
    Shard,
    StageResult,
    TemperatureCurve,
    Tool,
    Upstream,
)


def json_key(spec: dataclasses.Field) -> str:
    """The JSON key of a model field (its name, unless the key is a Python keyword)."""
    return spec.metadata.get("key", spec.name)


_PLANS: dict[type, tuple[tuple[str, str, bool], ...]] = {}


def _plan(cls: type) -> tuple[tuple[str, str, bool], ...]:
    """A model class's fields as (attribute, JSON key, left out when None)."""
    plan = _PLANS.get(cls)
    if plan is None:
        plan = _PLANS[cls] = tuple((f.name, json_key(f), bool(f.metadata.get("omit_when_none")))
                                   for f in dataclasses.fields(cls))
    return plan


_PLAIN = (str, int, bool, type(None))


def to_data(value: Any) -> Any:
    """``value`` (a results object, or lists/dicts of them) as plain JSON data."""
    kind = type(value)
    if kind in _PLAIN:
        return value
    if kind is float or isinstance(value, float):
        if not math.isfinite(value):
            return None
        return value + 0.0  # -0.0 -> 0.0
    if kind is list or kind is tuple or isinstance(value, (list, tuple)):
        return [to_data(v) for v in value]
    if isinstance(value, dict):
        return {str(k): to_data(v) for k, v in value.items()}
    if dataclasses.is_dataclass(value) and not isinstance(value, type):
        out = {}
        for name, key, omit in _plan(kind):
            item = getattr(value, name)
            if not (omit and item is None):
                out[key] = to_data(item)
        return out
    return value


def dumps(data: Any) -> str:
    """Strict JSON text of already-serialised ``data`` (indent 2, UTF-8 kept)."""
    return json.dumps(to_data(data), indent=2, ensure_ascii=False, allow_nan=False)


def _build(cls: type, data: dict[str, Any], nested: dict[str, Any]) -> Any:
    names = {json_key(f): f.name for f in dataclasses.fields(cls)}
    kwargs = {names[k]: v for k, v in data.items() if k in names}
    for name, convert in nested.items():
        if name in kwargs and kwargs[name] is not None:
            kwargs[name] = convert(kwargs[name])
    return cls(**kwargs)


def _params_from_data(data: dict[str, Any]) -> ParamsUsed:
    return _build(ParamsUsed, data, {
        "estimate": lambda d: _build(Estimate, d, {}),
        "match": lambda d: _build(LibraryMatch, d, {}),
        "ambiguous_match": lambda d: _build(AmbiguousMatch, d, {})})


def stage_from_data(data: dict[str, Any]) -> StageResult:
    return _build(StageResult, data, {
        "sensitivity": lambda d: _build(Sensitivity, d, {}),
        "params": _params_from_data,
        "contributors": lambda items: [_build(Contributor, c, {}) for c in items],
        "split": lambda d: _build(ErrorSplit, d, {}),
        "upstream": lambda items: [_build(Upstream, u, {}) for u in items],
        "compensation": lambda d: _build(Compensation, d, {}),
        "requirements": lambda d: _build(PartRequirements, d, {}),
        "over_temperature": lambda d: _build(TemperatureCurve, d, {}),
        "histogram": lambda d: _build(Histogram, d, {})})


def design_from_data(data: dict[str, Any]) -> DesignResult:
    """The typed design result a serialised one (e.g. a cache row) stands for."""
    return _build(DesignResult, data, {
        "stages": lambda items: [stage_from_data(s) for s in items],
        "findings": lambda items: [_build(Finding, f, {}) for f in items],
        "not_analysed": lambda items: [_build(NotAnalysed, n, {}) for n in items],
        "missing_parameters": lambda items: [_build(MissingPart, m, {}) for m in items],
        "parts_libraries": lambda items: [_build(LibrarySource, m, {}) for m in items]})


def report_from_data(data: dict[str, Any]) -> Report:
    return _build(Report, data, {
        "tool": lambda d: _build(Tool, d, {}),
        "shard": lambda d: _build(Shard, d, {}),
        "designs": lambda items: [design_from_data(d) for d in items],
        "missing_parameters": lambda items: [_build(MissingAcross, m, {}) for m in items]})


def _type_problem(hint: Any, value: Any, trail: str) -> tuple[str, str] | None:
    origin = typing.get_origin(hint)
    if origin in (typing.Union, types.UnionType):
        options = typing.get_args(hint)
        if value is None and type(None) in options:
            return None
        problems = [_type_problem(h, value, trail) for h in options if h is not type(None)]
        return None if any(p is None for p in problems) else problems[0]
    if isinstance(hint, type) and dataclasses.is_dataclass(hint):
        return check_data(hint, value, trail)
    if origin is list:
        if not isinstance(value, list):
            return trail, "Not a valid list."
        (inner,) = typing.get_args(hint)
        for i, item in enumerate(value):
            problem = _type_problem(inner, item, f"{trail}.{i}")
            if problem:
                return problem
        return None
    if origin is dict or hint is dict:
        return None if isinstance(value, dict) else (trail, "Not a valid mapping type.")
    if hint is Any:
        return None
    if hint is float:
        ok = isinstance(value, (int, float)) and not isinstance(value, bool)
        return None if ok else (trail, "Not a valid number.")
    if hint is int:
        ok = isinstance(value, int) and not isinstance(value, bool)
        return None if ok else (trail, "Not a valid integer.")
    if hint is bool:
        return None if isinstance(value, bool) else (trail, "Not a valid boolean.")
    if hint is str:
        return None if isinstance(value, str) else (trail, "Not a valid string.")
    return None


def check_data(cls: type, data: Any, trail: str = "") -> tuple[str, str] | None:
    """The first thing (field path, what is wrong) that keeps ``data`` from being the JSON
    form of a ``cls`` written by this tool, or None. A field without a default, or marked
    required, must be present; fields are taken in name order."""
    if not isinstance(data, dict):
        return trail, "Invalid input type."
    hints = {json_key(f): typing.get_type_hints(cls)[f.name] for f in dataclasses.fields(cls)}
    fields = {json_key(f): f for f in dataclasses.fields(cls)}
    for name in sorted(set(fields) | set(data)):
        where = f"{trail}.{name}" if trail else name
        if name not in fields:
            return where, "Unknown field."
        if name not in data:
            spec = fields[name]
            has_default = (spec.default is not dataclasses.MISSING
                           or spec.default_factory is not dataclasses.MISSING)
            if has_default and not spec.metadata.get("required"):
                continue
            return where, "Missing data for required field."
        problem = _type_problem(hints[name], data[name], where)
        if problem:
            return problem
    return None
