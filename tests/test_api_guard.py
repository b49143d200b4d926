"""Who may talk to the service: Host, Origin, cross-site forms, through Flask's client.

Outside sources: RFC 9110 §7.2 (Host names the target authority) and RFC 6454 (an
origin is scheme, host and port; the Origin header names the page's origin); the Fetch
standard's "simple" (CORS-safelisted) requests: a page of another site may send a
multipart/form-data, application/x-www-form-urlencoded or text/plain POST without the
server's consent, but no request with a custom header or with Content-Type
application/json. The attacks replayed are the issue's: DNS rebinding (a foreign Host)
and a cross-site form post.
"""

from __future__ import annotations

import io

import pytest
from schemcheck_api.guard import allowed_hosts, host_name

from .conftest import FIXTURES
from .test_api import CLIENT, assert_problem, stored

DEMO = FIXTURES / "demo"


@pytest.fixture
def app(make_app, tmp_path):
    return make_app({"STORE_PATH": str(tmp_path / "store.sqlite3"),
                     "ALLOWED_FOLDERS": [str(FIXTURES)], "AUDIT_OVERRIDES": {"mc_samples": 0}})


def _chain():
    return {"files": [(io.BytesIO((DEMO / "chain.kicad_sch").read_bytes()), "chain.kicad_sch")]}


@pytest.mark.parametrize("host", ["localhost", "localhost:8765", "127.0.0.1:8765", "[::1]:8765",
                                  "LOCALHOST"])
def test_loopback_host_names_are_served(app, host):
    assert app.test_client().get("/v1/health", headers={"Host": host}).status_code == 200


@pytest.mark.parametrize("host", ["attacker.example", "attacker.example:8765", "127.0.0.1.nip.io",
                                  "localhost.attacker.example"])
def test_foreign_host_is_refused(app, host):
    client = app.test_client()
    assert_problem(client.get("/v1/health", headers={"Host": host}), 403, "Host not allowed")
    response = client.post("/v1/audits", data=_chain(), content_type="multipart/form-data",
                           headers={"Host": host, **CLIENT})
    assert_problem(response, 403, "Host not allowed")
    assert stored(app) == []


@pytest.mark.parametrize("headers", [{"Origin": "http://attacker.example"},
                                     {"Origin": "null"},
                                     {"Origin": "http://localhost:3000"},
                                     {"Origin": "https://localhost"},
                                     {"Sec-Fetch-Site": "cross-site"},
                                     {"Sec-Fetch-Site": "same-site"}],
                         ids=["other-site", "opaque", "other-port", "other-scheme",
                              "fetch-cross-site", "fetch-same-site"])
def test_requests_from_another_site_are_refused(app, headers):
    client = app.test_client()
    response = client.post("/v1/audits", data=_chain(), content_type="multipart/form-data",
                           headers={**headers, **CLIENT})
    assert_problem(response, 403, "Cross-site request refused")
    assert_problem(client.get("/v1/audits", headers=headers), 403, "Cross-site request refused")
    assert stored(app) == []


def test_same_origin_is_served(app):
    response = app.test_client().post(
        "/v1/audits", data=_chain(), content_type="multipart/form-data",
        headers={"Origin": "http://localhost", "Sec-Fetch-Site": "same-origin", **CLIENT})
    assert response.status_code == 201


def test_simple_cross_site_form_posts_are_never_accepted(app):
    client = app.test_client()
    # the multipart form a page of another site can submit: no custom header, no token
    assert_problem(client.post("/v1/audits", data=_chain(), content_type="multipart/form-data"),
                   403, "Cross-site form refused")
    # the other simple encodings are not ours at all
    for content_type, body in (("application/x-www-form-urlencoded", "path=/etc/passwd"),
                               ("text/plain", '{"path": "/etc/passwd"}')):
        assert_problem(client.post("/v1/audits", data=body, content_type=content_type), 415,
                       "Unsupported media type")
    assert stored(app) == []


def test_the_token_stands_for_the_client_header(make_app, tmp_path):
    app = make_app({"STORE_PATH": str(tmp_path / "s.sqlite3"), "TOKEN": "s3cret",
                    "AUDIT_OVERRIDES": {"mc_samples": 0}})
    response = app.test_client().post("/v1/audits", data=_chain(),
                                      content_type="multipart/form-data",
                                      headers={"Authorization": "Bearer s3cret"})
    assert response.status_code == 201


@pytest.mark.parametrize(("bound", "extra", "expected"), [
    ("127.0.0.1", (), ["127.0.0.1", "localhost", "::1"]),
    ("::1", ("box.lan",), ["::1", "localhost", "127.0.0.1", "box.lan"]),
    ("0.0.0.0", (), None),
])
def test_host_names_of_a_binding(bound, extra, expected):
    assert allowed_hosts(bound, extra) == expected


@pytest.mark.parametrize(("header", "name"), [("[::1]:80", "::1"), ("LocalHost.:8765", "localhost"),
                                              ("127.0.0.1", "127.0.0.1"), ("::1", "::1")])
def test_host_name_parsing(header, name):
    assert host_name(header) == name
