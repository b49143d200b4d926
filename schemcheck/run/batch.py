"""Audit many designs: discovery, per-design settings, the cache, worker processes.

The I/O edge around the pure engine (:func:`schemcheck.audit.audit_netlist`). One
unreadable design becomes a finding on that file and the batch goes on.
"""

from __future__ import annotations

import hashlib
import os
import sys
from concurrent.futures import ProcessPoolExecutor
from dataclasses import replace
from typing import Any, Callable, Iterator

from schemcheck import __version__
from schemcheck.audit import CAUTION
from schemcheck.errors import SchemcheckError
from schemcheck.io.discover import DesignRef, find_designs
from schemcheck.run.settings import Settings

UNREADABLE = "unreadable-design"


def settings_for(root: str, base: Settings, overrides: dict[str, Any],
                 settings_path: str | None = None) -> Settings:
    """Defaults < the settings file beside the design (or ``settings_path``) < options."""
    from schemcheck.io.settings_file import find_settings, load_settings

    path = settings_path or find_settings(root)
    settings = load_settings(path, base) if path else base
    given = set(settings.given) | set(overrides.pop("given", ()))
    return replace(settings, **overrides, given=tuple(sorted(given)))


def design_key_for(design: DesignRef, settings: Settings) -> str | None:
    """The results-store key of ``design`` audited with ``settings`` (None when a file
    cannot be read: such a design is audited, and reported, without the store)."""
    from schemcheck.run.cache import design_key

    try:
        return design_key(design.files, settings.describe(), settings.parts_library)
    except OSError:
        return None


def submission_key(paths: list[str], overrides: dict[str, Any]) -> str:
    """One key for everything under ``paths`` (the service's identical-submission test)."""
    designs, _ = find_designs(paths)
    digest = hashlib.sha256()
    for design in designs:
        try:
            settings = settings_for(design.root, Settings(), dict(overrides))
        except SchemcheckError:
            settings = Settings()  # the audit itself reports the bad settings file
        digest.update((design_key_for(design, settings) or design.root).encode())
    return digest.hexdigest()


def _unreadable(root: str, message: str, settings: Settings | None = None) -> dict[str, Any]:
    return {"file": root, "stages": [], "not_analysed": [], "assumptions": [],
            "settings": (settings or Settings()).describe(), "errors": [message],
            "caution": CAUTION,
            "findings": [{"rule": UNREADABLE, "severity": "error", "ref": "", "unit": None,
                          "message": message, "suggestion": "fix or re-save the file in the "
                          "schematic editor", "sheet": "", "file": root}]}


_LIBRARIES: dict[str, tuple[float, dict]] = {}


def audit_one(root: str, settings: Settings) -> dict[str, Any]:
    """Audit one design; any error of ours becomes an unreadable-design result."""
    from schemcheck.audit import audit_netlist
    from schemcheck.circuit.load import load_netlist
    from schemcheck.io.partslib import load_parts_library

    try:
        library: dict = {}
        if settings.parts_library:
            stamp = os.path.getmtime(settings.parts_library)
            cached = _LIBRARIES.get(settings.parts_library)
            if cached is None or cached[0] != stamp:
                cached = _LIBRARIES[settings.parts_library] = (
                    stamp, load_parts_library(settings.parts_library))
            library = cached[1]
        return audit_netlist(load_netlist(root), settings, library).to_dict()
    except SchemcheckError as error:
        detail = str(error)
        return _unreadable(root, detail, settings)
    except OSError as error:
        return _unreadable(root, f"{root}: could not read ({error.strerror or error})", settings)


def _audit_chunk(tasks: list[tuple[str, Settings]]) -> list[dict[str, Any]]:
    return [audit_one(*task) for task in tasks]


