"""A real server: waitress in a subprocess on an ephemeral loopback port.

Outside source: the behaviour under test is observable over HTTP only (status codes
and bodies of RFC 9110); each submitted design carries a Vos field whose value the
answer must echo, so every answer can be matched to its request.
"""

from __future__ import annotations

import importlib.util
import json
import os
import signal
import socket
import subprocess
import sys
import time
from concurrent.futures import ThreadPoolExecutor

import pytest

from .conftest import FIXTURES, ROOT, needs_proc, session_processes, wait_session_empty
from .make_demo import stage
from .synth import Sheet

spec = importlib.util.spec_from_file_location("action", ROOT / "scripts" / "schemcheck_action.py")
action = importlib.util.module_from_spec(spec)
spec.loader.exec_module(action)

CLIENTS, EACH = 20, 10


def free_port() -> int:
    with socket.socket() as sock:
        sock.bind(("127.0.0.1", 0))
        return sock.getsockname()[1]


def start(store, port, *extra, token=None):
    # a session of its own: every process the service starts can be found (and must end)
    proc = subprocess.Popen([sys.executable, "-m", "schemcheck", "serve", "--port", str(port),
                             "--store", str(store), "--samples", "200", *extra], cwd=ROOT,
                            stdout=subprocess.DEVNULL, stderr=subprocess.PIPE,
                            start_new_session=True)
    url = f"http://127.0.0.1:{port}"
    for _ in range(200):
        try:
            status, _ = action.request(f"{url}/v1/health", token, timeout=1)
            if status == 200:
                return proc, url
        except OSError:
            time.sleep(0.1)
    proc.kill()
    raise RuntimeError(proc.stderr.read().decode())


def design(folder, client, n) -> str:
    vos_uv = 100 + client * EACH + n  # distinct per submission
    sheet = Sheet(project="srv", seed=client * 100 + n)
    stage(sheet, 76.2, 76.2, ref="U1", unit=1, value="OPX", rp="9k1",
          fields={"Vos": f"{vos_uv}uV", "Ib": "20nA", "Ios": "2nA"})
    path = folder / f"c{client}_{n}.kicad_sch"
    path.write_text(sheet.text(), encoding="utf-8")
    return str(path)


@pytest.fixture
def server(tmp_path):
    store = tmp_path / "store.sqlite3"
    port = free_port()
    proc, url = start(store, port)
    server = {"proc": proc, "url": url, "store": store, "port": port}
    yield server
    stop(server["proc"])


def stop(proc) -> None:
    """Stop a service as its user would (SIGTERM) and make sure nothing of it is left."""
    proc.terminate()
    try:
        proc.wait(timeout=30)
    except subprocess.TimeoutExpired:
        proc.kill()
        proc.wait()
    proc.stderr.close()
    wait_session_empty(proc.pid)


def test_concurrent_clients_nothing_lost_and_restart(server, tmp_path):
    folder = tmp_path / "designs"
    folder.mkdir()
    jobs = [(c, n, design(folder, c, n)) for c in range(CLIENTS) for n in range(EACH)]

    def submit(job):
        client, n, path = job
        body, content_type = action.encode_multipart([path], str(folder))
        status, payload = action.request(f"{server['url']}/v1/audits", None, body, content_type)
        return client, n, status, json.loads(payload)

    with ThreadPoolExecutor(max_workers=CLIENTS) as pool:
        answers = list(pool.map(submit, jobs))
    assert all(status == 201 for _, _, status, _ in answers)
    for client, n, _, body in answers:
        vos = body["result"]["designs"][0]["stages"][0]["params"]["vos"]
        assert vos == pytest.approx((100 + client * EACH + n) * 1e-6, rel=1e-12)
    ids = {body["id"] for *_, body in answers}
    assert len(ids) == CLIENTS * EACH
    status, payload = action.request(f"{server['url']}/v1/audits?limit=500", None)
    assert len(json.loads(payload)["audits"]) == CLIENTS * EACH
    # restart on the same store: every result still readable
    stop(server["proc"])
    proc, url = start(server["store"], server["port"])
    server["proc"] = proc
    for audit_id in list(ids)[:50]:
        status, payload = action.request(f"{url}/v1/audits/{audit_id}", None)
        assert status == 200 and json.loads(payload)["id"] == audit_id


