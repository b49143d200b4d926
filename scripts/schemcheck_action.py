#!/usr/bin/env python3
"""Editor action for schemcheck: audit the schematic (or exported netlist) you are
editing and write its DC error checklist next to it.

Standard library only, so it runs in the schematic editor's own Python. It posts the
design (the root sheet, its child sheets, and a schemcheck.toml and the parts library
it names, when present) to a running ``schemcheck serve``; when no service answers it
runs the audit in-process (if the schemcheck package is importable) or through the
``schemcheck`` command. The design's files are those schemcheck's own resolver names
(``schemcheck/io/resolve.py``, standard library only too: from the installed package,
or from the source tree this script sits in).

    python3 schemcheck_action.py board.kicad_sch [--url http://127.0.0.1:8765] [--token T]
                                 [--open]

Writes ``board.dc-checklist.md`` beside the design and prints a one-screen summary; with
``--open`` also writes the HTML report ``board.dc-report.html`` and opens it in the
default browser.
Exit status: 0 no error finding, 1 error findings, 2 the audit could not be run.
"""

from __future__ import annotations

import argparse
import importlib.util
import json
import os
import subprocess
import sys
import urllib.error
import urllib.request
import uuid
import webbrowser
from pathlib import Path

_HERE = os.path.dirname(os.path.abspath(__file__))


def _resolver():
    """schemcheck's own resolver of a design's files (:mod:`schemcheck.io.resolve`): from
    the installed package, else from the source tree this script sits in; None when
    neither is here (the audit then runs through the ``schemcheck`` command)."""
    try:
        from schemcheck.io import resolve

        return resolve
    except ImportError:
        pass
    path = os.path.join(_HERE, os.pardir, "schemcheck", "io", "resolve.py")
    if not os.path.isfile(path):
        return None
    spec = importlib.util.spec_from_file_location("schemcheck_resolve", path)
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


def design_files(root: str) -> list[str]:
    """The root, its child sheets (recursively), and the settings and parts library, as
    schemcheck itself resolves them; a parts library outside the design's folder is left
    out (the service takes only names below the root's folder)."""
    resolver = _resolver()
    if resolver is None:
        raise LookupError("schemcheck's resolver of design files is not importable here")
    base = os.path.dirname(resolver.normalised(root))
    return list(resolver.sheet_files(root)) + [
        f for f in resolver.support_files(root) if f.startswith(base + os.sep)]


def encode_multipart(files: list[str], base: str) -> tuple[bytes, str]:
    """multipart/form-data with every file in the field 'files', named relative to base."""
    boundary = uuid.uuid4().hex
    parts = []
    for path in files:
        name = os.path.relpath(path, base).replace(os.sep, "/")
        with open(path, "rb") as handle:
            content = handle.read()
        parts.append(
            f'--{boundary}\r\nContent-Disposition: form-data; name="files"; filename="{name}"\r\n'
            f"Content-Type: application/octet-stream\r\n\r\n".encode() + content + b"\r\n")
    body = b"".join(parts) + f"--{boundary}--\r\n".encode()
    return body, f"multipart/form-data; boundary={boundary}"


def request(url: str, token: str | None, data: bytes | None = None,
            content_type: str | None = None, timeout: float = 300.0) -> tuple[int, bytes]:
    req = urllib.request.Request(url, data=data, method="POST" if data is not None else "GET")
    # the service takes uploads only from clients that say who they are (a web page of
    # another site cannot send this header)
    req.add_header("X-Schemcheck-Client", "schemcheck-action")
    if content_type:
        req.add_header("Content-Type", content_type)
    if token:
        req.add_header("Authorization", f"Bearer {token}")
    try:
        with urllib.request.urlopen(req, timeout=timeout) as response:
            return response.status, response.read()
    except urllib.error.HTTPError as error:
        return error.code, error.read()


