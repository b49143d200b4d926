"""Run audits in a small pool of warm worker processes: a time limit per audit, a bounded
number at once.

The workers start from a forkserver that has already imported and exercised the engine
(:mod:`api.warm`), and they stay up between audits, so an audit costs what it costs in
the CLI. An audit over its time limit is stopped by replacing the pool (its workers are
killed); an audit that was running beside it is answered 503 and can be retried.

Each audit runs confined to the folders its request may read (the upload, the allowed
folders, the service's own parts library). Each worker watches the service's process
and ends itself when the service is gone, however it was stopped (SIGKILL included),
so neither the workers nor, through them, the forkserver and the resource tracker
outlive it.
"""

from __future__ import annotations

import multiprocessing
import os
import threading
from concurrent.futures import ProcessPoolExecutor
from concurrent.futures import TimeoutError as FutureTimeout
from concurrent.futures.process import BrokenProcessPool
from typing import Any

from schemcheck.run.lifeline import watch_parent

from .problems import Problem

_CONTEXT = multiprocessing.get_context("forkserver")
_CONTEXT.set_forkserver_preload(["schemcheck.run.batch", "schemcheck_api.warm"])


def _run(paths: list[str], overrides: dict[str, Any],
         confinement: tuple[list[str], list[str]] | None) -> dict[str, Any]:
    from schemcheck.io.files import confined
    from schemcheck.run.batch import audit_paths, public

    if confinement is None:
        return public(audit_paths(paths, overrides=overrides, jobs=1, cache=None))
    folders, files = confinement
    with confined(folders, files):
        return public(audit_paths(paths, overrides=overrides, jobs=1, cache=None))


class AuditRunner:
    def __init__(self, max_concurrent: int, timeout: float, queue_wait: float = 30.0) -> None:
        self.workers = max_concurrent
        self.slots = threading.BoundedSemaphore(max_concurrent)
        self.timeout = timeout
        self.queue_wait = queue_wait
        self.lock = threading.Lock()
        self.pool: ProcessPoolExecutor | None = None

    def _pool(self) -> ProcessPoolExecutor:
        with self.lock:
            if self.pool is None:
                self.pool = ProcessPoolExecutor(self.workers, mp_context=_CONTEXT,
                                                initializer=watch_parent,
                                                initargs=(os.getpid(),))
            return self.pool

    def _replace(self, broken: ProcessPoolExecutor) -> None:
        with self.lock:
            if self.pool is broken:
                self.pool = None
        for process in list(getattr(broken, "_processes", {}).values()):
            process.kill()
        broken.shutdown(wait=False, cancel_futures=True)

    def run(self, paths: list[str], overrides: dict[str, Any],
            confinement: tuple[list[str], list[str]] | None = None) -> dict[str, Any]:
        """The audit report of ``paths``, audited in a worker (confined to
        ``confinement``'s folders and files, when given)."""
        if not self.slots.acquire(timeout=self.queue_wait):
            raise Problem(503, "Busy", f"every audit slot stayed busy for {self.queue_wait:g} s; "
                                       "try again shortly")
        try:
            pool = self._pool()
            future = pool.submit(_run, paths, overrides, confinement)
            try:
                return future.result(timeout=self.timeout)
            except FutureTimeout:
                self._replace(pool)
                raise Problem(503, "Audit timed out", f"the audit took longer than "
                                                      f"{self.timeout:g} s and was stopped"
                                                      ) from None
            except BrokenProcessPool:
                self._replace(pool)
                raise Problem(503, "Workers restarted", "the audit workers were restarted while "
                                                        "this audit ran; try again") from None
        finally:
            self.slots.release()

    def close(self) -> None:
        """Stop the workers now (an audit still running is abandoned) and wait for them."""
        with self.lock:
            pool, self.pool = self.pool, None
        if pool is not None:
            processes = list(getattr(pool, "_processes", {}).values())
            for process in processes:
                process.kill()
            pool.shutdown(wait=True, cancel_futures=True)
            for process in processes:
                process.join(timeout=5)
