"""Every error is an RFC 9457 problem document (application/problem+json)."""

from __future__ import annotations

from collections.abc import Iterable
from typing import Any

from flask import Flask, jsonify
from marshmallow import ValidationError
from werkzeug.exceptions import HTTPException

from schemcheck.errors import PathNotAllowedError, SchemcheckError


class Problem(Exception):
    """An error answered as a problem document with ``status`` (and extra ``headers``,
    such as ``WWW-Authenticate`` on a 401)."""

    def __init__(self, status: int, title: str, detail: str = "",
                 headers: Iterable[tuple[str, str]] = (), **extra) -> None:
        super().__init__(detail or title)
        self.status, self.title, self.detail, self.extra = status, title, detail, extra
        self.headers = tuple(headers)


def problem_document(status: int, title: str, detail: str = "", **extra: Any) -> dict[str, Any]:
    slug = title.lower().replace(" ", "-")
    return {"type": f"about:blank#{slug}" if status != 500 else "about:blank",
            "title": title, "status": status, "detail": detail, **extra}


def problem_response(status: int, title: str, detail: str = "",
                     headers: Iterable[tuple[str, str]] = (), **extra):
    response = jsonify(problem_document(status, title, detail, **extra))
    response.status_code = status
    response.mimetype = "application/problem+json"
    for name, value in headers:
        response.headers[name] = value
    return response


def not_allowed(error: PathNotAllowedError, strip: str | None = None) -> Problem:
    """403 naming the reference (and where the design wrote it, relative to the upload)."""
    detail = str(error)
    where = error.file or ""
    if strip:
        detail = detail.replace(strip.rstrip("/") + "/", "")
        where = where.replace(strip.rstrip("/") + "/", "")
    return Problem(403, "Path not allowed", detail,
                   errors={"reference": error.reference, "what": error.what, "file": where,
                           "line": error.line, "column": error.column})


def register(app: Flask) -> None:
    @app.errorhandler(Problem)
    def _problem(error: Problem):
        return problem_response(error.status, error.title, error.detail, error.headers,
                                **error.extra)

    @app.errorhandler(ValidationError)
    def _invalid(error: ValidationError):
        return problem_response(422, "Invalid request", "the request body or query does not "
                                "match the schema", errors=error.messages)

    @app.errorhandler(PathNotAllowedError)
    def _outside(error: PathNotAllowedError):
        return _problem(not_allowed(error))

    @app.errorhandler(SchemcheckError)
    def _unreadable(error: SchemcheckError):
        return problem_response(422, "Unreadable design", str(error))

    @app.errorhandler(HTTPException)
    def _http(error: HTTPException):
        # keep what the status needs, e.g. Allow on a 405 (RFC 9110 §15.5.6)
        headers = [(k, v) for k, v in error.get_headers() if k.lower() == "allow"]
        return problem_response(error.code or 500, error.name, error.description or "",
                                headers)

    @app.errorhandler(Exception)
    def _unexpected(error: Exception):  # pragma: no cover - a bug of ours
        app.logger.exception("unexpected error")
        return problem_response(500, "Internal error", "the service failed on this request; "
                                "the log has the details")

    @app.after_request
    def _no_sniffing(response):
        response.headers["X-Content-Type-Options"] = "nosniff"
        return response
