"""Results cache and store: an embedded SQLite database (WAL mode).

Keyed by the content hash of every file of a design, the parts library, the settings
and the tool version, so an unchanged design is read back instead of re-audited. Each
design's result is committed whole, so a killed run leaves a readable database. A
corrupt or foreign database file is reported, moved aside and rebuilt, never trusted. A
database that cannot be created or opened raises :class:`CacheUnavailable`; one that
stops taking writes says so once in ``warnings`` and the run goes on without storing.
"""

from __future__ import annotations

import hashlib
import json
import os
import sqlite3
import time
from typing import Any

from schemcheck import __version__
from schemcheck.errors import SchemcheckError
from schemcheck.io.files import check_allowed, read_bytes

APP = "schemcheck-results"
SCHEMA = 1
#: The form of the stored results (part of every key): 2 = file names relative to the
#: design's folder, keys in the report's order.
RESULT_FORM = 2


class CacheUnavailable(SchemcheckError):
    """The results database cannot be created, opened or written where it was asked for."""


#: SQLite's words for a file or folder it may not create or write.
_UNWRITABLE = ("unable to open", "readonly", "read-only", "disk I/O error")


def default_path() -> str:
    from platformdirs import user_cache_dir

    return os.path.join(user_cache_dir("schemcheck", appauthor=False), "results.sqlite3")


def file_digest(path: str) -> str:
    """SHA-256 of a file's content: a regular file within the size limit (checked before
    reading), else :class:`~schemcheck.errors.ParseError`."""
    return hashlib.sha256(read_bytes(path)).hexdigest()


def design_key(files: tuple[str, ...], settings: dict[str, Any],
               library: str | list[str] | None) -> str:
    """Content key of one audit: files (relative to the root's folder), settings,
    the content of every parts library and the tool version."""
    base = os.path.dirname(files[0])
    libraries = [library] if isinstance(library, str) else list(library or [])
    settings = dict(settings)
    # their content is hashed below; where they lie only matters beside the design
    if settings.get("parts_library"):
        settings["parts_library"] = os.path.relpath(settings["parts_library"], base)
    if settings.get("parts_libraries"):
        settings["parts_libraries"] = [{**item, "path": os.path.relpath(item["path"], base)}
                                       for item in settings["parts_libraries"]]
    digest = hashlib.sha256()
    digest.update(f"schemcheck {__version__} results {RESULT_FORM}\n".encode())
    digest.update(json.dumps(settings, sort_keys=True, default=str).encode())
    for path in files:
        digest.update(os.path.relpath(path, base).encode() + b"\0")
        digest.update(file_digest(path).encode())
    for path in libraries:
        check_allowed(path, "parts library")  # refused unread when the run is confined
        if os.path.isfile(path):
            digest.update(b"library\0" + file_digest(path).encode())
        else:
            digest.update(b"no library\0" + path.encode())
    return digest.hexdigest()


def _refuse_constant(name: str) -> Any:
    raise ValueError(f"found {name}, which JSON does not have")


def strict_json(text: str) -> Any:
    """``json.loads`` refusing NaN and Infinity (not JSON, though Python writes them)."""
    return json.loads(text, parse_constant=_refuse_constant)


_SEVERITIES = ("info", "warning", "error")


def result_problem(result: Any) -> str | None:
    """What makes ``result`` not one design's audit result (as ``audit_one`` returns
    it), or None. Checks the keys and types the report writers rely on."""
    if not isinstance(result, dict):
        return f"expected an object, found {type(result).__name__}"
    for key, kind in (("file", str), ("stages", list), ("findings", list),
                      ("assumptions", list), ("not_analysed", list), ("settings", dict),
                      ("errors", list)):
        if not isinstance(result.get(key), kind):
            return f"expected {key!r} to be a {kind.__name__}"
    for finding in result["findings"]:
        if not isinstance(finding, dict) or finding.get("severity") not in _SEVERITIES:
            return "expected findings with a severity of info, warning or error"
        if not all(isinstance(finding.get(k), str) for k in ("rule", "ref", "message")):
            return "expected findings with a rule, a ref and a message"
    for stage in result["stages"]:
        if not isinstance(stage, dict) or not isinstance(stage.get("ref"), str):
            return "expected stages with a ref"
    if not all(isinstance(e, str) for e in result["errors"] + result["assumptions"]):
        return "expected errors and assumptions as text"
    return None


