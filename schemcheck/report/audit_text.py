"""Readable text form of an audit (``schemcheck audit --format text``)."""

from __future__ import annotations

from typing import Any

from schemcheck.units import format_si


def _v(value: float | None) -> str:
    return format_si(value, "V")


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
        if not design["stages"]:
            lines.append("  (no op-amp stages found)")
        for s in design["stages"]:
            lines.extend(_stage_notes(s))
        for item in design["not_analysed"]:
            channel = f" amplifier {item['channel']}" if item.get("channel") else ""
            lines.append(f"  not analysed: {item['ref']} unit {item['unit']}{channel} "
                         f"({item['value']}): {item['reason']}")
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


def _stage_notes(s: dict[str, Any]) -> list[str]:
    """What the table cannot hold: a potentiometer's noise-gain range, excluded sources."""
    name = s["ref"] + (f"/{s['unit']}" if s["unit"] else "")
    if s.get("channel"):
        name += f".{s['channel']}"
    out = []
    span = s.get("noise_gain_range")
    if span:
        where = f"; budget at {s['budget_at']}" if s.get("budget_at") else ""
        out.append(f"  {name}: noise gain {span[0]:.4g} to {span[1]:.4g} over the travel of "
                   f"its potentiometers{where}")
    if s.get("excludes"):
        out.append(f"  {name}: totals exclude {', '.join(s['excludes'])} (not analysed)")
    return out
