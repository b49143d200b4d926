"""``schemcheck bench``: read the measurements, check them, extract, fit, and update the
parts library (the I/O edge around :mod:`schemcheck.characterise`)."""

from __future__ import annotations

import os
from typing import Any

from schemcheck.characterise.analysis import RULE, check, extract, library_values, summarise
from schemcheck.characterise.bench_csv import read_bench_csv


def characterise_file(path: str, *, parts: str | None = None, part: str | None = None,
                      dry_run: bool = False, skip_bad_rows: bool = False) -> dict[str, Any]:
    readings, problems = read_bench_csv(path)
    for reading in readings:
        problems.extend(check(reading))
    bad_rows = sorted({p.row for p in problems})
    used = [r for r in readings if r.row not in bad_rows] if skip_bad_rows else readings
    results = [extract(r) for r in used]
    report: dict[str, Any] = {
        "file": path,
        "samples": [r.to_dict() for r in results],
        "summary": summarise(results) if results else {},
        "problems": [p.to_dict() for p in sorted(problems, key=lambda p: (p.row, p.check))],
        "skipped_rows": bad_rows if skip_bad_rows else [],
    }
    if parts and part:
        report["library"] = _update_library(path, parts, part, results, bool(bad_rows),
                                            dry_run, skip_bad_rows)
    return report


def _update_library(csv_path: str, parts: str, part: str, results, failed: bool,
                    dry_run: bool, skip_bad_rows: bool) -> dict[str, Any]:
    from schemcheck.io.partslib_write import diff, updated_library, write_library

    info: dict[str, Any] = {"path": parts, "part": part, "written": False, "rule": RULE}
    if not results:
        info["reason"] = "no usable reading"
        return info
    values = library_values(results)
    temps = sorted({r.temp_c for r in results})
    measured = (f"{os.path.basename(csv_path)}: {len({r.sample for r in results})} samples at "
                f"{', '.join(f'{t:g}' for t in temps)} °C")
    old, new = updated_library(parts, part, values, RULE, measured)
    info["diff"] = diff(old, new, parts)
    if dry_run:
        info["reason"] = "dry run: nothing written"
    elif failed and not skip_bad_rows:
        info["reason"] = ("rows failed the checks: nothing written (use --skip-bad-rows to "
                          "write from the good rows)")
    else:
        write_library(parts, new)
        info["written"] = True
    return info


def bench_text(report: dict[str, Any]) -> str:
    from schemcheck.units import format_si

    lines = [f"measurements: {report['file']}", "",
             f"  {'sample':<10} {'temp °C':>8} {'Vos':>11} {'Ib+':>11} {'Ib-':>11} "
             f"{'Ib':>11} {'Ios':>11}"]
    for s in report["samples"]:
        lines.append(f"  {s['sample']:<10} {s['temp_c']:>8g} {format_si(s['vos'], 'V'):>11} "
                     f"{format_si(s['ib_plus'], 'A'):>11} {format_si(s['ib_minus'], 'A'):>11} "
                     f"{format_si(s['ib'], 'A'):>11} {format_si(s['ios'], 'A'):>11}")
    summary = report["summary"]
    for t in summary.get("temperatures", []):
        v, ib = t["vos"], t["ib"]
        lines.append(f"  at {t['temp_c']:g} °C over {v['count']} samples: Vos mean "
                     f"{format_si(v['mean'], 'V')}, sd {format_si(v['std'], 'V')}, largest "
                     f"{format_si(v['max_abs'], 'V')}; Ib mean {format_si(ib['mean'], 'A')}, "
                     f"largest {format_si(ib['max_abs'], 'A')}")
    if summary:
        tc, bias = summary["tcvos"], summary["bias_current"]
        if tc["kind"] == "linear":
            lines.append(f"  TCVos {format_si(tc['slope'], 'V')}/°C (least squares, residual "
                         f"{format_si(tc['residual'], 'V')})")
        if bias["kind"] == "exponential":
            lines.append(f"  bias current grows exponentially: doubles every "
                         f"{bias['doubling_c']:.3g} °C (relative residual {bias['residual']:.2%})")
        elif bias["kind"] == "flat":
            lines.append("  bias current flat with temperature"
                         + (f" (relative residual {bias['residual']:.2%})"
                            if bias["residual"] is not None else ""))
    for p in report["problems"]:
        lines.append(f"  problem ({p['check']}): {p['message']}")
    if report["skipped_rows"]:
        lines.append(f"  skipped rows: {', '.join(str(r) for r in report['skipped_rows'])}")
    library = report.get("library")
    if library:
        lines.append(f"  parts library {library['path']} entry {library['part']}: "
                     + ("written" if library["written"] else library.get("reason", "not written")))
        lines.append(f"  rule: {library['rule']}")
        if library.get("diff") and not library["written"]:
            lines += ["", library["diff"]]
    return "\n".join(lines) + "\n"
