"""The results model <-> its JSON form (the ``--format json`` output, the cache's rows and
the service's bodies). Key order is the model's field order, so equal results give equal
bytes. No NaN or Infinity is ever written: a figure that is not finite is ``null`` (not
computed), and ``-0.0`` is written as ``0.0``."""

from __future__ import annotations

import dataclasses
import json
import math
from typing import Any

from schemcheck.model import Finding
from schemcheck.results import (
    Compensation, Contributor, DesignResult, ErrorSplit, MissingAcross, MissingPart, NotAnalysed,
    ParamsUsed, PartRequirements, Report, Sensitivity, StageResult, Tool, Upstream,
)


def to_data(value: Any) -> Any:
    """``value`` (a results object, or lists/dicts of them) as plain JSON data."""
    if dataclasses.is_dataclass(value) and not isinstance(value, type):
        return {f.name: to_data(getattr(value, f.name)) for f in dataclasses.fields(value)}
    if isinstance(value, float):
        if not math.isfinite(value):
            return None
        return value + 0.0  # -0.0 -> 0.0
    if isinstance(value, dict):
        return {str(k): to_data(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [to_data(v) for v in value]
    return value


def dumps(data: Any) -> str:
    """Strict JSON text of already-serialised ``data`` (indent 2, UTF-8 kept)."""
    return json.dumps(to_data(data), indent=2, ensure_ascii=False, allow_nan=False)


def _build(cls: type, data: dict[str, Any], nested: dict[str, Any]) -> Any:
    names = {f.name for f in dataclasses.fields(cls)}
    kwargs = {k: v for k, v in data.items() if k in names}
    for name, convert in nested.items():
        if name in kwargs and kwargs[name] is not None:
            kwargs[name] = convert(kwargs[name])
    return cls(**kwargs)


def stage_from_data(data: dict[str, Any]) -> StageResult:
    return _build(StageResult, data, {
        "sensitivity": lambda d: _build(Sensitivity, d, {}),
        "params": lambda d: _build(ParamsUsed, d, {}),
        "contributors": lambda items: [_build(Contributor, c, {}) for c in items],
        "split": lambda d: _build(ErrorSplit, d, {}),
        "upstream": lambda items: [_build(Upstream, u, {}) for u in items],
        "compensation": lambda d: _build(Compensation, d, {}),
        "requirements": lambda d: _build(PartRequirements, d, {})})


def design_from_data(data: dict[str, Any]) -> DesignResult:
    """The typed design result a serialised one (e.g. a cache row) stands for."""
    return _build(DesignResult, data, {
        "stages": lambda items: [stage_from_data(s) for s in items],
        "findings": lambda items: [_build(Finding, f, {}) for f in items],
        "not_analysed": lambda items: [_build(NotAnalysed, n, {}) for n in items],
        "missing_parameters": lambda items: [_build(MissingPart, m, {}) for m in items]})


def report_from_data(data: dict[str, Any]) -> Report:
    return _build(Report, data, {
        "tool": lambda d: _build(Tool, d, {}),
        "designs": lambda items: [design_from_data(d) for d in items],
        "missing_parameters": lambda items: [_build(MissingAcross, m, {}) for m in items]})
