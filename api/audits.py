"""``/v1/audits``: submit a design (upload or path), read results back."""

from __future__ import annotations

import json
import os
import shutil
import tempfile
from pathlib import PurePosixPath

from flask import Blueprint, Response, current_app, request

from schemcheck.run.batch import submission_key

from .problems import Problem
from .schemas import AuditListSchema, AuditSchema, ListQuerySchema, PathRequestSchema

bp = Blueprint("audits", __name__)
_AUDIT = AuditSchema()  # built once: a schema instance costs more than a small dump
_LIST = AuditListSchema()
_PATH = PathRequestSchema()
_QUERY = ListQuerySchema()


def _safe_relative(name: str) -> str:
    path = PurePosixPath(name.replace("\\", "/"))
    if (not name or path.is_absolute() or ".." in path.parts or ":" in path.parts[0]
            or any(part.startswith(".") for part in path.parts)):
        raise Problem(422, "Invalid file name", f"expected a relative file name without '..', "
                      f"found {name!r}")
    return str(path)


def _store():
    return current_app.extensions["schemcheck.store"]


def _answer(record: dict, cached: bool, status: int = 201) -> tuple[dict, int]:
    return _AUDIT.dump({**record, "cached": cached}), status


def _audit(paths: list[str], name: str, strip: str | None) -> tuple[dict, int]:
    # An upload's answer names files relative to the upload; a path submission's names
    # them where they lie, so where they lie is part of its key.
    key = submission_key(paths, current_app.config["AUDIT_OVERRIDES"], located=strip is None)
    existing = _store().find_by_key(key)
    if existing is not None:
        return _answer(existing, True)
    runner = current_app.extensions["schemcheck.runner"]
    report = runner.run(paths, dict(current_app.config["AUDIT_OVERRIDES"]))
    if strip:
        text = json.dumps(report).replace(json.dumps(strip + os.sep)[1:-1], "")
        report = json.loads(text)
    errors = [e for d in report["designs"] for e in d["errors"]]
    if errors:
        raise Problem(422, "Unreadable design", errors[0], errors={"files": errors})
    if not report["designs"]:
        raise Problem(422, "No design", "expected a schematic or netlist, found none")
    return _answer(_store().add(key, name, report), False)


@bp.post("/v1/audits")
def create_audit():
    if request.mimetype == "multipart/form-data":
        uploads = request.files.getlist("files")
        if not uploads:
            raise Problem(422, "No files", "expected one or more files in the multipart field "
                                           "'files' (the root sheet first)")
        names = [_safe_relative(u.filename or "") for u in uploads]
        folder = tempfile.mkdtemp(prefix="upload-", dir=current_app.config["UPLOAD_FOLDER"])
        try:
            for upload, name in zip(uploads, names):
                target = os.path.join(folder, name)
                os.makedirs(os.path.dirname(target), exist_ok=True)
                upload.save(target)
            return _audit([os.path.join(folder, names[0])], names[0], folder)
        finally:
            shutil.rmtree(folder, ignore_errors=True)
    if request.mimetype == "application/json":
        body = request.get_json(silent=True)
        if not isinstance(body, dict):
            raise Problem(400, "Bad request", "expected a JSON object {\"path\": \"...\"}")
        path = _PATH.load(body)["path"]
        resolved = os.path.realpath(path)
        allowed = [os.path.realpath(f) for f in current_app.config["ALLOWED_FOLDERS"]]
        if not any(os.path.commonpath([resolved, a]) == a for a in allowed):
            raise Problem(403, "Path not allowed", "the path resolves outside the folders this "
                                                   "service may read")
        if not os.path.exists(resolved):
            raise Problem(404, "Not found", "no such file or folder under the allowed folders")
        return _audit([resolved], path, None)
    raise Problem(415, "Unsupported media type", "expected multipart/form-data with field "
                                                 "'files', or application/json with 'path'")


@bp.get("/v1/audits")
def list_audits():
    query = _QUERY.load(request.args.to_dict())
    return _LIST.dump({"audits": _store().recent(query["limit"])})


def _record(audit_id: str) -> dict:
    record = _store().get(audit_id) if len(audit_id) <= 64 else None
    if record is None:
        raise Problem(404, "Not found", f"no audit with id {audit_id!r}")
    return record


@bp.get("/v1/audits/<audit_id>")
def get_audit(audit_id: str):
    return _answer(_record(audit_id), True, 200)


@bp.get("/v1/audits/<audit_id>/checklist")
def get_checklist(audit_id: str):
    from schemcheck.report.markdown import checklist

    return Response(checklist(_record(audit_id)["result"]), mimetype="text/markdown")


@bp.get("/v1/audits/<audit_id>/sarif")
def get_sarif(audit_id: str):
    from schemcheck.report.sarif import sarif

    body = json.dumps(sarif(_record(audit_id)["result"]), ensure_ascii=False)
    return Response(body, mimetype="application/sarif+json")