def test_editor_action_via_service_and_fallback(server, tmp_path, monkeypatch):
    folder = tmp_path / "board"
    folder.mkdir()
    for name in os.listdir(FIXTURES / "demo"):
        (folder / name).write_bytes((FIXTURES / "demo" / name).read_bytes())
    root = str(folder / "frontend.kicad_sch")
    assert action.main([root, "--url", server["url"]]) == 1  # the demo has error findings
    checklist = (folder / "frontend.dc-checklist.md").read_text(encoding="utf-8")
    assert "`no-bias-path`" in checklist and "`over-budget`" in checklist
    (folder / "frontend.dc-checklist.md").unlink()
    assert action.main([root, "--url", f"http://127.0.0.1:{free_port()}"]) == 1  # no service
    assert "`bias-resistor-mismatch`" in (folder / "frontend.dc-checklist.md").read_text(
        encoding="utf-8")


def test_non_loopback_needs_token():
    proc = subprocess.run([sys.executable, "-m", "schemcheck", "serve", "--host", "0.0.0.0"],
                          capture_output=True, text=True, timeout=60, cwd=ROOT,
                          env={k: v for k, v in os.environ.items() if k != "SCHEMCHECK_TOKEN"})
    assert proc.returncode == 2
    assert "any address but loopback needs a token" in proc.stderr


@needs_proc
@pytest.mark.parametrize("how", [signal.SIGTERM, signal.SIGINT, signal.SIGKILL],
                         ids=["sigterm", "ctrl-c", "kill-9"])
def test_stopped_service_leaves_no_process(tmp_path, how):
    # Outside source: the process table itself (Linux /proc): after the service is
    # stopped, its session holds no process (server, forkserver, workers, resource
    # tracker).
    proc, url = start(tmp_path / "store.sqlite3", free_port())
    try:
        body, content_type = action.encode_multipart([design(tmp_path, 0, 0)], str(tmp_path))
        status, _ = action.request(f"{url}/v1/audits", None, body, content_type)
        assert status == 201
        running = session_processes(proc.pid)
        assert any("forkserver" in command for _, command in running)  # workers were started
        proc.send_signal(how)
        proc.wait(timeout=30)
        left = wait_session_empty(proc.pid)
    finally:
        if proc.poll() is None:
            proc.kill()
            proc.wait()
        proc.stderr.close()
    assert left == []


@needs_proc
def test_suite_leaves_no_process(tmp_path):
    # The suite's own clean-up, proved on a run of the tests that start workers in the
    # test process (the app fixture) and a service in a subprocess: once that run ends,
    # its session holds no process.
    run = subprocess.Popen(
        [sys.executable, "-m", "pytest", "-q", "-p", "no:cacheprovider",
         "--basetemp", str(tmp_path / "inner"),
         "tests/test_api.py::test_upload_audits_the_hierarchy",
         "tests/test_server.py::test_editor_action_via_service_and_fallback"],
        cwd=ROOT, stdout=subprocess.PIPE, stderr=subprocess.STDOUT, start_new_session=True)
    output, _ = run.communicate(timeout=300)
    left = wait_session_empty(run.pid)
    assert run.returncode == 0, output.decode(errors="replace")[-2000:]
    assert left == []


def raw(port: int, request: bytes, wait: float = 20.0) -> tuple[int, dict[str, str], bytes]:
    """Send ``request`` as is; the status, headers (lower-case names) and body answered."""
    with socket.create_connection(("127.0.0.1", port), timeout=wait) as sock:
        sock.sendall(request)
        data = b""
        while b"\r\n\r\n" not in data or len(data) < _length(data):
            chunk = sock.recv(65536)
            if not chunk:
                break
            data += chunk
    head, _, body = data.partition(b"\r\n\r\n")
    lines = head.decode("latin-1").split("\r\n")
    headers = dict((k.strip().lower(), v.strip()) for k, _, v in
                   (line.partition(":") for line in lines[1:]))
    return int(lines[0].split()[1]), headers, body


