"""The OpenAPI 3 document, generated from the marshmallow schemas (apispec)."""

from __future__ import annotations

from functools import lru_cache
from typing import Any

from apispec import APISpec
from apispec.ext.marshmallow import MarshmallowPlugin

from schemcheck import __version__

from . import schemas
from .guard import CLIENT_HEADER

PROBLEM = {"application/problem+json": {"schema": "Problem"}}


def _problems(*codes: int) -> dict:
    text = {400: "Malformed request", 401: "Missing or wrong bearer token", 403: "Refused: a "
            "Host name other than the service's, a request from another site, an upload without "
            f"the {CLIENT_HEADER} header or the token, or a path outside the allowed folders",
            404: "Not found", 413: "Upload too large (refused on its declared length)",
            415: "Unsupported content type", 422: "Unreadable design or invalid request",
            503: "Busy or timed out"}
    return {str(c): {"description": text[c], "content": PROBLEM} for c in codes}


@lru_cache(maxsize=2)
def build_spec(token: bool = False) -> APISpec:
    """The document of a service with (``token``) or without a bearer token: with one,
    every operation requires it."""
    options: dict[str, Any] = {"security": [{"bearer": []}]} if token else {}
    spec = APISpec(title="schemcheck", version=__version__, openapi_version="3.0.3",
                   plugins=[MarshmallowPlugin()],
                   info={"description": "DC error budgets of op-amp stages, audited from KiCad "
                                        "schematics, for editor scripts on the same machine."},
                   **options)
    for name in ("Finding", "Stage", "Design", "Report", "PathRequest", "Audit", "AuditSummary",
                 "AuditList", "Health", "Parts", "Problem"):
        spec.components.schema(name, schema=getattr(schemas, f"{name}Schema"))
    if token:
        spec.components.security_scheme("bearer", {"type": "http", "scheme": "bearer"})
    client = {"name": CLIENT_HEADER, "in": "header", "required": False,
              "description": "Any non-empty value (your tool's name). Required with "
                             "multipart/form-data unless the bearer token is sent: a web page "
                             "of another site cannot send it.",
              "schema": {"type": "string", "minLength": 1, "pattern": "^[!-~]+$"}}
    audit = {"application/json": {"schema": "Audit"}}
    audit_id = {"name": "audit_id", "in": "path", "required": True,
                "schema": {"type": "string", "maxLength": 64}}
    spec.path(path="/v1/audits", operations={
        "post": {"summary": "Audit a design: upload its files, or name a path under an allowed "
                            "folder",
                 "parameters": [client],
                 "requestBody": {"required": True, "content": {
                     "multipart/form-data": {"schema": {"type": "object", "required": ["files"],
                         "properties": {"files": {"type": "array", "minItems": 1, "items": {
                             "type": "string", "format": "binary"}}}}},
                     "application/json": {"schema": "PathRequest"}}},
                 "responses": {"201": {"description": "Audited (or answered from the store)",
                                       "content": audit},
                               **_problems(400, 401, 403, 404, 413, 415, 422, 503)}},
        "get": {"summary": "Recent audits",
                "parameters": [{"name": "limit", "in": "query", "required": False,
                                "schema": {"type": "integer", "minimum": 1, "maximum": 500}}],
                "responses": {"200": {"description": "Recent audits, newest first",
                                      "content": {"application/json": {"schema": "AuditList"}}},
                              **_problems(401, 403, 422)}}})
    spec.path(path="/v1/audits/{audit_id}", operations={"get": {
        "summary": "One audit", "parameters": [audit_id],
        "responses": {"200": {"description": "The audit", "content": audit},
                      **_problems(401, 403, 404)}}})
    spec.path(path="/v1/audits/{audit_id}/checklist", operations={"get": {
        "summary": "The pull-request checklist of one audit", "parameters": [audit_id],
        "responses": {"200": {"description": "Markdown",
                              "content": {"text/markdown": {"schema": {"type": "string"}}}},
                      **_problems(401, 403, 404)}}})
    spec.path(path="/v1/audits/{audit_id}/sarif", operations={"get": {
        "summary": "The SARIF 2.1.0 log of one audit", "parameters": [audit_id],
        "responses": {"200": {"description": "SARIF",
                              "content": {"application/sarif+json": {"schema": {
                                  "type": "object"}}}},
                      **_problems(401, 403, 404)}}})
    from schemcheck.report.formats import FORMATS

    suffix = {"name": "suffix", "in": "path", "required": True,
              "schema": {"type": "string", "enum": [f.suffix for f in FORMATS.values()]}}
    spec.path(path="/v1/audits/{audit_id}/report.{suffix}", operations={"get": {
        "summary": "One audit in any output format: "
                   + "; ".join(f"{f.suffix}: {f.description}" for f in FORMATS.values()),
        "parameters": [audit_id, suffix],
        "responses": {"200": {"description": "The report", "content": {
            f.media_type.split(";")[0]: {"schema": {"type": "string"}}
            for f in FORMATS.values()}}, **_problems(401, 403, 404)}}})
    spec.path(path="/v1/health", operations={"get": {
        "summary": "Is the service up", "responses": {"200": {
            "description": "Up", "content": {"application/json": {"schema": "Health"}}},
            **_problems(401, 403)}}})
    spec.path(path="/v1/parts", operations={"get": {
        "summary": "The parts library in use", "responses": {"200": {
            "description": "Parts", "content": {"application/json": {"schema": "Parts"}}},
            **_problems(401, 403, 422)}}})
    spec.path(path="/openapi.json", operations={"get": {
        "summary": "This document", "responses": {"200": {
            "description": "OpenAPI 3", "content": {"application/json": {"schema": {
                "type": "object"}}}}, **_problems(401, 403)}}})
    return spec
