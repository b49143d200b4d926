"""SARIF 2.1.0: one run, the rules with ids and help, one result per finding."""

from __future__ import annotations

import os
from typing import Any

from schemcheck.rules import RULES

SARIF_SCHEMA = "https://docs.oasis-open.org/sarif/sarif/v2.1.0/errata01/os/schemas/sarif-schema-2.1.0.json"
_LEVEL = {"error": "error", "warning": "warning", "info": "note"}


def _uri(path: str, base: str | None) -> str:
    if base:
        try:
            path = os.path.relpath(path, base)
        except ValueError:
            pass
    return path.replace(os.sep, "/")


def sarif(report: dict[str, Any], base: str | None = None) -> dict[str, Any]:
    """The SARIF log of ``report``; artifact URIs relative to ``base`` when given."""
    rule_ids = list(RULES)
    rules = [{"id": r.id, "name": r.id.title().replace("-", ""),
              "shortDescription": {"text": r.title},
              "fullDescription": {"text": r.help},
              "help": {"text": f"{r.help} {r.rationale}"},
              "defaultConfiguration": {"level": _LEVEL[r.severity]}} for r in RULES.values()]
    results = []
    for design in report["designs"]:
        for f in design["findings"]:
            location: dict[str, Any] = {"physicalLocation": {"artifactLocation": {
                "uri": _uri(f.get("file") or design["file"], base)}}}
            if f.get("line"):
                region = {"startLine": f["line"]}
                if f.get("column"):
                    region["startColumn"] = f["column"]
                location["physicalLocation"]["region"] = region
            if f["ref"]:  # the stage identifier of the text and Markdown outputs
                name = f.get("stage") or f["ref"] + (f"/{f['unit']}" if f.get("unit") else "")
                location["logicalLocations"] = [{"name": name, "kind": "element"}]
            results.append({
                "ruleId": f["rule"], "ruleIndex": rule_ids.index(f["rule"]),
                "level": _LEVEL[f["severity"]],
                "message": {"text": f["message"] + (f" Suggestion: {f['suggestion']}"
                                                    if f["suggestion"] else "")},
                "locations": [location]})
    return {"$schema": SARIF_SCHEMA, "version": "2.1.0", "runs": [{
        "tool": {"driver": {"name": "schemcheck", "version": report["tool"]["version"],
                            "rules": rules}},
        "results": results}]}
