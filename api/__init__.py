"""The local HTTP service: ``create_app(settings)`` builds the Flask app.

Settings (all optional): ``STORE_PATH`` (SQLite database, default the CLI's cache),
``ALLOWED_FOLDERS`` (where JSON ``path`` submissions may point), ``MAX_CONTENT_LENGTH``
(bytes, 413 beyond), ``AUDIT_TIMEOUT`` (seconds), ``MAX_CONCURRENT_AUDITS``, ``TOKEN``
(bearer token required on every request when set), ``AUDIT_OVERRIDES`` (audit settings
such as ``{"mc_samples": 2000, "parts_library": "..."}``; ``charts`` is on unless set to
False), ``UPLOAD_FOLDER``, ``ALLOWED_HOSTS`` (the ``Host`` names answered; default
``localhost`` and the loopback addresses; None answers any). :mod:`.guard` says which
requests are refused before they reach a route. ``close_app(app)`` stops the audit workers.
"""

from __future__ import annotations

import tempfile
from typing import Any

from flask import Flask, request
from flask.json.provider import DefaultJSONProvider

from .guard import LOOPBACK_NAMES

DEFAULTS: dict[str, Any] = {
    "STORE_PATH": None,
    "ALLOWED_FOLDERS": [],
    "MAX_CONTENT_LENGTH": 32 * 1024 * 1024,
    "AUDIT_TIMEOUT": 120.0,
    "MAX_CONCURRENT_AUDITS": 2,
    "TOKEN": None,
    "AUDIT_OVERRIDES": {},
    "UPLOAD_FOLDER": None,
    "ALLOWED_HOSTS": list(LOOPBACK_NAMES),
}


class StrictJSONProvider(DefaultJSONProvider):
    """JSON as RFC 8259 has it: NaN and Infinity are an error, never written."""

    def dumps(self, obj: Any, **kwargs: Any) -> str:
        kwargs.setdefault("allow_nan", False)
        return super().dumps(obj, **kwargs)


def create_app(settings: dict[str, Any] | None = None) -> Flask:
    from . import audits, guard, meta, problems
    from .problems import Problem
    from .store import AuditStore
    from .worker import AuditRunner

    app = Flask(__name__)
    app.json = StrictJSONProvider(app)
    app.config.update(DEFAULTS)
    app.config.update(settings or {})
    # every audit keeps what the html report draws, so report.html has its charts
    app.config["AUDIT_OVERRIDES"] = {"charts": True, **app.config["AUDIT_OVERRIDES"]}
    if app.config["UPLOAD_FOLDER"] is None:
        app.config["UPLOAD_FOLDER"] = tempfile.mkdtemp(prefix="schemcheck-uploads-")
        app.extensions["schemcheck.own_upload_folder"] = app.config["UPLOAD_FOLDER"]
    app.extensions["schemcheck.store"] = AuditStore(app.config["STORE_PATH"])
    app.extensions["schemcheck.runner"] = AuditRunner(app.config["MAX_CONCURRENT_AUDITS"],
                                                      app.config["AUDIT_TIMEOUT"])
    problems.register(app)

    @app.before_request
    def _guard():
        refusal = guard.check(request.method, request.headers.get, app.config)
        if refusal is not None:
            raise Problem(refusal.status, refusal.title, refusal.detail, refusal.headers)

    app.register_blueprint(audits.bp)
    app.register_blueprint(meta.bp)
    return app


def close_app(app: Flask) -> None:
    """Stop the app's audit workers, close its store and remove the upload folder it made
    (the service is stopping)."""
    import shutil

    app.extensions["schemcheck.runner"].close()
    app.extensions["schemcheck.store"].close()
    own = app.extensions.pop("schemcheck.own_upload_folder", None)
    if own:
        shutil.rmtree(own, ignore_errors=True)
