"""Read a bench measurement file (CSV with a header row) into readings.

Columns: ``sample``, ``temp_c``, ``v1``, ``v2``, ``v3``, optional ``v4``, ``gain``, ``rs``
(ohms, trade notation such as ``100k`` allowed), ``resolution`` (volts), optional
``rail`` (volts). Cells that are missing or not numbers are reported naming the row
(the file's line number) and the column.
"""

from __future__ import annotations

import csv
import io
import math

from schemcheck.characterise.analysis import Problem, Reading
from schemcheck.errors import ParseError
from schemcheck.io.files import read_text
from schemcheck.units import ValueFormatError, parse_resistance

REQUIRED = ("sample", "temp_c", "v1", "v2", "v3", "gain", "rs", "resolution")
OPTIONAL = ("v4", "rail")


def read_bench_csv(path: str) -> tuple[list[Reading], list[Problem]]:
    """Readings of every good row, and a problem for every bad cell."""
    text = read_text(path)
    reader = csv.DictReader(io.StringIO(text))
    header = [h.strip().lower() for h in (reader.fieldnames or [])]
    missing = [c for c in REQUIRED if c not in header]
    if missing:
        raise ParseError(f"expected the columns {', '.join(REQUIRED)} in the header row, "
                         f"missing {', '.join(missing)}", file=path, line=1, column=1)
    reader.fieldnames = header
    readings: list[Reading] = []
    problems: list[Problem] = []
    for row in reader:
        line = reader.line_num
        sample = (row.get("sample") or "").strip()
        values: dict[str, float] = {}  # an optional column left empty has no entry
        bad = False
        for column in REQUIRED[1:] + OPTIONAL:
            cell = (row.get(column) or "").strip()
            if not cell:
                if column in OPTIONAL:
                    continue
                problems.append(Problem(line, sample, "missing-cell",
                                        f"row {line}, column {column}: expected a number, "
                                        "found an empty cell"))
                bad = True
                continue
            try:
                number = (parse_resistance(cell, f"row {line}, column rs") if column == "rs"
                          else float(cell))
                if number is None or not math.isfinite(number):
                    raise ValueError(cell)
                values[column] = number
            except (ValueError, ValueFormatError):
                problems.append(Problem(line, sample, "not-a-number",
                                        f"row {line}, column {column}: expected a number, "
                                        f"found {cell!r}"))
                bad = True
        if not sample:
            problems.append(Problem(line, sample, "missing-cell",
                                    f"row {line}, column sample: expected a sample name, "
                                    "found an empty cell"))
            bad = True
        if not bad:
            for column in ("gain", "rs", "resolution"):
                if values[column] <= 0:
                    problems.append(Problem(line, sample, "not-a-number",
                                            f"row {line}, column {column}: expected a positive "
                                            f"number, found {values[column]:g}"))
                    bad = True
        if not bad:
            readings.append(Reading(line, sample, values["temp_c"], values["v1"], values["v2"],
                                    values["v3"], values.get("v4"), values["gain"], values["rs"],
                                    values["resolution"], values.get("rail")))
    if not readings and not problems:
        raise ParseError("expected at least one row of readings after the header", file=path)
    return readings, problems
