"""Split a batch of designs across the jobs of a CI matrix, and merge their reports.

The split is stable: the discovered designs are ordered by their root's path relative
to the working folder (with ``/`` separators, so every machine orders a checkout
alike), and shard K of N takes every N-th design from the K-th. Each shard's report
says which positions of the whole batch it holds, so :func:`merge_reports` rebuilds
the report of the unsplit batch exactly.
"""

from __future__ import annotations

import json
import os
from dataclasses import dataclass
from typing import Any

from schemcheck.errors import ParseError, SchemcheckError
from schemcheck.io.discover import DesignRef
from schemcheck.report.json import to_data
from schemcheck.results import missing_across


@dataclass(frozen=True, slots=True)
class Shard:
    """Shard ``index`` (1-based) of ``count``."""

    index: int
    count: int

    @classmethod
    def parse(cls, text: str) -> Shard:
        """``K/N`` with 1 <= K <= N; raises :class:`ParseError` saying what was expected."""
        parts = text.strip().split("/")
        if len(parts) == 2 and all(p.strip().isdigit() for p in parts):
            index, count = int(parts[0]), int(parts[1])
            if 1 <= index <= count:
                return cls(index, count)
        raise ParseError(f"expected K/N with 1 <= K <= N (e.g. 2/4), found {text!r}")


def sort_key(path: str) -> str:
    """Where a design sorts in the split: its path relative to the working folder when
    inside it, with ``/`` separators."""
    if os.path.isabs(path):
        relative = os.path.relpath(path)
        if not relative.startswith(".."):
            path = relative
    return path.replace(os.sep, "/")


def split(designs: list[DesignRef], missing: list[ParseError],
          shard: Shard) -> tuple[list[DesignRef], list[ParseError], dict[str, Any]]:
    """The designs and missing paths of ``shard``, and the report's ``shard`` entry.

    Positions count the whole batch as its report lists it: designs, then the paths
    that named nothing.
    """
    keys = [sort_key(d.root) for d in designs] + [sort_key(m.file or "") for m in missing]
    ordered = sorted(range(len(keys)), key=lambda i: (keys[i], i))
    positions = sorted(ordered[shard.index - 1::shard.count])
    mine_designs = [designs[i] for i in positions if i < len(designs)]
    mine_missing = [missing[i - len(designs)] for i in positions if i >= len(designs)]
    info = {"index": shard.index, "count": shard.count, "total": len(keys),
            "positions": positions}
    return mine_designs, mine_missing, info


def read_report(path: str) -> dict[str, Any]:
    """An audit report written by ``schemcheck audit --format json``, checked against the
    report's schema (errors name the file, and the line or the field)."""
    from schemcheck.io.files import read_text
    from schemcheck.report.json import check_data
    from schemcheck.results import Report

    text = read_text(path)
    try:
        data = json.loads(text)
    except json.JSONDecodeError as error:
        raise ParseError(f"expected a JSON report of schemcheck audit: {error.msg}", file=path,
                         line=error.lineno, column=error.colno) from None
    if not isinstance(data, dict):
        raise ParseError("expected a JSON report of schemcheck audit (an object with "
                         f"'designs'), found {type(data).__name__}", file=path)
    problem = check_data(Report, data)
    if problem:
        field, message = problem
        raise ParseError(f"expected a report of schemcheck audit --format json: {field}: "
                         f"{message}", file=path)
    return data


def merge_reports(reports: list[tuple[str, dict[str, Any]]]) -> dict[str, Any]:
    """One report from several: the shards of one batch (each exactly once, in any order)
    give the report of the batch audited at once; reports without a shard entry are
    joined in the order given. ``reports`` pairs each report with its file name."""
    if not reports:
        raise SchemcheckError("expected at least one report to merge")
    versions = {r.get("tool", {}).get("version") for _, r in reports}
    if len(versions) > 1:
        listed = ", ".join(f"{name} ({r.get('tool', {}).get('version')})" for name, r in reports)
        raise SchemcheckError(f"expected reports of one schemcheck version, found {listed}")
    sharded = [name for name, r in reports if "shard" in r]
    if sharded and len(sharded) != len(reports):
        whole = next(name for name, r in reports if "shard" not in r)
        raise SchemcheckError(f"{whole}: not a shard report, unlike {sharded[0]}; expected "
                              "every report to come from --shard K/N, or none")
    designs: list[dict[str, Any]] = []
    if sharded:
        designs = _place(reports)
    else:
        for _, report in reports:
            designs.extend(report["designs"])
    merged: dict[str, Any] = {"tool": reports[0][1].get("tool", {"name": "schemcheck"}),
                              "designs": designs}
    stats: dict[str, int] = {}
    for _, report in reports:
        for key, value in report.get("stats", {}).items():
            stats[key] = stats.get(key, 0) + value
    merged["stats"] = stats
    merged["warnings"] = list(dict.fromkeys(w for _, r in reports
                                            for w in r.get("warnings", [])))
    merged["assumptions"] = list(reports[0][1].get("assumptions", []))
    merged["missing_parameters"] = to_data(missing_across(designs))
    return merged


def _place(reports: list[tuple[str, dict[str, Any]]]) -> list[dict[str, Any]]:
    """The shards' designs at their positions in the whole batch."""
    first_name, first = reports[0]
    count, total = first["shard"]["count"], first["shard"]["total"]
    seen: dict[int, str] = {}
    for name, report in reports:
        shard = report["shard"]
        if (shard["count"], shard["total"]) != (count, total):
            raise SchemcheckError(
                f"{name}: shard {shard['index']}/{shard['count']} of {shard['total']} designs "
                f"does not belong with {first_name} (shard {first['shard']['index']}/{count} "
                f"of {total}); expected the shards of one run")
        if shard["index"] in seen:
            raise SchemcheckError(f"{name}: shard {shard['index']}/{count} is given twice "
                                  f"(also {seen[shard['index']]}); expected each shard once")
        seen[shard["index"]] = name
        if len(shard["positions"]) != len(report["designs"]):
            raise SchemcheckError(f"{name}: lists {len(report['designs'])} designs but "
                                  f"{len(shard['positions'])} positions; expected one each")
    absent = [f"{k}/{count}" for k in range(1, count + 1) if k not in seen]
    if absent:
        raise SchemcheckError(f"shard {', '.join(absent)} missing; expected all {count} "
                              "shards of the run")
    slots: list[dict[str, Any] | None] = [None] * total
    for name, report in reports:
        for position, design in zip(report["shard"]["positions"], report["designs"]):
            if not 0 <= position < total or slots[position] is not None:
                raise SchemcheckError(f"{name}: position {position} is out of range or "
                                      f"taken twice; expected each of 0..{total - 1} once")
            slots[position] = design
    empty = [str(position) for position, design in enumerate(slots) if design is None]
    if empty:
        raise SchemcheckError(f"no shard holds position {', '.join(empty[:5])} of {total}; "
                              "expected the shards of one run")
    return [design for design in slots if design is not None]
