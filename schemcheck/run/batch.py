"""Audit many designs: discovery, per-design settings, the cache, worker processes.

The I/O edge around the pure engine (:func:`schemcheck.audit.audit_netlist`). One
unreadable design becomes a finding on that file and the batch goes on.
"""

from __future__ import annotations

import hashlib
import json
import os
import sys
import traceback
from collections.abc import Callable, Iterator
from concurrent.futures import Future, ProcessPoolExecutor
from dataclasses import replace
from typing import TYPE_CHECKING, Any

from schemcheck import __version__
from schemcheck.errors import ParseError, PathNotAllowedError, SchemcheckError
from schemcheck.io.discover import DesignRef, find_designs
from schemcheck.model import Finding
from schemcheck.report.json import to_data
from schemcheck.results import DesignResult, Report, Tool, missing_across
from schemcheck.run.lifeline import watch_parent
from schemcheck.settings import Settings

if TYPE_CHECKING:
    from schemcheck.engine.partmatch import PartsLibrary

UNREADABLE = "unreadable-design"
AUDIT_FAILED = "audit-failed"


def settings_for(root: str, base: Settings, overrides: dict[str, Any],
                 settings_path: str | None = None) -> Settings:
    """Defaults < the settings file beside the design (or ``settings_path``) < options.
    The user-level parts library is added where the file exists."""
    from schemcheck.io.partslib import user_library_path
    from schemcheck.io.resolve import settings_file
    from schemcheck.io.settings_file import load_settings

    path = settings_file(root, settings_path)
    settings = load_settings(path, base) if path else base
    given = set(settings.given) | set(overrides.pop("given", ()))
    if settings.user_parts_library is None and "user_parts_library" not in overrides:
        user = user_library_path()
        if os.path.isfile(user):
            overrides["user_parts_library"] = user
    if "parts_library" in overrides:  # the option's library, not the file's
        overrides["parts_library_named_at"] = None
    return replace(settings, **overrides, given=tuple(sorted(given)))


def design_key_for(design: DesignRef, settings: Settings) -> str | None:
    """The results-store key of ``design`` audited with ``settings`` (None when a file
    cannot be read: such a design is audited, and reported, without the store)."""
    from schemcheck.run.cache import design_key

    try:
        return design_key(design.files, settings.describe(),
                          [path for _, path in settings.parts_libraries()])
    except (OSError, ParseError):
        return None


def submission_key(paths: list[str], overrides: dict[str, Any], *,
                   located: bool = False) -> str:
    """One key for everything under ``paths`` (the service's identical-submission test).

    The key is the designs' content, wherever they lie; ``located=True`` adds where they
    lie, for answers that name the files where they are (a path submission), so two
    copies of one design in two folders are not answered with each other's paths."""
    designs, _ = find_designs(paths)
    digest = hashlib.sha256()
    if located:
        for design in designs:
            digest.update(design.root.encode() + b"\0")
    for design in designs:
        try:
            settings = settings_for(design.root, Settings(), dict(overrides))
        except PathNotAllowedError:
            raise
        except SchemcheckError:
            settings = Settings()  # the audit itself reports the bad settings file
        digest.update((design_key_for(design, settings) or design.root).encode())
    return digest.hexdigest()


def _unreadable(root: str, message: str, settings: Settings | None = None, *,
                error: SchemcheckError | None = None, rule: str = UNREADABLE,
                suggestion: str = "fix or re-save the file in the schematic editor"
                ) -> dict[str, Any]:
    """The result of a design that could not be audited; the finding points at the file
    (and line and column) ``error`` names, else at ``root``."""
    where = error if isinstance(error, ParseError) else None
    finding = Finding(rule, "error", "", None, message, suggestion,
                      file=(where.file if where and where.file else root),
                      line=where.line if where else None,
                      column=where.column if where else None)
    return to_data(DesignResult(file=root, findings=[finding], errors=[message],
                                settings=(settings or Settings()).describe()))


def _failed(root: str, error: BaseException, settings: Settings | None = None
            ) -> dict[str, Any]:
    """The result of a design whose audit stopped on an error that is not the input's
    fault: that design's error, named with the file; the batch goes on."""
    frames = traceback.extract_tb(error.__traceback__)
    at = f" at {os.path.basename(frames[-1].filename)}:{frames[-1].lineno}" if frames else ""
    message = (f"{root}: the audit of this design stopped on an internal error "
               f"({type(error).__name__}: {error}{at}); the design was not checked")
    return _unreadable(root, message, settings, rule=AUDIT_FAILED,
                       suggestion="report this with the design file; the other designs "
                                  "were audited")


