"""The local HTTP service, through Flask's test client: every route and error path.

Outside sources: RFC 9457 (problem details: type, title, status, detail; media type
application/problem+json); the OpenAPI 3.0 specification, checked with
openapi-spec-validator (PyPI); schemathesis (PyPI) generating requests from our
document and checking every response against it; HTTP status semantics of RFC 9110
(401, 403, 404, 413, 415, 422).
"""

from __future__ import annotations

import io
import os

import pytest

from schemcheck_api import create_app

from .conftest import FIXTURES

DEMO = FIXTURES / "demo"
DEMO_FILES = ["frontend.kicad_sch", "photodiode.kicad_sch", "bridge.kicad_sch",
              "acpreamp.kicad_sch", "chain.kicad_sch", "schemcheck.toml", "parts.toml"]


@pytest.fixture
def app(tmp_path):
    return create_app({"STORE_PATH": str(tmp_path / "store.sqlite3"),
                       "ALLOWED_FOLDERS": [str(FIXTURES)], "MAX_CONTENT_LENGTH": 2_000_000,
                       "AUDIT_OVERRIDES": {"mc_samples": 300}, "AUDIT_TIMEOUT": 60})


@pytest.fixture
def client(app):
    return app.test_client()


def upload(client, names=DEMO_FILES, folder=DEMO):
    files = [(io.BytesIO((folder / n).read_bytes()), n) for n in names]
    return client.post("/v1/audits", data={"files": files}, content_type="multipart/form-data")


def stored(app):
    return app.extensions["schemcheck.store"].recent(500)


def test_upload_audits_the_hierarchy(client):
    response = upload(client)
    assert response.status_code == 201
    body = response.get_json()
    design = body["result"]["designs"][0]
    assert design["file"] == "frontend.kicad_sch" and body["cached"] is False
    rules = sorted(f["rule"] for f in design["findings"])
    assert rules == ["bias-resistor-mismatch", "no-bias-path", "over-budget", "over-budget"]


def test_identical_resubmission_answered_from_store(client, app):
    first = upload(client).get_json()
    second = upload(client).get_json()
    assert second["id"] == first["id"] and second["cached"] is True
    assert len(stored(app)) == 1


def test_path_submission_and_reads(client):
    response = client.post("/v1/audits", json={"path": str(DEMO / "frontend.kicad_sch")})
    assert response.status_code == 201
    audit_id = response.get_json()["id"]
    assert client.get(f"/v1/audits/{audit_id}").get_json()["id"] == audit_id
    checklist = client.get(f"/v1/audits/{audit_id}/checklist")
    assert checklist.mimetype == "text/markdown"
    assert checklist.get_data(as_text=True).startswith("# DC error checklist")
    sarif = client.get(f"/v1/audits/{audit_id}/sarif")
    assert sarif.mimetype == "application/sarif+json" and sarif.get_json()["version"] == "2.1.0"
    listing = client.get("/v1/audits?limit=5").get_json()["audits"]
    assert listing[0]["id"] == audit_id and listing[0]["errors"] == 3


def test_health_parts_openapi(tmp_path):
    app = create_app({"STORE_PATH": str(tmp_path / "s.sqlite3"),
                      "AUDIT_OVERRIDES": {"parts_library": str(DEMO / "parts.toml")}})
    client = app.test_client()
    assert client.get("/v1/health").get_json()["status"] == "ok"
    assert set(client.get("/v1/parts").get_json()["parts"]) == {"LX-J1", "LX-P7", "LX-B27"}
    assert client.get("/openapi.json").get_json()["openapi"] == "3.0.3"


def assert_problem(response, status, title):
    assert response.status_code == status
    assert response.mimetype == "application/problem+json"
    body = response.get_json()
    assert {"type", "title", "status", "detail"} <= set(body)
    assert body["status"] == status and body["title"] == title
    return body


@pytest.mark.parametrize(("path", "status", "title"), [
    ("/etc/passwd", 403, "Path not allowed"),
    (str(FIXTURES / ".." / "README.md"), 403, "Path not allowed"),
    (str(FIXTURES / "nothing-here.kicad_sch"), 404, "Not found"),
])
def test_path_refusals(client, app, path, status, title):
    assert_problem(client.post("/v1/audits", json={"path": path}), status, title)
    assert stored(app) == []


def test_symlink_out_of_allowed_folder_refused(tmp_path):
    allowed = tmp_path / "allowed"
    allowed.mkdir()
    os.symlink("/etc", allowed / "escape")
    app = create_app({"STORE_PATH": str(tmp_path / "s.sqlite3"), "ALLOWED_FOLDERS": [str(allowed)]})
    response = app.test_client().post("/v1/audits", json={"path": str(allowed / "escape" / "hosts")})
    assert_problem(response, 403, "Path not allowed")


