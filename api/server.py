"""Serve the app with waitress, refusing what the headers already condemn.

* A request that :func:`schemcheck_api.guard.check` refuses (wrong Host, another site,
  wrong token, an upload without the client header, a declared body over the limit) is
  answered as soon as its headers have arrived: waitress would otherwise read the whole
  body (to disk) before the app sees the request.
* waitress's own refusals (a chunked body over the limit, a malformed request) are
  problem documents like every other error of the service.
* SIGTERM and Ctrl-C stop the server and its audit workers; a worker whose server was
  killed outright ends itself (:mod:`schemcheck.run.lifeline`).
"""

from __future__ import annotations

import json
import signal
from http import HTTPStatus
from typing import Any

from flask import Flask
from waitress.channel import HTTPChannel
from waitress.parser import HTTPRequestParser
from waitress.server import BaseWSGIServer, create_server
from waitress.task import ErrorTask
from waitress.utilities import Error, RequestEntityTooLarge

from . import close_app, guard
from .problems import problem_document


class _Refused(Error):
    """A refusal carried through waitress's error path."""

    def __init__(self, refusal: guard.Refusal) -> None:
        super().__init__(refusal.detail)
        self.refusal = refusal
        self.code = refusal.status
        self.reason = HTTPStatus(refusal.status).phrase


class _ProblemErrorTask(ErrorTask):
    """Every error answered by waitress itself, as an RFC 9457 problem document."""

    def execute(self) -> None:
        error = self.request.error
        if isinstance(error, _Refused):
            refusal = error.refusal
        else:
            refusal = guard.Refusal(error.code, error.reason, str(error.body))
        body = json.dumps(problem_document(refusal.status, refusal.title, refusal.detail),
                          separators=(",", ":")).encode()
        self.status = f"{refusal.status} {HTTPStatus(refusal.status).phrase}"
        self.response_headers.extend([("Content-Type", "application/problem+json"),
                                      ("X-Content-Type-Options", "nosniff"),
                                      *refusal.headers])
        self.set_close_on_finish()
        self.content_length = len(body)
        self.write(body)


def _channel_class(config: Any) -> type[HTTPChannel]:
    class GatedParser(HTTPRequestParser):
        def received(self, data: bytes) -> int:
            before = self.headers_finished
            consumed = super().received(data)
            error = self.error  # type: ignore[has-type]  # waitress is not annotated
            if (not before and self.headers_finished and not self.empty
                    and (error is None or isinstance(error, RequestEntityTooLarge))):
                headers = self.headers

                def header(name: str) -> str | None:
                    return headers.get(name.upper().replace("-", "_"))

                refusal = guard.check(self.command, header, config)
                if refusal is not None:
                    self.error = _Refused(refusal)
                    self.expect_continue = False  # no "100 Continue": the body is not wanted
                    self.completed = True
            return consumed

    class GatedChannel(HTTPChannel):
        parser_class = GatedParser
        error_task_class = _ProblemErrorTask

    return GatedChannel


def serve(app: Flask, host: str, port: int, threads: int) -> None:
    """Serve ``app`` on ``host``:``port`` until SIGTERM or Ctrl-C, then stop its workers."""
    limit = app.config["MAX_CONTENT_LENGTH"]
    sockets: dict = {}
    server = create_server(app, map=sockets, host=host, port=port, threads=threads,
                           ident="schemcheck",
                           # a chunked body (no declared length) is cut at the limit too
                           max_request_body_size=(limit + 1) if limit else 1 << 30)
    channel = _channel_class(app.config)
    for dispatcher in list(sockets.values()) + [server]:
        if isinstance(dispatcher, BaseWSGIServer):
            dispatcher.channel_class = channel

    def stop(signum: int, frame: Any) -> None:
        raise KeyboardInterrupt

    previous = signal.signal(signal.SIGTERM, stop)
    try:
        server.run()  # returns on KeyboardInterrupt / SystemExit
    finally:
        signal.signal(signal.SIGTERM, previous)
        close_app(app)
