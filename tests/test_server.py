"""A real server: waitress in a subprocess on an ephemeral loopback port.

Outside source: the behaviour under test is observable over HTTP only (status codes
and bodies of RFC 9110); each submitted design carries a Vos field whose value the
answer must echo, so every answer can be matched to its request.
"""

from __future__ import annotations

import importlib.util
import json
import os
import socket
import subprocess
import sys
import time
from concurrent.futures import ThreadPoolExecutor

import pytest

from .conftest import ROOT, FIXTURES
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


def start(store, port):
    proc = subprocess.Popen([sys.executable, "-m", "schemcheck", "serve", "--port", str(port),
                             "--store", str(store), "--samples", "200"], cwd=ROOT,
                            stdout=subprocess.DEVNULL, stderr=subprocess.PIPE)
    url = f"http://127.0.0.1:{port}"
    for _ in range(200):
        try:
            status, _ = action.request(f"{url}/v1/health", None, timeout=1)
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
    yield {"proc": proc, "url": url, "store": store, "port": port}
    proc.kill()
    proc.wait()


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
    server["proc"].terminate()
    server["proc"].wait(timeout=30)
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