@pytest.mark.parametrize(("content", "name", "status", "title"), [
    (b"PNG not a schematic", "image.kicad_sch", 422, "Unreadable design"),
    (b"(kicad_sch (version 20250114) (symbol", "cut.kicad_sch", 422, "Unreadable design"),
    (b"x", "../escape.kicad_sch", 422, "Invalid file name"),
    (b"x", "/abs/escape.kicad_sch", 422, "Invalid file name"),
])
def test_bad_uploads(client, app, content, name, status, title):
    response = client.post("/v1/audits", data={"files": [(io.BytesIO(content), name)]},
                           content_type="multipart/form-data")
    body = assert_problem(response, status, title)
    if name == "cut.kicad_sch":
        assert body["detail"].startswith("cut.kicad_sch:1:")  # line and column named
    assert stored(app) == []


def test_oversize_upload_is_413(client, app):
    big = io.BytesIO(b"(" + b" " * 3_000_000)
    response = client.post("/v1/audits", data={"files": [(big, "big.kicad_sch")]},
                           content_type="multipart/form-data")
    assert_problem(response, 413, "Request Entity Too Large")
    assert stored(app) == []


def test_wrong_content_type_and_bodies(client, app):
    assert_problem(client.post("/v1/audits", data="path=x", content_type="text/plain"), 415,
                   "Unsupported media type")
    assert_problem(client.post("/v1/audits", data="[1]", content_type="application/json"), 400,
                   "Bad request")
    body = assert_problem(client.post("/v1/audits", json={"path": "x", "extra": 1}), 422,
                          "Invalid request")
    assert "extra" in body["errors"]
    assert_problem(client.post("/v1/audits", data={}, content_type="multipart/form-data"), 422,
                   "No files")
    assert_problem(client.get("/v1/audits?limit=0"), 422, "Invalid request")
    assert_problem(client.get("/v1/audits/0123"), 404, "Not found")
    assert_problem(client.get("/v1/nothing"), 404, "Not Found")
    assert_problem(client.delete("/v1/audits"), 405, "Method Not Allowed")
    assert stored(app) == []


def test_token_required_when_set(tmp_path):
    app = create_app({"STORE_PATH": str(tmp_path / "s.sqlite3"), "TOKEN": "s3cret"})
    client = app.test_client()
    assert_problem(client.get("/v1/health"), 401, "Unauthorised")
    assert_problem(client.get("/v1/health", headers={"Authorization": "Bearer wrong"}), 401,
                   "Unauthorised")
    assert client.get("/v1/health", headers={"Authorization": "Bearer s3cret"}).status_code == 200


def test_audit_time_limit(tmp_path):
    app = create_app({"STORE_PATH": str(tmp_path / "s.sqlite3"), "ALLOWED_FOLDERS": [str(FIXTURES)],
                      "AUDIT_TIMEOUT": 0.05, "AUDIT_OVERRIDES": {"mc_samples": 1_000_000}})
    response = app.test_client().post("/v1/audits", json={"path": str(DEMO / "frontend.kicad_sch")})
    assert_problem(response, 503, "Audit timed out")


def test_openapi_document_validates(client):
    from openapi_spec_validator import validate

    validate(client.get("/openapi.json").get_json())


def test_schemathesis_finds_no_5xx_and_no_contract_violation(app):
    import schemathesis
    from hypothesis import HealthCheck, given, settings
    from schemathesis import checks

    schema = schemathesis.openapi.from_wsgi("/openapi.json", app)
    failures = []
    for operation in schema.get_all_operations():
        op = operation.ok()

        @settings(max_examples=15, deadline=None, database=None,
                  suppress_health_check=list(HealthCheck))
        @given(case=op.as_strategy())
        def check(case):
            response = case.call()
            if response.status_code >= 500:
                failures.append((op.label, response.status_code, response.text[:200]))
            # every response must be in the document; a schema-valid request may still be
            # refused (random bytes are not a schematic), so that check is left out
            case.validate_response(response, checks=[
                checks.not_a_server_error, checks.status_code_conformance,
                checks.content_type_conformance, checks.response_schema_conformance])

        check()
    assert failures == []


def test_copies_of_one_design_submitted_by_path_keep_their_own_paths(tmp_path):
    # Guards: two byte-identical designs in two folders, each submitted by path, are each
    # answered with their own file, not with the first one's stored answer.
    for rev in ("rev1", "rev2"):
        (tmp_path / rev).mkdir()
        for name in DEMO_FILES:
            (tmp_path / rev / name).write_bytes((DEMO / name).read_bytes())
    app = create_app({"STORE_PATH": str(tmp_path / "store.sqlite3"),
                      "ALLOWED_FOLDERS": [str(tmp_path)], "AUDIT_OVERRIDES": {"mc_samples": 0}})
    client = app.test_client()
    files = []
    try:
        for rev in ("rev1", "rev2"):
            path = str(tmp_path / rev / "frontend.kicad_sch")
            response = client.post("/v1/audits", json={"path": path})
            assert response.status_code == 201
            (design,) = response.get_json()["result"]["designs"]
            files.append(os.path.realpath(os.path.join(os.getcwd(), design["file"])))
    finally:
        app.extensions["schemcheck.runner"].close()
        app.extensions["schemcheck.store"].close()
    assert files == [os.path.realpath(tmp_path / rev / "frontend.kicad_sch")
                     for rev in ("rev1", "rev2")]