class ResultCache:
    """Audit results by key. ``warnings`` says what was rebuilt and why."""

    def __init__(self, path: str | None = None) -> None:
        self.path = path or default_path()
        self.warnings: list[str] = []
        self.storing = True
        try:
            os.makedirs(os.path.dirname(os.path.abspath(self.path)), exist_ok=True)
        except OSError as error:
            raise CacheUnavailable(f"{self.path}: cannot create the results database's folder "
                                   f"({error.strerror or error})") from None
        self.db = self._open()

    def _open(self) -> sqlite3.Connection:
        try:
            db = self._connect()
            self._check(db)
            return db
        except sqlite3.OperationalError as error:
            if "locked" in str(error) or "busy" in str(error):
                raise SchemcheckError(f"{self.path}: the results database is busy ({error}); "
                                      "try again, or use --no-cache") from None
            if any(word in str(error) for word in _UNWRITABLE):
                raise CacheUnavailable(f"{self.path}: cannot open the results database "
                                       f"({error})") from None
            return self._rebuild(error)
        except sqlite3.DatabaseError as error:
            return self._rebuild(error)
        except OSError as error:
            raise CacheUnavailable(f"{self.path}: cannot open the results database "
                                   f"({error.strerror or error})") from None

    def _rebuild(self, error: Exception) -> sqlite3.Connection:
        aside = f"{self.path}.broken-{int(time.time())}"
        try:
            for suffix in ("", "-wal", "-shm"):
                if os.path.exists(self.path + suffix):
                    os.replace(self.path + suffix, aside + suffix)
            db = self._connect()
            self._check(db)
        except (OSError, sqlite3.Error) as failure:
            raise CacheUnavailable(f"{self.path}: the results database is unreadable or not "
                                   f"ours ({error}) and could not be rebuilt ({failure})"
                                   ) from None
        self.warnings.append(f"{self.path}: the results database is unreadable or not ours "
                             f"({error}); moved to {aside} and rebuilt")
        return db

    def _connect(self) -> sqlite3.Connection:
        db = sqlite3.connect(self.path, timeout=30, isolation_level=None,
                             check_same_thread=False)
        db.execute("PRAGMA journal_mode=WAL")
        db.execute("PRAGMA synchronous=NORMAL")
        return db

    def _check(self, db: sqlite3.Connection) -> None:
        """Create the tables in a new file, or make sure an existing file is ours.
        One immediate transaction, so processes opening the file together agree."""
        db.execute("BEGIN IMMEDIATE")
        try:
            tables = {row[0] for row in
                      db.execute("SELECT name FROM sqlite_master WHERE type='table'")}
            if not tables:
                db.execute("CREATE TABLE meta (app TEXT NOT NULL, schema INTEGER NOT NULL)")
                db.execute("INSERT INTO meta VALUES (?, ?)", (APP, SCHEMA))
                db.execute("CREATE TABLE results (key TEXT PRIMARY KEY, root TEXT NOT NULL,"
                           " created REAL NOT NULL, result TEXT NOT NULL)")
                db.execute("CREATE TABLE audits (id TEXT PRIMARY KEY, key TEXT NOT NULL,"
                           " name TEXT NOT NULL, created REAL NOT NULL, result TEXT NOT NULL)")
                db.execute("CREATE INDEX audits_created ON audits(created)")
            else:
                row = (db.execute("SELECT app, schema FROM meta").fetchone()
                       if "meta" in tables else None)
                if row != (APP, SCHEMA) or not {"results", "audits"} <= tables:
                    raise sqlite3.DatabaseError("not a schemcheck results database of this "
                                                "version")
                db.execute("SELECT count(*) FROM results").fetchone()
            db.execute("COMMIT")
        except BaseException:
            db.execute("ROLLBACK")
            raise

    def get(self, key: str) -> dict[str, Any] | None:
        try:
            row = self.db.execute("SELECT result FROM results WHERE key = ?", (key,)).fetchone()
            if not row:
                return None
            result = strict_json(row[0])
            problem = result_problem(result)
            if problem:
                raise ValueError(f"not an audit result: {problem}")
            return result
        except (sqlite3.DatabaseError, ValueError, TypeError) as error:
            self.warnings.append(f"{self.path}: could not read a cached result ({error}); "
                                 "re-auditing")
            return None

    def put(self, key: str, root: str, result: dict[str, Any]) -> None:
        """Store ``result`` (keys kept in their order). A database that no longer takes
        writes (read-only, disk full) is said once in ``warnings``; nothing is raised."""
        if not self.storing:
            return
        text = json.dumps(result, allow_nan=False)
        try:
            with self.db:  # one transaction per design
                self.db.execute("INSERT OR REPLACE INTO results VALUES (?, ?, ?, ?)",
                                (key, root, time.time(), text))
        except sqlite3.Error as error:
            self.storing = False
            self.warnings.append(f"{self.path}: could not store results ({error}); the rest "
                                 "of this run is not cached")

    def close(self) -> None:
        self.db.close()