def _in_workers(pool: ProcessPoolExecutor, workers: int,
                tasks: list[tuple[str, Settings]]) -> Iterator[dict[str, Any]]:
    """Results of ``tasks`` in order, audited by the pool in shrinking chunks (guided
    scheduling): one design a message kept each worker waiting on the parent, a third
    process on busy cores, for its next design; fixed large chunks left one worker with
    the last chunk while the other idled. Chunks of a share of what is left make few
    messages and end with single designs."""
    chunks = []
    start = 0
    while start < len(tasks):
        size = max(1, (len(tasks) - start) // (2 * workers))
        chunks.append(tasks[start:start + size])
        start += size
    futures = [pool.submit(_audit_chunk, chunk) for chunk in chunks]
    for future in futures:
        yield from future.result()


def _prepare_workers() -> None:
    """Import and set up here what every audit needs, once, so that forked workers start
    with it instead of each paying for it on its first design."""
    import schemcheck.circuit.load  # noqa: F401
    import schemcheck.io.partslib  # noqa: F401
    from schemcheck.engine.montecarlo import prepare

    prepare()


def audit_paths(paths: list[str], *, base: Settings | None = None,
                overrides: dict[str, Any] | None = None, settings_path: str | None = None,
                jobs: int | None = None, cache: Any = None,
                progress: Callable[[int, int], None] | None = None) -> dict[str, Any]:
    """Audit every design under ``paths``; the report of ``schemcheck audit``."""
    designs, missing = find_designs(paths)
    results: list[dict[str, Any] | None] = [None] * len(designs)
    todo: list[tuple[int, DesignRef, Settings, str | None]] = []
    hits = 0
    for index, design in enumerate(designs):
        try:
            settings = settings_for(design.root, base or Settings(), dict(overrides or {}),
                                    settings_path)
        except SchemcheckError as error:
            results[index] = _unreadable(design.root, str(error))
            continue
        key = None
        if cache is not None:
            key = design_key_for(design, settings)
            hit = cache.get(key) if key else None
            if hit is not None:
                results[index] = hit
                hits += 1
                continue
        todo.append((index, design, settings, key))
    done = len(designs) - len(todo)
    if progress:
        progress(done, len(designs))
    workers = max(1, min(jobs or os.cpu_count() or 1, len(todo)))
    if workers == 1:
        outputs = (audit_one(d.root, s) for _, d, s, _ in todo)
        pool = None
    else:
        _prepare_workers()
        pool = ProcessPoolExecutor(max_workers=workers)
        outputs = _in_workers(pool, workers, [(d.root, s) for _, d, s, _ in todo])
    try:
        for (index, design, _, key), result in zip(todo, outputs):
            results[index] = result
            if cache is not None and key and not result["errors"]:
                cache.put(key, design.root, result)
            done += 1
            if progress:
                progress(done, len(designs))
    finally:
        if pool is not None:
            pool.shutdown()
    for error in missing:
        results.append(_unreadable(error.file or "", str(error)))
    report: dict[str, Any] = {"tool": {"name": "schemcheck", "version": __version__},
                              "designs": [_shown(r) for r in results if r is not None]}
    report["stats"] = {"designs": len(report["designs"]), "from_cache": hits,
                       "audited": len(todo)}
    if cache is not None and cache.warnings:
        report["warnings"] = list(cache.warnings)
    return report


def _display(path: str) -> str:
    """A path as the user sees it: relative to the working folder when inside it."""
    if not path or not os.path.isabs(path):
        return path
    try:
        relative = os.path.relpath(path)
    except ValueError:
        return path
    return path if relative.startswith("..") else relative


def _shown(result: dict[str, Any]) -> dict[str, Any]:
    """A copy of one design's result with its file paths as the user sees them (cached
    results keep absolute paths)."""
    shown = dict(result)
    shown["file"] = _display(result["file"])
    shown["findings"] = [{**f, "file": _display(f.get("file", ""))} for f in result["findings"]]
    return shown


SEVERITY_RANK = {"info": 0, "warning": 1, "error": 2}


def exit_status(report: dict[str, Any], fail_on: str) -> int:
    """2 unreadable input; 1 a finding at or above ``fail_on``; else 0."""
    designs = report["designs"]
    if any(d["errors"] for d in designs):
        return 2
    threshold = SEVERITY_RANK[fail_on]
    if any(SEVERITY_RANK[f["severity"]] >= threshold for d in designs for f in d["findings"]):
        return 1
    return 0


class Progress:
    """A one-line progress bar on a terminal; silent when piped or in CI."""

    def __init__(self, stream=None) -> None:
        self.stream = stream or sys.stderr
        self.enabled = self.stream.isatty() and not os.environ.get("CI")

    def __call__(self, done: int, total: int) -> None:
        if not self.enabled or total == 0:
            return
        width = 30
        filled = width * done // total
        self.stream.write(f"\r[{'#' * filled}{'.' * (width - filled)}] {done}/{total} designs")
        if done == total:
            self.stream.write("\n")
        self.stream.flush()