def via_service(design: str, url: str, token: str | None,
                html: bool = False) -> tuple[dict, str, str | None]:
    """(report, checklist, HTML report or None) from the service; raises OSError when it
    does not answer."""
    files = design_files(design)
    body, content_type = encode_multipart(files, os.path.dirname(os.path.abspath(design)))
    status, payload = request(f"{url}/v1/audits", token, body, content_type)
    answer = json.loads(payload.decode("utf-8"))
    if status != 201:
        raise RuntimeError(f"the service refused the design ({status} {answer.get('title')}): "
                           f"{answer.get('detail')}")
    _, checklist = request(f"{url}/v1/audits/{answer['id']}/checklist", token)
    page = None
    if html:
        status, body = request(f"{url}/v1/audits/{answer['id']}/report.html", token)
        if status != 200:
            raise RuntimeError(f"the service gave no HTML report ({status})")
        page = body.decode("utf-8")
    return answer["result"], checklist.decode("utf-8"), page


def in_process(design: str, html: bool = False) -> tuple[dict, str, str | None]:
    try:
        from schemcheck.report.formats import render
        from schemcheck.run.batch import audit_paths, public
    except ImportError:  # not installed here: the command line's JSON instead
        extra = ["--charts"] if html else []
        out = subprocess.run(["schemcheck", "audit", design, "--format", "json", *extra],
                             capture_output=True, text=True)
        if out.returncode == 2 or not out.stdout:
            raise RuntimeError(out.stderr.strip() or "schemcheck could not run") from None
        report = json.loads(out.stdout)
        md = subprocess.run(["schemcheck", "audit", design, "--format", "markdown"],
                            capture_output=True, text=True).stdout
        page = subprocess.run(["schemcheck", "audit", design, "--format", "html"],
                              capture_output=True, text=True, check=False).stdout if html else None
        return report, md, page
    report = public(audit_paths([design], jobs=1,
                                overrides={"charts": True} if html else None))
    return report, render(report, "markdown"), render(report, "html") if html else None


def summary(report: dict) -> str:
    lines = []
    for design in report["designs"]:
        lines.append(f"{design['file']}: {len(design['stages'])} op-amp stages")
        for s in design["stages"]:
            worst = s.get("worst_case_over_temp_v")
            shown = f"{worst * 1e3:.3g} mV" if worst is not None else "unknown"
            verdict = ("FAIL" if s.get("within_budget") is False else
                       "pass" if s.get("within_budget") else s.get("status", ""))
            lines.append(f"  {s['ref']}/{s['unit']:<3} {s['topology']:<15} worst {shown:<10} "
                         f"{verdict}")
        for f in design["findings"]:
            lines.append(f"  {f['severity'].upper():<7} {f['rule']}: {f['ref']} "
                         f"{f['message'][:90]}")
    return "\n".join(lines[:40])


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("design")
    parser.add_argument("--url", default=os.environ.get("SCHEMCHECK_URL", "http://127.0.0.1:8765"))
    parser.add_argument("--token", default=os.environ.get("SCHEMCHECK_TOKEN"))
    parser.add_argument("--open", dest="open_report", action="store_true",
                        help="also write <design>.dc-report.html and open it in the browser")
    args = parser.parse_args(argv)
    try:
        try:
            report, checklist, page = via_service(args.design, args.url.rstrip("/"),
                                                  args.token, args.open_report)
            where = "service"
        except (OSError, urllib.error.URLError, LookupError):
            report, checklist, page = in_process(args.design, args.open_report)
            where = "in-process"
    except (RuntimeError, ValueError) as error:
        print(f"schemcheck: {error}", file=sys.stderr)
        return 2
    stem = os.path.splitext(os.path.abspath(args.design))[0]
    target = f"{stem}.dc-checklist.md"
    with open(target, "w", encoding="utf-8") as handle:
        handle.write(checklist)
    print(summary(report))
    print(f"checklist written to {target} ({where})")
    if page is not None:
        report_path = f"{stem}.dc-report.html"
        with open(report_path, "w", encoding="utf-8") as handle:
            handle.write(page)
        print(f"report written to {report_path}")
        webbrowser.open(Path(report_path).as_uri())
    errors = any(f["severity"] == "error" for d in report["designs"] for f in d["findings"])
    return 1 if errors else 0


if __name__ == "__main__":
    sys.exit(main())
