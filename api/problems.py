"""Every error is an RFC 9457 problem document (application/problem+json)."""

from __future__ import annotations

from flask import Flask, jsonify
from marshmallow import ValidationError
from werkzeug.exceptions import HTTPException

from schemcheck.errors import SchemcheckError


class Problem(Exception):
    """An error answered as a problem document with ``status``."""

    def __init__(self, status: int, title: str, detail: str = "", **extra) -> None:
        super().__init__(detail or title)
        self.status, self.title, self.detail, self.extra = status, title, detail, extra


def problem_response(status: int, title: str, detail: str = "", **extra):
    slug = title.lower().replace(" ", "-")
    body = {"type": f"about:blank#{slug}" if status != 500 else "about:blank",
            "title": title, "status": status, "detail": detail, **extra}
    response = jsonify(body)
    response.status_code = status
    response.mimetype = "application/problem+json"
    return response


def register(app: Flask) -> None:
    @app.errorhandler(Problem)
    def _problem(error: Problem):
        return problem_response(error.status, error.title, error.detail, **error.extra)

    @app.errorhandler(ValidationError)
    def _invalid(error: ValidationError):
        return problem_response(422, "Invalid request", "the request body or query does not "
                                "match the schema", errors=error.messages)

    @app.errorhandler(SchemcheckError)
    def _unreadable(error: SchemcheckError):
        return problem_response(422, "Unreadable design", str(error))

    @app.errorhandler(HTTPException)
    def _http(error: HTTPException):
        return problem_response(error.code or 500, error.name, error.description or "")

    @app.errorhandler(Exception)
    def _unexpected(error: Exception):  # pragma: no cover - a bug of ours
        app.logger.exception("unexpected error")
        return problem_response(500, "Internal error", "the service failed on this request; "
                                "the log has the details")
