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
from typing import TYPE_CHECKING, Any, Callable

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


def settings_for(root: str, base: Settings, overrides: dict[str, Any],
                 settings_path: str | None = None) -> Settings:
    """Defaults < the settings file beside the design (or ``settings_path``) < options.
    The user-level parts library is added where the file exists."""
    from schemcheck.io.partslib import user_library_path
    from schemcheck.io.settings_file import find_settings, load_settings

    path = settings_path or find_settings(root)
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


def submission_key(paths: list[str], overrides: dict[str, Any]) -> str:
    """One key for everything under ``paths`` (the service's identical-submission test)."""
    designs, _ = find_designs(paths)
    digest = hashlib.sha256()
    for design in designs:
        try:
            settings = settings_for(design.root, Settings(), dict(overrides))
        except PathNotAllowedError:
            raise
        except SchemcheckError:
            settings = Settings()  # the audit itself reports the bad settings file
        digest.update((design_key_for(design, settings) or design.root).encode())
    return digest.hexdigest()


def _unreadable(root: str, message: str, settings: Settings | None = None) -> dict[str, Any]:
    finding = Finding(UNREADABLE, "error", "", None, message,
                      "fix or re-save the file in the schematic editor", file=root)
    return to_data(DesignResult(file=root, findings=[finding], errors=[message],
                                settings=(settings or Settings()).describe()))


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
        detail = str(error)
        return _unreadable(root, detail, settings)
    except OSError as error:
        name = error.filename or root
        return _unreadable(root, f"{name}: could not read ({error.strerror or error})", settings)


def _audit_task(args: tuple[str, Settings]) -> dict[str, Any]:
    return audit_one(*args)


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
            results[index] = _unreadable(design.root, str(error))
            continue
        key = None
        if cache is not None:
            key = design_key_for(design, settings)
            hit = cache.get(key) if key else None
            if hit is not None:
                results[index] = _moved(hit, design.root)
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
        # each worker ends itself when this process dies, even by SIGKILL
        pool = ProcessPoolExecutor(max_workers=workers, initializer=watch_parent,
                                   initargs=(os.getpid(),))
        outputs = pool.map(_audit_task, [(d.root, s) for _, d, s, _ in todo], chunksize=1)
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
    shown = [_shown(r) for r in results if r is not None]
    report = to_data(Report(Tool("schemcheck", __version__),
                            stats={"designs": len(shown), "from_cache": hits,
                                   "audited": len(todo)},
                            warnings=list(cache.warnings) if cache is not None else []))
    report["designs"] = shown  # already in their serialised form
    report["missing_parameters"] = to_data(missing_across(shown))
    return report


def _moved(result: dict[str, Any], root: str) -> dict[str, Any]:
    """A stored result as the result of the design at ``root``: the key holds contents
    and relative paths only, so an identical design elsewhere (a copy in another folder)
    shares it, and the stored paths are moved to this design's folder."""
    stored = os.path.dirname(result["file"])
    here = os.path.dirname(root)
    if stored == here:
        return result
    import json

    def quoted(folder: str) -> str:
        return json.dumps(folder + os.sep)[1:-1]

    return json.loads(json.dumps(result).replace(quoted(stored), quoted(here)))


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
