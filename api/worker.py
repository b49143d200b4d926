"""Run one audit in a separate process with a time limit, a bounded number at once."""

from __future__ import annotations

import multiprocessing
import threading
from typing import Any

from .problems import Problem

_CONTEXT = multiprocessing.get_context("forkserver")
_CONTEXT.set_forkserver_preload(["schemcheck.batch", "schemcheck.audit", "numpy"])


def _run(connection, paths: list[str], overrides: dict[str, Any]) -> None:
    from schemcheck.batch import audit_paths

    try:
        connection.send(("ok", audit_paths(paths, overrides=overrides, jobs=1, cache=None)))
    except BaseException as error:  # noqa: BLE001 - reported to the parent, never lost
        connection.send(("error", f"{type(error).__name__}: {error}"))
    finally:
        connection.close()


class AuditRunner:
    def __init__(self, max_concurrent: int, timeout: float, queue_wait: float = 30.0) -> None:
        self.slots = threading.BoundedSemaphore(max_concurrent)
        self.timeout = timeout
        self.queue_wait = queue_wait

    def run(self, paths: list[str], overrides: dict[str, Any]) -> dict[str, Any]:
        if not self.slots.acquire(timeout=self.queue_wait):
            raise Problem(503, "Busy", f"every audit slot stayed busy for {self.queue_wait:g} s; "
                                       "try again shortly", )
        try:
            parent, child = _CONTEXT.Pipe(duplex=False)
            process = _CONTEXT.Process(target=_run, args=(child, paths, overrides), daemon=True)
            process.start()
            child.close()
            if not parent.poll(self.timeout):
                process.kill()
                process.join()
                raise Problem(503, "Audit timed out", f"the audit took longer than "
                                                      f"{self.timeout:g} s and was stopped")
            try:
                status, payload = parent.recv()
            except EOFError:
                status, payload = "error", "the audit process ended without an answer"
            process.join()
            if status != "ok":
                raise Problem(500, "Internal error", payload)
            return payload
        finally:
            self.slots.release()
