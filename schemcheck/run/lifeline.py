"""Worker processes die with the process that started them.

A pool worker waiting for its next task never notices that its parent was killed: it
holds the write end of its own task queue, so the read never ends. Workers started
from a forkserver also keep the forkserver (and through it the resource tracker) alive.
Every worker therefore runs :func:`watch_parent` as its pool initializer: a daemon
thread that ends the worker as soon as the parent is gone, whatever stopped the parent
(SIGKILL included).
"""

from __future__ import annotations

import os
import select
import threading
import time

#: Exit status of a worker whose parent is gone.
ORPHANED = 70


def watch_parent(parent_pid: int, poll_s: float = 0.5) -> None:
    """Start watching ``parent_pid`` from this (worker) process; the process exits with
    :data:`ORPHANED` once that process has ended. On Linux a pidfd wakes the watch at
    once; elsewhere the parent is polled every ``poll_s`` seconds."""
    threading.Thread(target=_watch, args=(parent_pid, poll_s), daemon=True,
                     name="schemcheck-parent-watch").start()


def _alive(pid: int) -> bool:
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:
        return True
    return True


def _watch(parent_pid: int, poll_s: float) -> None:
    try:
        handle = os.pidfd_open(parent_pid)
    except ProcessLookupError:
        os._exit(ORPHANED)
    except (AttributeError, OSError):  # no pidfd here: poll
        while _alive(parent_pid):
            time.sleep(poll_s)
        os._exit(ORPHANED)
    select.select([handle], [], [])  # readable once the process has ended
    os._exit(ORPHANED)
