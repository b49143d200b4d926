"""Request latency of the local service against the in-process audit of the demo.

Starts ``schemcheck serve`` on an ephemeral loopback port and prints p50/p99 of: a
cached audit (an identical re-submission, answered from the store; target p50 under
10 ms) and a fresh audit (new content each time; target within 1.3x of the in-process
audit of the same design, timed in this process).

Run: .venv/bin/python bench/bench_service.py
"""

from __future__ import annotations

import importlib.util
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

from _common import ROOT

from schemcheck.run.batch import audit_paths

spec = importlib.util.spec_from_file_location("action", ROOT / "scripts" / "schemcheck_action.py")
action = importlib.util.module_from_spec(spec)
spec.loader.exec_module(action)

ROUNDS = 30
SAMPLES = 10_000  # the default


def percentile(values: list[float], q: float) -> float:
    ordered = sorted(values)
    return ordered[min(len(ordered) - 1, int(round(q / 100 * (len(ordered) - 1))))]


def main() -> None:
    import socket

    with socket.socket() as sock:
        sock.bind(("127.0.0.1", 0))
        port = sock.getsockname()[1]
    folder = Path(tempfile.mkdtemp(prefix="schemcheck-service-"))
    demo = ROOT / "fixtures" / "demo"
    for item in demo.iterdir():
        (folder / item.name).write_bytes(item.read_bytes())
    root = folder / "frontend.kicad_sch"
    proc = subprocess.Popen([sys.executable, "-m", "schemcheck", "serve", "--port", str(port),
                             "--store", str(folder / "store.sqlite3"), "--samples", str(SAMPLES)],
                            stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    url = f"http://127.0.0.1:{port}"
    try:
        for _ in range(100):
            try:
                if action.request(f"{url}/v1/health", None, timeout=1)[0] == 200:
                    break
            except OSError:
                time.sleep(0.1)

        def post() -> float:
            body, content_type = action.encode_multipart(action.design_files(str(root)),
                                                         str(folder))
            start = time.perf_counter()
            status, _ = action.request(f"{url}/v1/audits", None, body, content_type)
            assert status == 201, status
            return time.perf_counter() - start

        post()
        cached = [post() for _ in range(ROUNDS)]
        fresh = []
        for i in range(ROUNDS // 3):
            (folder / "schemcheck.toml").write_text(
                f"temperature_range = [0, {70 + i}]\nparts_library = \"parts.toml\"\n",
                encoding="utf-8")
            fresh.append(post())
        inproc = []
        for _ in range(ROUNDS // 3):
            start = time.perf_counter()
            audit_paths([str(root)], overrides={"mc_samples": SAMPLES}, jobs=1)
            inproc.append(time.perf_counter() - start)
    finally:
        proc.terminate()
        proc.wait()
    base = statistics.median(inproc)
    print(f"in-process audit of the demo  p50 {base * 1e3:7.1f} ms  (baseline)")
    print(f"cached request                p50 {percentile(cached, 50) * 1e3:7.1f} ms  "
          f"p99 {percentile(cached, 99) * 1e3:7.1f} ms  (target p50 < 10 ms)")
    print(f"fresh request                 p50 {percentile(fresh, 50) * 1e3:7.1f} ms  "
          f"p99 {percentile(fresh, 99) * 1e3:7.1f} ms  ratio {percentile(fresh, 50) / base:4.2f}x"
          "  (target <= 1.3x)")


if __name__ == "__main__":
    main()
