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

from .conftest import FIXTURES

DEMO = FIXTURES / "demo"
DEMO_FILES = ["frontend.kicad_sch", "photodiode.kicad_sch", "bridge.kicad_sch",
              "acpreamp.kicad_sch", "chain.kicad_sch", "schemcheck.toml", "parts.toml"]


CLIENT = {"X-Schemcheck-Client": "schemcheck-tests"}  # what an upload must carry


@pytest.fixture
def app(make_app, tmp_path):
    return make_app({"STORE_PATH": str(tmp_path / "store.sqlite3"),
                     "ALLOWED_FOLDERS": [str(FIXTURES)], "MAX_CONTENT_LENGTH": 2_000_000,
                     "AUDIT_OVERRIDES": {"mc_samples": 300}, "AUDIT_TIMEOUT": 60})


@pytest.fixture
def client(app):
    return app.test_client()


def upload(client, names=DEMO_FILES, folder=DEMO):
    files = [(io.BytesIO((folder / n).read_bytes()), n) for n in names]
    return client.post("/v1/audits", data={"files": files}, content_type="multipart/form-data",
                       headers=CLIENT)


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


def test_health_parts_openapi(make_app, tmp_path):
    app = make_app({"STORE_PATH": str(tmp_path / "s.sqlite3"),
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


def test_symlink_out_of_allowed_folder_refused(make_app, tmp_path):
    allowed = tmp_path / "allowed"
    allowed.mkdir()
    os.symlink("/etc", allowed / "escape")
    app = make_app({"STORE_PATH": str(tmp_path / "s.sqlite3"), "ALLOWED_FOLDERS": [str(allowed)]})
    response = app.test_client().post("/v1/audits",
                                      json={"path": str(allowed / "escape" / "hosts")})
    assert_problem(response, 403, "Path not allowed")


@pytest.mark.parametrize(("content", "name", "status", "title"), [
    (b"PNG not a schematic", "image.kicad_sch", 422, "Unreadable design"),
    (b"(kicad_sch (version 20250114) (symbol", "cut.kicad_sch", 422, "Unreadable design"),
    (b"x", "../escape.kicad_sch", 422, "Invalid file name"),
    (b"x", "/abs/escape.kicad_sch", 422, "Invalid file name"),
])
def test_bad_uploads(client, app, content, name, status, title):
    response = client.post("/v1/audits", data={"files": [(io.BytesIO(content), name)]},
                           content_type="multipart/form-data", headers=CLIENT)
    body = assert_problem(response, status, title)
    if name == "cut.kicad_sch":
        assert body["detail"].startswith("cut.kicad_sch:1:")  # line and column named
    assert stored(app) == []


def test_oversize_upload_is_413(client, app):
    big = io.BytesIO(b"(" + b" " * 3_000_000)
    response = client.post("/v1/audits", data={"files": [(big, "big.kicad_sch")]},
                           content_type="multipart/form-data", headers=CLIENT)
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
    assert_problem(client.post("/v1/audits", data={}, content_type="multipart/form-data",
                               headers=CLIENT), 422,
                   "No files")
    assert_problem(client.get("/v1/audits?limit=0"), 422, "Invalid request")
    assert_problem(client.get("/v1/audits/0123"), 404, "Not found")
    assert_problem(client.get("/v1/nothing"), 404, "Not Found")
    assert_problem(client.delete("/v1/audits"), 405, "Method Not Allowed")
    assert stored(app) == []


def test_token_required_when_set(make_app, tmp_path):
    app = make_app({"STORE_PATH": str(tmp_path / "s.sqlite3"), "TOKEN": "s3cret"})
    client = app.test_client()
    assert_problem(client.get("/v1/health"), 401, "Unauthorised")
    assert_problem(client.get("/v1/health", headers={"Authorization": "Bearer wrong"}), 401,
                   "Unauthorised")
    assert client.get("/v1/health", headers={"Authorization": "Bearer s3cret"}).status_code == 200


def test_audit_time_limit(make_app, tmp_path):
    app = make_app({"STORE_PATH": str(tmp_path / "s.sqlite3"), "ALLOWED_FOLDERS": [str(FIXTURES)],
                      "AUDIT_TIMEOUT": 0.05, "AUDIT_OVERRIDES": {"mc_samples": 1_000_000}})
    response = app.test_client().post("/v1/audits", json={"path": str(DEMO / "frontend.kicad_sch")})
    assert_problem(response, 503, "Audit timed out")


def test_openapi_document_validates(client):
    from openapi_spec_validator import validate

    validate(client.get("/openapi.json").get_json())


def test_schemathesis_finds_no_failure_but_unreadable_bytes(app):
    # Every check schemathesis has (server errors, status codes, content types, response
    # schemas, schema-valid requests accepted, ...) on examples derived from a fixed seed
    # (derandomize): the run is the same every time. The one failure the document allows
    # is its own 422: random bytes uploaded as a design are a schema-valid request the
    # service cannot read. (An earlier, randomly seeded run failed now and then because
    # hypothesis drew a JSON path holding a NUL character, answered 500; the document now
    # excludes such paths and the service answers 422 for them.)
    import schemathesis
    from hypothesis import HealthCheck, given, settings
    from schemathesis.core.failures import FailureGroup
    from schemathesis.openapi.checks import RejectedPositiveData

    schema = schemathesis.openapi.from_wsgi("/openapi.json", app)
    failures, allowed = [], []
    for operation in schema.get_all_operations():
        op = operation.ok()

        @settings(max_examples=25, deadline=None, database=None, derandomize=True,
                  suppress_health_check=list(HealthCheck))
        @given(case=op.as_strategy())
        def check(case):
            response = case.call()
            try:
                case.validate_response(response)
            except FailureGroup as group:
                for failure in group.exceptions:
                    title = response.json().get("title") if response.status_code == 422 else ""
                    # check() runs at once, within this iteration of op
                    if (isinstance(failure, RejectedPositiveData)
                            and op.label == "POST /v1/audits"  # noqa: B023
                            and title == "Unreadable design"):
                        allowed.append(failure)
                    else:
                        failures.append((op.label,  # noqa: B023
                                         response.status_code, type(failure).__name__,
                                         response.text[:300]))

        check()
    assert failures == []
    assert allowed  # the documented 422 was reached: uploads got through to the reader


# --- what a design may pull in -------------------------------------------------------
# Outside source for every expectation below: the attack, replayed; the service
# must answer 403 naming the reference, identically whether the file outside exists, is
# missing or is a FIFO (a FIFO would hang a reader that opened it, so an answer at all
# proves it was not opened).


def _root_naming(child: str) -> bytes:
    from .synth import Sheet

    top = Sheet(project="probe", seed=3)
    top.sheet("Probe", child, 100, 50, [])
    return top.text().encode("utf-8")


@pytest.fixture
def outside(tmp_path):
    folder = tmp_path / "outside"
    folder.mkdir()
    (folder / "real.kicad_sch").write_bytes((DEMO / "chain.kicad_sch").read_bytes())
    os.mkfifo(folder / "pipe.kicad_sch")
    return folder


@pytest.mark.parametrize("target", ["real.kicad_sch", "missing.kicad_sch", "pipe.kicad_sch"])
def test_upload_child_sheet_outside_is_refused_unopened(client, app, outside, target):
    reference = str(outside / target)
    response = client.post("/v1/audits", data={"files": [(io.BytesIO(_root_naming(reference)),
                                                            "probe.kicad_sch")]},
                           content_type="multipart/form-data", headers=CLIENT)
    body = assert_problem(response, 403, "Path not allowed")
    assert body["errors"]["reference"] == reference
    assert body["detail"] == (f"probe.kicad_sch: the child sheet file {reference!r} lies "
                              "outside the folders this service may read (the upload and the "
                              "allowed folders); it was not opened")
    assert stored(app) == []


@pytest.mark.parametrize("reference", ["/etc/passwd", "/proc/self/environ",
                                       "../../../../../../etc/hostname"])
def test_upload_child_sheet_system_files_refused(client, reference):
    response = client.post("/v1/audits", data={"files": [(io.BytesIO(_root_naming(reference)),
                                                            "probe.kicad_sch")]},
                           content_type="multipart/form-data", headers=CLIENT)
    body = assert_problem(response, 403, "Path not allowed")
    assert body["errors"]["reference"] == reference and "root:" not in body["detail"]


def test_allowed_folder_design_reaching_out_is_refused(make_app, tmp_path, outside):
    allowed = tmp_path / "allowed" / "project"
    allowed.mkdir(parents=True)
    (allowed / "top.kicad_sch").write_bytes(_root_naming("../../outside/real.kicad_sch"))
    app = make_app({"STORE_PATH": str(tmp_path / "s.sqlite3"),
                    "ALLOWED_FOLDERS": [str(tmp_path / "allowed")]})
    response = app.test_client().post("/v1/audits", json={"path": str(allowed / "top.kicad_sch")})
    body = assert_problem(response, 403, "Path not allowed")
    assert body["errors"]["reference"] == "../../outside/real.kicad_sch"
    # a symbolic link inside the allowed folder leads out just the same
    os.symlink(outside / "real.kicad_sch", allowed / "link.kicad_sch")
    (allowed / "top.kicad_sch").write_bytes(_root_naming("link.kicad_sch"))
    response = app.test_client().post("/v1/audits", json={"path": str(allowed / "top.kicad_sch")})
    assert assert_problem(response, 403, "Path not allowed")["errors"]["reference"] == \
        "link.kicad_sch"


@pytest.mark.parametrize("library", ["/etc/passwd", "../../outside/parts.toml"])
def test_uploaded_settings_naming_a_library_outside_is_refused(client, app, library):
    files = [(io.BytesIO((DEMO / "chain.kicad_sch").read_bytes()), "chain.kicad_sch"),
             (io.BytesIO(f'parts_library = "{library}"\n'.encode()), "schemcheck.toml")]
    response = client.post("/v1/audits", data={"files": files},
                           content_type="multipart/form-data", headers=CLIENT)
    body = assert_problem(response, 403, "Path not allowed")
    assert body["errors"]["what"] == "parts library" and "outside the folders" in body["detail"]
    assert stored(app) == []


def test_service_parts_library_stays_readable(make_app, tmp_path):
    # the operator's own --parts library lies outside every upload: it is allowed
    app = make_app({"STORE_PATH": str(tmp_path / "s.sqlite3"),
                    "AUDIT_OVERRIDES": {"mc_samples": 0,
                                        "parts_library": str(DEMO / "parts.toml")}})
    files = [(io.BytesIO((DEMO / "chain.kicad_sch").read_bytes()), "chain.kicad_sch")]
    response = app.test_client().post("/v1/audits", data={"files": files},
                                      content_type="multipart/form-data", headers=CLIENT)
    assert response.status_code == 201


def test_allowed_folder_device_and_fifo_are_not_read(make_app, tmp_path):
    folder = tmp_path / "allowed"
    folder.mkdir()
    os.symlink("/dev/zero", folder / "zero.kicad_sch")
    os.mkfifo(folder / "pipe.kicad_sch")
    (folder / "top.kicad_sch").write_bytes(_root_naming("pipe.kicad_sch"))
    app = make_app({"STORE_PATH": str(tmp_path / "s.sqlite3"), "ALLOWED_FOLDERS": [str(folder)],
                    "AUDIT_TIMEOUT": 60})
    client = app.test_client()
    # the link resolves to /dev/zero, outside the folder: refused before anything is read
    assert_problem(client.post("/v1/audits", json={"path": str(folder / "zero.kicad_sch")}), 403,
                   "Path not allowed")
    # a FIFO inside the folder, named directly or as a child sheet: said what it is
    for name in ("pipe.kicad_sch", "top.kicad_sch"):
        body = assert_problem(client.post("/v1/audits", json={"path": str(folder / name)}), 422,
                              "Unreadable design")
        assert "found a FIFO (named pipe): not a regular file" in body["detail"]


# --- HTTP details --------------------------------------------------------------------


@pytest.mark.parametrize("path", ["a\u0000b", "\ud800", "/tmp/\udcff"])
def test_json_path_no_file_can_have_is_422(client, path):
    body = assert_problem(client.post("/v1/audits", json={"path": path}), 422, "Invalid request")
    assert "path" in body["errors"]


def test_json_nested_too_deeply_is_400(client):
    deep = "[" * 100_000 + "]" * 100_000
    assert_problem(client.post("/v1/audits", data=deep, content_type="application/json"), 400,
                   "Bad request")


@pytest.mark.parametrize("names", [["a\u0000b.kicad_sch"], ["x" * 300 + ".kicad_sch"],
                                   ["."], ["./"], ["a/" + "y" * 256], ["a", "a/b.kicad_sch"],
                                   ["a/b.kicad_sch", "a"], ["a/\x7f.kicad_sch"]],
                         ids=["nul", "300-chars", "dot", "dot-slash", "long-part",
                              "file-then-folder", "folder-then-file", "control-character"])
def test_odd_upload_names_are_422(client, app, names):
    files = [(io.BytesIO(b"(kicad_sch)"), name) for name in names]
    response = client.post("/v1/audits", data={"files": files},
                           content_type="multipart/form-data", headers=CLIENT)
    assert_problem(response, 422, "Invalid file name")
    assert stored(app) == []


def test_405_names_the_allowed_methods(client):
    response = client.delete("/v1/audits")
    assert_problem(response, 405, "Method Not Allowed")
    assert set(response.headers["Allow"].replace(" ", "").split(",")) >= {"GET", "POST"}


def test_every_answer_says_nosniff(client):
    for response in (client.get("/v1/health"), client.get("/v1/nothing"),
                     client.post("/v1/audits", json={"path": "/etc/passwd"}),
                     client.get("/openapi.json")):
        assert response.headers["X-Content-Type-Options"] == "nosniff"


def test_token_scheme_case_and_challenge(make_app, tmp_path):
    # RFC 9110 §11.1: the auth-scheme is case-insensitive; RFC 6750 §3: a 401 for a
    # bearer-protected resource carries WWW-Authenticate: Bearer.
    app = make_app({"STORE_PATH": str(tmp_path / "s.sqlite3"), "TOKEN": "s3cret"})
    client = app.test_client()
    for scheme in ("Bearer", "bearer", "BEARER"):
        answer = client.get("/v1/health", headers={"Authorization": f"{scheme} s3cret"})
        assert answer.status_code == 200
    missing = client.get("/v1/health")
    assert missing.headers["WWW-Authenticate"] == 'Bearer realm="schemcheck"'
    wrong = client.get("/v1/health", headers={"Authorization": "Bearer nope"})
    assert wrong.headers["WWW-Authenticate"].startswith("Bearer ")
    assert 'error="invalid_token"' in wrong.headers["WWW-Authenticate"]


def test_openapi_requires_the_bearer_scheme_when_the_service_has_a_token(make_app, tmp_path):
    from openapi_spec_validator import validate

    app = make_app({"STORE_PATH": str(tmp_path / "s.sqlite3"), "TOKEN": "s3cret"})
    document = app.test_client().get("/openapi.json",
                                     headers={"Authorization": "Bearer s3cret"}).get_json()
    validate(document)
    assert document["security"] == [{"bearer": []}]
    assert document["components"]["securitySchemes"]["bearer"]["scheme"] == "bearer"


def test_no_nan_reaches_a_service_answer(client, app):
    from schemcheck_api.problems import problem_response

    with app.app_context(), pytest.raises(ValueError):
        problem_response(500, "x", "y", value=float("nan"))  # strict JSON or nothing




def test_copies_of_one_design_submitted_by_path_keep_their_own_paths(tmp_path, make_app):
    # Guards: two byte-identical designs in two folders, each submitted by path, are each
    # answered with their own file, not with the first one's stored answer.
    for rev in ("rev1", "rev2"):
        (tmp_path / rev).mkdir()
        for name in DEMO_FILES:
            (tmp_path / rev / name).write_bytes((DEMO / name).read_bytes())
    app = make_app({"STORE_PATH": str(tmp_path / "store.sqlite3"),
                    "ALLOWED_FOLDERS": [str(tmp_path)], "AUDIT_OVERRIDES": {"mc_samples": 0}})
    client = app.test_client()
    files = []
    for rev in ("rev1", "rev2"):
        path = str(tmp_path / rev / "frontend.kicad_sch")
        response = client.post("/v1/audits", json={"path": path})
        assert response.status_code == 201
        (design,) = response.get_json()["result"]["designs"]
        files.append(os.path.realpath(os.path.join(os.getcwd(), design["file"])))
    assert files == [os.path.realpath(tmp_path / rev / "frontend.kicad_sch")
                     for rev in ("rev1", "rev2")]
