"""The local HTTP service: ``create_app(settings)`` builds the Flask app.

Settings (all optional): ``STORE_PATH`` (SQLite database, default the CLI's cache),
``ALLOWED_FOLDERS`` (where JSON ``path`` submissions may point), ``MAX_CONTENT_LENGTH``
(bytes, 413 beyond), ``AUDIT_TIMEOUT`` (seconds), ``MAX_CONCURRENT_AUDITS``, ``TOKEN``
(bearer token required on every request when set), ``AUDIT_OVERRIDES`` (audit settings
such as ``{"mc_samples": 2000, "parts_library": "..."}``; ``charts`` is on unless set to
False), ``UPLOAD_FOLDER``.
"""

from __future__ import annotations

import hmac
import tempfile
from typing import Any

from flask import Flask, request

DEFAULTS: dict[str, Any] = {
    "STORE_PATH": None,
    "ALLOWED_FOLDERS": [],
    "MAX_CONTENT_LENGTH": 32 * 1024 * 1024,
    "AUDIT_TIMEOUT": 120.0,
    "MAX_CONCURRENT_AUDITS": 2,
    "TOKEN": None,
    "AUDIT_OVERRIDES": {},
    "UPLOAD_FOLDER": None,
}


def create_app(settings: dict[str, Any] | None = None) -> Flask:
    from . import audits, meta, problems
    from .problems import Problem
    from .store import AuditStore
    from .worker import AuditRunner

    app = Flask(__name__)
    app.config.update(DEFAULTS)
    app.config.update(settings or {})
    # every audit keeps what the html report draws, so report.html has its charts
    app.config["AUDIT_OVERRIDES"] = {"charts": True, **app.config["AUDIT_OVERRIDES"]}
    if app.config["UPLOAD_FOLDER"] is None:
        app.config["UPLOAD_FOLDER"] = tempfile.mkdtemp(prefix="schemcheck-uploads-")
    app.extensions["schemcheck.store"] = AuditStore(app.config["STORE_PATH"])
    app.extensions["schemcheck.runner"] = AuditRunner(app.config["MAX_CONCURRENT_AUDITS"],
                                                      app.config["AUDIT_TIMEOUT"])
    problems.register(app)

    @app.before_request
    def _authorise():
        token = app.config["TOKEN"]
        if token:
            given = request.headers.get("Authorization", "")
            if not hmac.compare_digest(given.encode(), f"Bearer {token}".encode()):
                raise Problem(401, "Unauthorised", "expected the header 'Authorization: Bearer "
                                                   "<token>' with this service's token")

    app.register_blueprint(audits.bp)
    app.register_blueprint(meta.bp)
    return app
