"""Audit records kept in the same SQLite database as the CLI's results cache, so a
restart loses nothing and an identical re-submission is answered from the store."""

from __future__ import annotations

import json
import threading
import time
import uuid
from typing import Any

from schemcheck.run.cache import ResultCache, result_problem, strict_json


class AuditStore:
    def __init__(self, path: str | None) -> None:
        self.cache = ResultCache(path)
        self.lock = threading.Lock()  # one connection, shared by the server's threads

    @property
    def warnings(self) -> list[str]:
        return self.cache.warnings

    def find_by_key(self, key: str) -> dict[str, Any] | None:
        with self.lock:
            row = self.cache.db.execute(
                "SELECT id, name, created, result FROM audits WHERE key = ? "
                "ORDER BY created DESC LIMIT 1", (key,)).fetchone()
        return self._record(row)

    def get(self, audit_id: str) -> dict[str, Any] | None:
        with self.lock:
            row = self.cache.db.execute("SELECT id, name, created, result FROM audits WHERE id = ?",
                                        (audit_id,)).fetchone()
        return self._record(row)

    def add(self, key: str, name: str, result: dict[str, Any]) -> dict[str, Any]:
        record = {"id": uuid.uuid4().hex, "name": name, "created": time.time(),
                  "result": result}
        with self.lock, self.cache.db:
            self.cache.db.execute("INSERT INTO audits VALUES (?, ?, ?, ?, ?)",
                                  (record["id"], key, name, record["created"],
                                   json.dumps(result, allow_nan=False)))
        return record

    def recent(self, limit: int) -> list[dict[str, Any]]:
        with self.lock:
            rows = self.cache.db.execute(
                "SELECT id, name, created, result FROM audits ORDER BY created DESC LIMIT ?",
                (limit,)).fetchall()
        out = []
        for row in rows:
            record = self._record(row)
            if record is None:
                continue
            designs = record["result"]["designs"]
            out.append({"id": record["id"], "name": record["name"], "created": record["created"],
                        "designs": len(designs),
                        "errors": sum(f["severity"] == "error" for d in designs
                                      for f in d["findings"]),
                        "warnings": sum(f["severity"] == "warning" for d in designs
                                        for f in d["findings"])})
        return out

    def _record(self, row) -> dict[str, Any] | None:
        """The record of a row, or None for none or one that is not an audit (a damaged
        or foreign row is left alone and reported in ``warnings``)."""
        if not row:
            return None
        try:
            result = strict_json(row[3])
            designs = result.get("designs") if isinstance(result, dict) else None
            problem = ("expected a report with designs" if not isinstance(designs, list)
                       else next(filter(None, map(result_problem, designs)), None))
        except (ValueError, TypeError) as error:
            problem = str(error)
        if problem or not isinstance(row[0], str) or not isinstance(row[2], (int, float)):
            self.warnings.append(f"stored audit {row[0]!r} is unreadable "
                                 f"({problem or 'bad id or time'}); left out")
            return None
        return {"id": row[0], "name": str(row[1]), "created": row[2], "result": result}

    def close(self) -> None:
        self.cache.close()
