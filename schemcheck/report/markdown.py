"""The pull-request checklist (Markdown): per design its settings, each finding with its
suggestion, one checkbox per stage with its error split, the chain feeding it, the part
figures used (or the coefficients and ideal compensation) and the part requirements, then
the design's own assumptions; the model's assumptions once, folded in a ``<details>``
block, and a closing caution."""

from __future__ import annotations

from typing import Any

from schemcheck.report import stage_lines as sl
from schemcheck.report.audit_text import (
    finding_text,
    settings_line,
    stage_details,
    temp_range,
)

_ICON = {"error": "**error**", "warning": "warning", "info": "info"}


def _stage_line(s: dict[str, Any]) -> str:
    gain = sl.gain_text(s["noise_gain"]) if s["noise_gain"] is not None else "n/a"
    if s["status"] != "ok":
        verdict, checked = f"not solved ({s['status']})", " "
    elif s["budget_v"] is None:
        verdict, checked = "no budget set", " "
    elif s["within_budget"] is None:
        verdict, checked = "unknown", " "
    elif s["within_budget"]:
        verdict, checked = "pass", "x"
    else:
        verdict, checked = "**FAIL**", " "
    budget = sl.volts(s["budget_v"]) if s["budget_v"] is not None else "none"
    worst = sl.volts(s["worst_case_over_temp_v"])
    at = f" at {s['worst_temp_c']:g} °C" if s.get("worst_temp_c") is not None else ""
    resist = ""
    if s["resistance_plus_ohm"] is not None:
        resist = (f", R+ {sl.ohms(s['resistance_plus_ohm'])}, "
                  f"R- {sl.ohms(s['resistance_minus_ohm'])}")
    out = (s.get("nets") or {}).get("out")
    to = f" to `{out}`" if out else ""
    return (f"- [{checked}] **{sl.stage_name(s)}** ({s['value']}, {s['sheet']}): "
            f"{s['topology']}{to}, noise gain {gain}{resist}; worst case {worst}{at}, "
            f"budget {budget}: {verdict}")


def checklist(report: dict[str, Any]) -> str:
    lines = ["# DC error checklist", ""]
    for design in report["designs"]:
        lines += [f"## {design['file']}", ""]
        settings = settings_line(design)
        if settings:
            lines += [f"Settings: {settings}.", ""]
        if design["findings"]:
            lines.append("Findings:")
            for f in design["findings"]:
                lines.append(f"- [ ] {_ICON[f['severity']]} `{f['rule']}` {finding_text(f)}")
                if f["suggestion"]:
                    lines.append(f"  - suggestion: {f['suggestion']}")
            lines.append("")
        else:
            lines += ["Findings: none.", ""]
        lines.append("Stages:")
        span = temp_range(design)
        for s in design["stages"]:
            lines.append(_stage_line(s))
            lines += [f"  - {label}: {text}" for label, text in stage_details(s, span)]
        if not design["stages"]:
            lines.append("- (no op-amp stage found)")
        for item in design["not_analysed"]:
            name = item.get("id") or f"{item['ref']} unit {item['unit']}"
            lines.append(f"- [ ] {name} ({item['value']}): not analysed, {item['reason']}")
        lines.append("")
        if design["assumptions"]:
            lines.append("Assumptions for this design:")
            lines += [f"- {a}" for a in design["assumptions"]]
            lines.append("")
    missing = report.get("missing_parameters") or []
    if len(report["designs"]) > 1 and missing:
        lines += [f"Across the designs, {sl.missing_summary(missing)}.", ""]
    if report.get("assumptions"):
        lines += ["<details><summary>Model assumptions (the same for every design)</summary>", ""]
        lines += [f"- {a}" for a in report["assumptions"]]
        lines += ["", "</details>", ""]
    lines += ["---", "", "These figures come from the drawn schematic and the part data given, "
              "under the assumptions listed; they do not replace review by a qualified engineer "
              "or the applicable standards.", ""]
    return "\n".join(lines)
