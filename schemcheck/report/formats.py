"""The output-format registry: one entry per format, used by the CLI's ``--format`` and the
service's ``/v1/audits/{id}/report.{suffix}`` route. Adding a format is one renderer
module under ``report/`` and one entry here.

Every renderer takes the serialised report (:func:`schemcheck.report.json.to_data`) and a
base folder that file paths are made relative to (SARIF), and returns the text.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

Renderer = Callable[[dict[str, Any], str | None], str]


@dataclass(frozen=True, slots=True)
class OutputFormat:
    name: str  # the --format value
    suffix: str  # file suffix, and the service route's
    media_type: str
    description: str
    render: Renderer


def _json(report: dict[str, Any], base: str | None) -> str:
    from schemcheck.report.json import dumps

    return dumps(report) + "\n"


def _text(report: dict[str, Any], base: str | None) -> str:
    from schemcheck.report.audit_text import audit_text

    return audit_text(report)


def _markdown(report: dict[str, Any], base: str | None) -> str:
    from schemcheck.report.markdown import checklist

    return checklist(report)


def _sarif(report: dict[str, Any], base: str | None) -> str:
    import json

    from schemcheck.report.sarif import sarif

    return json.dumps(sarif(report, base), indent=2, ensure_ascii=False, allow_nan=False)


def _html(report: dict[str, Any], base: str | None) -> str:
    from schemcheck.report.html import html_report

    return html_report(report)


FORMATS: dict[str, OutputFormat] = {f.name: f for f in (
    OutputFormat("json", "json", "application/json", "the results model as JSON", _json),
    OutputFormat("text", "txt", "text/plain; charset=utf-8", "a table for a terminal", _text),
    OutputFormat("markdown", "md", "text/markdown; charset=utf-8",
                 "the pull-request checklist", _markdown),
    OutputFormat("sarif", "sarif", "application/sarif+json",
                 "SARIF 2.1.0 for code-scanning tools", _sarif),
    OutputFormat("html", "html", "text/html; charset=utf-8",
                 "a self-contained page with charts, to look at or print", _html),
)}

BY_SUFFIX: dict[str, OutputFormat] = {f.suffix: f for f in FORMATS.values()}


def render(report: dict[str, Any], name: str, base: str | None = None) -> str:
    """``report`` in the format ``name`` (a key of :data:`FORMATS`)."""
    return FORMATS[name].render(report, base)