def _length(data: bytes) -> int:
    head, _, _ = data.partition(b"\r\n\r\n")
    for line in head.split(b"\r\n"):
        if line.lower().startswith(b"content-length:"):
            return len(head) + 4 + int(line.split(b":")[1])
    return len(data) + 1


def _problem(status, headers, body, expected_status, title):
    assert status == expected_status
    assert headers["content-type"] == "application/problem+json"
    assert headers["x-content-type-options"] == "nosniff"
    document = json.loads(body)
    assert document["status"] == expected_status and document["title"] == title
    return document


@pytest.fixture
def small_server(tmp_path):
    """A service with a 1 MB upload limit and a token."""
    port = free_port()
    proc, url = start(tmp_path / "store.sqlite3", port, "--max-upload", "1", "--token", "T0k",
                      token="T0k")
    yield port
    stop(proc)


def test_declared_oversize_body_refused_before_reading(small_server):
    # Outside source: RFC 9110 §15.5.14 (413). 2 GB declared, 1 KB sent: the answer comes
    # without the rest (a server reading the body first would wait for it until the
    # socket's time limit).
    head = (b"POST /v1/audits HTTP/1.1\r\nHost: 127.0.0.1\r\nAuthorization: Bearer T0k\r\n"
            b"Content-Type: multipart/form-data; boundary=x\r\n"
            b"Content-Length: 2147483648\r\n\r\n")
    document = _problem(*raw(small_server, head + b"x" * 1024), 413, "Request Entity Too Large")
    assert "2147483648" in document["detail"]


def test_wrong_token_refused_before_reading(small_server):
    # Outside source: RFC 6750 §3 (401 with WWW-Authenticate: Bearer). 100 MB declared.
    head = (b"POST /v1/audits HTTP/1.1\r\nHost: 127.0.0.1\r\n"
            b"Content-Type: application/json\r\nContent-Length: 104857600\r\n\r\n")
    status, headers, body = raw(small_server, head + b"{" * 1024)
    _problem(status, headers, body, 401, "Unauthorised")
    assert headers["www-authenticate"].startswith("Bearer ")


def test_chunked_body_over_the_limit_is_a_problem_document(small_server):
    chunk = b"x" * 65536
    body = b"".join(b"%x\r\n%s\r\n" % (len(chunk), chunk) for _ in range(20)) + b"0\r\n\r\n"
    head = (b"POST /v1/audits HTTP/1.1\r\nHost: 127.0.0.1\r\nAuthorization: bearer T0k\r\n"
            b"Content-Type: application/json\r\nTransfer-Encoding: chunked\r\n\r\n")
    _problem(*raw(small_server, head + body), 413, "Request Entity Too Large")


def test_rebinding_and_cross_site_posts_refused_over_the_wire(server, tmp_path):
    port = server["port"]
    status, headers, body = raw(port, b"GET /v1/health HTTP/1.1\r\nHost: attacker.example:"
                                + str(port).encode() + b"\r\n\r\n")
    _problem(status, headers, body, 403, "Host not allowed")
    # the form a page of another site submits: multipart, its own Origin, no custom header
    form = (b"--b\r\nContent-Disposition: form-data; name=\"files\"; filename=\"x.kicad_sch\""
            b"\r\n\r\n" + (FIXTURES / "demo" / "chain.kicad_sch").read_bytes() + b"\r\n--b--\r\n")
    for origin in (b"Origin: http://attacker.example\r\n", b""):
        head = (b"POST /v1/audits HTTP/1.1\r\nHost: 127.0.0.1:" + str(port).encode() + b"\r\n"
                + origin + b"Content-Type: multipart/form-data; boundary=b\r\n"
                b"Content-Length: " + str(len(form)).encode() + b"\r\n\r\n")
        status, headers, body = raw(port, head + form)
        assert status == 403 and json.loads(body)["title"] in ("Cross-site request refused",
                                                               "Cross-site form refused")
    _, payload = action.request(f"{server['url']}/v1/audits?limit=500", None)
    assert json.loads(payload)["audits"] == []  # nothing was stored
