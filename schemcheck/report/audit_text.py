"""Readable text form of an audit (``schemcheck audit --format text``)."""

from __future__ import annotations

from typing import Any

from schemcheck.partdata import DISPLAY
from schemcheck.units import format_si


def _v(value: float | None) -> str:
    return format_si(value, "V")


_NAMES = DISPLAY


def figure_marks(stage: dict[str, Any]) -> list[str]:
    """What a stage's budget rests on besides maxima: ``typical only: TCVos``,
    ``estimate (class jfet): Vos, Ib, Ios``, the library entry found by family."""
    params = stage.get("params") or {}
    marks = []
    if params.get("typical_only"):
        marks.append("typical only: " + ", ".join(_NAMES.get(n, n)
                                                  for n in params["typical_only"]))
    estimate = params.get("estimate")
    if estimate:
        marks.append(f"estimate (class {estimate['class']}): "
                     + ", ".join(_NAMES.get(n, n) for n in estimate["figures"]))
    how = next((v for v in (params.get("source") or {}).values()
                if v.startswith("library:") and " via " in v), None)
    if how:
        marks.append(how.removesuffix(" (typical only)"))
    return marks


def audit_text(report: dict[str, Any]) -> str:
    lines: list[str] = []
    for design in report["designs"]:
        low, high = design["settings"]["temperature_range_c"]
        lines += [f"design: {design['file']}", f"temperature range: {low:g} to {high:g} °C", ""]
        header = (f"  {'stage':<14} {'topology':<15} {'noise gain':>10} {'own 25°C':>11} "
                  f"{'total 25°C':>11} {'RSS':>11} {'over temp':>11} {'MC 99.7%':>11} "
                  f"{'budget':>10}  result")
        lines.append(header)
        for s in design["stages"]:
            name = s["ref"] + (f"/{s['unit']}" if s["unit"] else "")
            if s.get("channel"):
                name += f".{s['channel']}"
            gain = f"{s['noise_gain']:.4g}" if s["noise_gain"] is not None else "-"
            if s["within_budget"] is None:
                verdict = s["status"] if s["status"] != "ok" else "no budget"
            else:
                verdict = "pass" if s["within_budget"] else "FAIL"
            budget = format_si(s["budget_v"], "V") if s["budget_v"] is not None else "-"
            lines.append(
                f"  {name:<14} {s['topology']:<15} {gain:>10} {_v(s['worst_case_own_v']):>11} "
                f"{_v(s['worst_case_total_v']):>11} {_v(s['rss_v']):>11} "
                f"{_v(s['worst_case_over_temp_v']):>11} {_v(s['monte_carlo_v']):>11} "
                f"{budget:>10}  {verdict}")
            marks = figure_marks(s)
            if marks:
                lines.append(f"  {'':<14} " + "; ".join(marks))
        if not design["stages"]:
            lines.append("  (no op-amp stages found)")
        for item in design["not_analysed"]:
            lines.append(f"  not analysed: {item['ref']} unit {item['unit']} ({item['value']}): "
                         f"{item['reason']}")
        lines.append("")
        for f in design["findings"]:
            lines.append(f"  {f['severity'].upper():<7} {f['rule']:<22} {f['ref']}: {f['message']}")
            if f["suggestion"]:
                lines.append(f"  {'':<7} {'':<22} -> {f['suggestion']}")
        if design["findings"]:
            lines.append("")
        lines.append("  assumptions:")
        lines += [f"    - {a}" for a in design["assumptions"]]
        for error in design["errors"]:
            lines.append(f"  error: {error}")
        lines += ["", f"  {design['caution']}", ""]
    return "\n".join(lines)
