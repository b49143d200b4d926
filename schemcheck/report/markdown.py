"""The pull-request checklist (Markdown): per design its assumptions, one checkbox per
stage, then each finding with its suggestion, and a closing caution."""

from __future__ import annotations

from typing import Any

from schemcheck.units import format_si

_ICON = {"error": "**error**", "warning": "warning", "info": "info"}


def _stage_line(s: dict[str, Any]) -> str:
    name = s["ref"] + (f" unit {s['unit']}" if s["unit"] else "")
    if s.get("channel"):
        name += f" amplifier {s['channel']}"
    gain = f"{s['noise_gain']:.4g}" if s["noise_gain"] is not None else "n/a"
    worst = format_si(s["worst_case_over_temp_v"], "V")
    if s["status"] != "ok":
        verdict, checked = f"not solved ({s['status']})", " "
    elif s["budget_v"] is None:
        verdict, checked = "no budget set", " "
    elif s["within_budget"]:
        verdict, checked = "pass", "x"
    else:
        verdict, checked = "**FAIL**", " "
    budget = format_si(s["budget_v"], "V") if s["budget_v"] is not None else "none"
    notes = ""
    span = s.get("noise_gain_range")
    if span:
        notes += f" (noise gain {span[0]:.4g} to {span[1]:.4g} over potentiometer travel"
        notes += f"; budget at {s['budget_at']})" if s.get("budget_at") else ")"
    if s.get("excludes"):
        notes += f"; totals exclude {', '.join(s['excludes'])} (not analysed)"
    return (f"- [{checked}] {name} ({s['value']}, {s['sheet']}): {s['topology']}, noise gain "
            f"{gain}, worst case {worst} over temperature, budget {budget}: {verdict}{notes}")


def checklist(report: dict[str, Any]) -> str:
    lines = ["# DC error checklist", ""]
    for design in report["designs"]:
        settings = design.get("settings") or {}
        low, high = settings.get("temperature_range_c", [None, None])
        lines += [f"## {design['file']}", ""]
        if low is not None:
            lines += [f"Temperature range: {low:g} to {high:g} °C.", ""]
        if design["assumptions"]:
            lines.append("Assumptions:")
            lines += [f"- {a}" for a in design["assumptions"]]
            lines.append("")
        lines.append("Stages:")
        lines += [_stage_line(s) for s in design["stages"]] or ["- (no op-amp stage found)"]
        for item in design["not_analysed"]:
            channel = f" amplifier {item['channel']}" if item.get("channel") else ""
            lines.append(f"- [ ] {item['ref']} unit {item['unit']}{channel} ({item['value']}): "
                         f"not analysed, {item['reason']}")
        lines.append("")
        if design["findings"]:
            lines.append("Findings:")
            for f in design["findings"]:
                where = f"{f['ref']}: " if f["ref"] else ""
                lines.append(f"- [ ] {_ICON[f['severity']]} `{f['rule']}` {where}{f['message']}")
                if f["suggestion"]:
                    lines.append(f"  - suggestion: {f['suggestion']}")
            lines.append("")
        else:
            lines += ["Findings: none.", ""]
    lines += ["---", "", "These figures come from the drawn schematic and the part data given, "
              "under the assumptions listed; they do not replace review by a qualified engineer "
              "or the applicable standards.", ""]
    return "\n".join(lines)