#: path -> (content digest, entries): a library is parsed again only when its content
#: changed (a modification time can stay the same across a quick edit)
_LIBRARIES: dict[str, tuple[str, dict]] = {}


def read_libraries(root: str, settings: Settings) -> PartsLibrary:
    """The parts libraries ``settings`` name, read and laid over each other (a
    :class:`schemcheck.engine.partmatch.PartsLibrary`); paths shown relative to the
    design's folder (the user's library as an absolute path)."""
    from schemcheck.engine.partmatch import LibrarySource, PartsLibrary
    from schemcheck.io.files import regular_file
    from schemcheck.io.partslib import load_parts_library

    layers = []
    folder = os.path.dirname(os.path.abspath(root))
    for origin, path in settings.parts_libraries():
        from schemcheck.run.cache import file_digest

        regular_file(path, "parts library")  # never a device, a FIFO or a folder
        stamp = file_digest(path)
        cached = _LIBRARIES.get(path)
        if cached is None or cached[0] != stamp:
            cached = _LIBRARIES[path] = (stamp, load_parts_library(path))
        shown = path if origin == "user" else os.path.relpath(os.path.abspath(path), folder)
        layers.append((LibrarySource(origin, shown, len(cached[1])), cached[1]))
    return PartsLibrary.layered(layers)


def audit_one(root: str, settings: Settings) -> dict[str, Any]:
    """Audit one design; any error of ours becomes an unreadable-design result."""
    from schemcheck.audit import audit_netlist
    from schemcheck.circuit.load import load_netlist

    try:
        library = read_libraries(root, settings)
        return to_data(audit_netlist(load_netlist(root), settings, library))
    except PathNotAllowedError:
        raise  # the service answers 403: nothing of the design is reported
    except ParseError as error:
        named = settings.parts_library_named_at
        shown = error
        if named and error.file == settings.parts_library and error.line is None:
            # the library itself is missing or not a file: point at the line naming it
            shown = ParseError(f"parts_library {settings.parts_library!r}: {error.message}",
                               file=named[0], line=named[1], column=named[2])
        return _unreadable(root, str(shown), settings)
    except SchemcheckError as error:
        return _unreadable(root, str(error), settings, error=error)
    except OSError as error:
        name = error.filename or root
        return _unreadable(root, f"{name}: could not read ({error.strerror or error})", settings)
    except Exception as error:  # noqa: BLE001 - one design's failure must not lose the batch
        return _failed(root, error, settings)


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
    for future, chunk in zip(futures, chunks):
        yield from _chunk_outcome(future, chunk)


