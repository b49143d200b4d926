"""``/v1/audits``: submit a design (upload or path), read results back."""

from __future__ import annotations

import json
import os
import shutil
import tempfile
from pathlib import PurePosixPath

from flask import Blueprint, Response, current_app, request

from schemcheck.errors import PathNotAllowedError
from schemcheck.io.files import confined
from schemcheck.run.batch import submission_key

from .problems import Problem, not_allowed
from .schemas import AuditListSchema, AuditSchema, ListQuerySchema, PathRequestSchema

bp = Blueprint("audits", __name__)
_AUDIT = AuditSchema()  # built once: a schema instance costs more than a small dump
_LIST = AuditListSchema()
_PATH = PathRequestSchema()
_QUERY = ListQuerySchema()

#: Longest upload name, and longest part of one (most file systems take 255 bytes).
MAX_NAME_BYTES, MAX_PART_BYTES = 1024, 255


def _invalid_name(name: str, why: str) -> Problem:
    shown = name if len(name) <= 80 else name[:77] + "..."
    return Problem(422, "Invalid file name", f"expected a relative file name without '..', "
                   f"found {shown!r}: {why}")


def _safe_relative(name: str) -> str:
    if not name:
        raise _invalid_name(name, "the name is empty")
    if any(ord(c) < 32 or ord(c) == 127 for c in name):
        raise _invalid_name(name, "it holds a control character")
    try:
        encoded = name.encode("utf-8")
    except UnicodeEncodeError:
        raise _invalid_name(name, "it is not valid Unicode text") from None
    path = PurePosixPath(name.replace("\\", "/"))
    if (not path.parts or path.is_absolute() or ".." in path.parts or ":" in path.parts[0]
            or any(part.startswith(".") for part in path.parts)):
        raise _invalid_name(name, "it must name a file inside the upload, not start with '.' "
                            "or '/', nor hold '..'")
    if len(encoded) > MAX_NAME_BYTES or any(len(p.encode()) > MAX_PART_BYTES for p in path.parts):
        raise _invalid_name(name, f"it is longer than {MAX_NAME_BYTES} bytes, or a part of it "
                            f"longer than {MAX_PART_BYTES}")
    return str(path)


def _check_layout(names: list[str]) -> None:
    """Refuse a name used both as a file and as a folder (``a`` and ``a/b.kicad_sch``).
    A name given twice is kept once: the later file replaces the earlier, as a copy into
    one folder would."""
    folders = {str(parent) for name in names for parent in PurePosixPath(name).parents}
    for name in names:
        if name in folders:
            raise _invalid_name(name, "it is both a file and a folder of the upload")


def _store():
    return current_app.extensions["schemcheck.store"]


def _answer(record: dict, cached: bool, status: int = 201) -> tuple[dict, int]:
    return _AUDIT.dump({**record, "cached": cached}), status


def _confinement(folders: list[str]) -> tuple[list[str], list[str]]:
    """What an audit of this request may read: ``folders``, and the service's own parts
    library (the operator chose it)."""
    library = current_app.config["AUDIT_OVERRIDES"].get("parts_library")
    return folders, [library] if library else []


def _audit(paths: list[str], name: str, strip: str | None,
           confinement: tuple[list[str], list[str]]) -> tuple[dict, int]:
    try:
        with confined(*confinement):
            # An upload's answer names files relative to the upload; a path submission's
            # names them where they lie, so where they lie is part of its key.
            key = submission_key(paths, current_app.config["AUDIT_OVERRIDES"],
                                 located=strip is None)
        existing = _store().find_by_key(key)
        if existing is not None:
            return _answer(existing, True)
        runner = current_app.extensions["schemcheck.runner"]
        report = runner.run(paths, dict(current_app.config["AUDIT_OVERRIDES"]), confinement)
    except PathNotAllowedError as error:
        raise not_allowed(error, strip) from None
    if strip:
        text = json.dumps(report).replace(json.dumps(strip + os.sep)[1:-1], "")
        report = json.loads(text)
    errors = [e for d in report["designs"] for e in d["errors"]]
    if errors:
        raise Problem(422, "Unreadable design", errors[0], errors={"files": errors})
    if not report["designs"]:
        raise Problem(422, "No design", "expected a schematic or netlist, found none")
    return _answer(_store().add(key, name, report), False)


def _json_body() -> dict:
    try:
        body = request.get_json(silent=True)
    except RecursionError:  # nested too deeply for the parser
        body = None
    if not isinstance(body, dict):
        raise Problem(400, "Bad request", "expected a JSON object {\"path\": \"...\"}")
    return body


@bp.post("/v1/audits")
def create_audit():
    if request.mimetype == "multipart/form-data":
        uploads = request.files.getlist("files")
        if not uploads:
            raise Problem(422, "No files", "expected one or more files in the multipart field "
                                           "'files' (the root sheet first)")
        names = [_safe_relative(u.filename or "") for u in uploads]
        _check_layout(names)
        folder = tempfile.mkdtemp(prefix="upload-", dir=current_app.config["UPLOAD_FOLDER"])
        try:
            for upload, name in zip(uploads, names):
                target = os.path.join(folder, name)
                os.makedirs(os.path.dirname(target), exist_ok=True)
                upload.save(target)
            # the design may read its own upload and nothing else
            return _audit([os.path.join(folder, names[0])], names[0], folder,
                          _confinement([folder]))
        finally:
            shutil.rmtree(folder, ignore_errors=True)
    if request.mimetype == "application/json":
        path = _PATH.load(_json_body())["path"]
        resolved = os.path.realpath(path)
        allowed = [os.path.realpath(f) for f in current_app.config["ALLOWED_FOLDERS"]]
        if not any(os.path.commonpath([resolved, a]) == a for a in allowed):
            raise Problem(403, "Path not allowed", "the path resolves outside the folders this "
                                                   "service may read")
        if not os.path.exists(resolved):
            raise Problem(404, "Not found", "no such file or folder under the allowed folders")
        return _audit([resolved], path, None, _confinement(allowed))
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


@bp.get("/v1/audits/<audit_id>/report.<suffix>")
def get_report(audit_id: str, suffix: str):
    from schemcheck.report.formats import BY_SUFFIX

    output = BY_SUFFIX.get(suffix)
    if output is None:
        raise Problem(404, "Not found", f"no report format {suffix!r} (one of: "
                      f"{', '.join(sorted(BY_SUFFIX))})")
    return Response(output.render(_record(audit_id)["result"], None),
                    mimetype=output.media_type)


@bp.get("/v1/audits/<audit_id>/sarif")
def get_sarif(audit_id: str):
    from schemcheck.report.sarif import sarif

    body = json.dumps(sarif(_record(audit_id)["result"]), ensure_ascii=False, allow_nan=False)
    return Response(body, mimetype="application/sarif+json")