def _chunk_outcome(future: Future, chunk: list[tuple[str, Settings]]) -> list[dict[str, Any]]:
    """The results of one chunk of designs audited by a worker process. A worker that
    died, or any error on the way back, is those designs' error alone."""
    try:
        return future.result()
    except Exception as error:  # noqa: BLE001 - a lost worker must not lose the batch
        return [_failed(root, error, settings) for root, settings in chunk]


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
                progress: Callable[[int, int], None] | None = None,
                found: tuple[list[DesignRef], list[ParseError]] | None = None) -> dict[str, Any]:
    """Audit every design under ``paths``; the report of ``schemcheck audit``.

    ``found`` is the designs and missing paths to audit when the caller has already
    discovered (and chosen among) them; ``paths`` are then not searched again."""
    designs, missing = found if found is not None else find_designs(paths)
    results: list[dict[str, Any] | None] = [None] * len(designs)
    todo: list[tuple[int, DesignRef, Settings, str | None]] = []
    hits = 0
    for index, design in enumerate(designs):
        try:
            settings = settings_for(design.root, base or Settings(), dict(overrides or {}),
                                    settings_path)
        except PathNotAllowedError:
            raise
        except SchemcheckError as error:
            results[index] = _unreadable(design.root, str(error), error=error)
            continue
        key = None
        if cache is not None:
            key = design_key_for(design, settings)
            hit = cache.get(key) if key else None
            if hit is not None:
                results[index] = rerooted(hit, design.root, settings)
                hits += 1
                continue
        todo.append((index, design, settings, key))
    done = len(designs) - len(todo)
    if progress:
        progress(done, len(designs))
    workers = max(1, min(jobs or os.cpu_count() or 1, len(todo)))
    tasks = [(d.root, s) for _, d, s, _ in todo]
    pool = None
    if workers == 1:
        outputs: Iterator[dict[str, Any]] = (audit_one(*task) for task in tasks)
    else:
        _prepare_workers()
        # each worker ends itself when this process dies, even by SIGKILL
        pool = ProcessPoolExecutor(max_workers=workers, initializer=watch_parent,
                                   initargs=(os.getpid(),))
        outputs = _in_workers(pool, workers, tasks)
    try:
        for (index, design, _, key), result in zip(todo, outputs):
            results[index] = result
            if cache is not None and key and not result["errors"]:
                stored = portable(result, design.root)
                if stored is not None:
                    cache.put(key, design.root, stored)
            done += 1
            if progress:
                progress(done, len(designs))
    finally:
        if pool is not None:
            pool.shutdown(cancel_futures=True)  # nothing left to run after an error
    for absent in missing:
        results.append(_unreadable(absent.file or "", str(absent), error=absent))
    shown = [_shown(r) for r in results if r is not None]
    # What depends on the designs only: a run answered from the cache reports the same.
    report = to_data(Report(Tool("schemcheck", __version__), stats={"designs": len(shown)},
                            warnings=list(cache.warnings) if cache is not None else []))
    report["designs"] = shown  # already in their serialised form
    report["missing_parameters"] = to_data(missing_across(shown))
    # How this run got there: not part of the report (see :func:`public`).
    report["run"] = {"from_cache": hits, "audited": len(todo)}
    return report


def public(report: dict[str, Any]) -> dict[str, Any]:
    """``report`` as it is written and served: without how this run got there (how many
    designs came from the cache), so a warm run's report is the cold run's byte for byte."""
    return {key: value for key, value in report.items() if key != "run"}


def portable(result: dict[str, Any], root: str) -> dict[str, Any] | None:
    """``result`` (of the design rooted at ``root``) in the form the cache keeps: no path
    of the design's own, file names relative to its folder, no settings (the run's own
    are put back on read: they are part of the key). None when a path of the design's
    folder is left in the text (such a result is not stored)."""
    base = os.path.dirname(root)
    stored = dict(result)  # same key order: the re-rooted copy dumps byte for byte alike
    stored["file"] = ""
    stored["settings"] = {}
    stored["findings"] = [{**f, "file": os.path.relpath(f["file"], base) if f.get("file")
                           else ""} for f in result["findings"]]
    if json.dumps(base + os.sep)[1:-1] in json.dumps(stored):
        return None
    return stored


def rerooted(stored: dict[str, Any], root: str, settings: Settings) -> dict[str, Any]:
    """A cached result put back where the design rooted at ``root`` lies, audited with
    ``settings``: what auditing it afresh gives."""
    base = os.path.dirname(root)
    result = dict(stored)
    result["file"] = root
    result["settings"] = settings.describe()
    result["findings"] = [{**f, "file": _under(base, f["file"], root)}
                          for f in stored["findings"]]
    return result


def _under(base: str, relative: str, root: str) -> str:
    if not relative:
        return ""
    from schemcheck.io.resolve import normalised

    path = normalised(os.path.join(base, relative))
    return root if path == normalised(root) else path


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
    """A one-line progress bar (click's) on a terminal; silent when piped or in CI.

    Called with (designs done, designs in all); ``close`` ends the line early."""

    def __init__(self, stream: Any = None) -> None:
        self.stream = stream or sys.stderr
        self.enabled = self.stream.isatty() and not os.environ.get("CI")
        self._bar: Any = None

    def __call__(self, done: int, total: int) -> None:
        if not self.enabled or total == 0:
            return
        if self._bar is None:
            import click

            self._bar = click.progressbar(length=total, label="Auditing designs", file=self.stream,
                                          empty_char=".", show_pos=True, width=30)
            self._bar.__enter__()
        self._bar.update(done - self._bar.pos)
        if done >= total:
            self.close()

    def close(self) -> None:
        if self._bar is not None:
            bar, self._bar = self._bar, None
            bar.__exit__(None, None, None)
