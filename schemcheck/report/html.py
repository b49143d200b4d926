"""The HTML report: one self-contained page (no script, style, font or image from anywhere
else) that a reviewer looks at, or prints to PDF.

A summary; per design its findings (with their suggestions and before/after figures), a
table of the stages, a chart of every stage's worst case over temperature against its
budget stacked by source, the chain view, and per stage its error over the temperature
range, its Monte Carlo histogram, R+ and R-, the values used and the part requirements;
the assumptions folded at the end. The words and numbers are those of the Markdown
checklist (both come from :mod:`schemcheck.report.stage_lines` and the same serialised
results); the figures come from :mod:`schemcheck.report.figures` (matplotlib, inline SVG),
the page from a Jinja2 template.
"""

from __future__ import annotations

from typing import Any

from schemcheck.report import figures
from schemcheck.report import stage_lines as sl
from schemcheck.report.audit_text import finding_text, settings_line, stage_details, temp_range

Stage = dict[str, Any]

SEVERITIES = ("error", "warning", "info")


def _environment() -> Any:
    from jinja2 import Environment, PackageLoader, StrictUndefined, select_autoescape

    return Environment(loader=PackageLoader("schemcheck.report", "templates"),
                       autoescape=select_autoescape(["html", "j2"]), undefined=StrictUndefined,
                       trim_blocks=True, lstrip_blocks=True)


def finding_figures(f: dict[str, Any], stage: Stage | None = None) -> list[
        tuple[str, str, str, str]]:
    """(what, before, joiner, after) rows from a finding's ``data`` (and its ``stage``):
    the change its suggestion makes ("→"), or a figure against its limit ("against")."""
    data = f.get("data") or {}
    rule = f.get("rule")
    out: list[tuple[str, str, str]] = []
    if rule == "over-budget" and data.get("worst_case_over_temp_v") is not None:
        at = data.get("worst_temp_c")
        worst = sl.volts(data["worst_case_over_temp_v"]) + (f" at {at:g} °C" if at is not None
                                                            else "")
        rows = [("worst case", worst, "against", f"budget {sl.volts(data.get('budget_v'))}")]
        if data.get("largest_source_v") is not None:
            rows.append((f"largest share ({data.get('largest_source')})",
                         sl.volts(data["largest_source_v"]), "", ""))
        return rows
    if rule == "bias-resistor-mismatch" and data.get("worst_case_after_v") is not None:
        out.append(("worst case at 25 °C", sl.volts(data.get("worst_case_v")),
                    sl.volts(data["worst_case_after_v"])))
        out.append(("+ input series resistor", "0 Ω", sl.ohms(data.get("suggested_ohm"))))
    elif rule == "bias-resistor-mismatch" and data.get("resistance_plus_ohm") is not None:
        out.append(("+ input sees", sl.ohms(data["resistance_plus_ohm"]),
                    sl.ohms(data.get("resistance_minus_ohm"))))
        if data.get("resistor") and data.get("suggested_ohm") is not None:
            comp = (stage or {}).get("compensation") or {}
            now = comp.get("resistor_ohm") if comp.get("resistor") == data["resistor"] else None
            out.append((data["resistor"], sl.ohms(now) if now is not None else "",
                        sl.ohms(data["suggested_ohm"])))
        if data.get("bias_error_v") is not None:
            out.append(("Ib error at the output", sl.volts(data["bias_error_v"]), "0 V"))
    elif rule == "bias-resistor-harmful" and data.get("resistor_ohm") is not None:
        out.append((data.get("resistor", "resistor"), sl.ohms(data["resistor_ohm"]), "0 Ω"))
        if data.get("added_error_v") is not None:
            out.append(("added error at 25 °C", sl.volts(data["added_error_v"]), "0 V"))
    return [(what, before, "→" if before and after else "", after)
            for what, before, after in out]


def _figures_line(s: Stage) -> list[tuple[str, str]]:
    """The stage's figures as (label, value) pairs, in the text table's order."""
    at = s.get("worst_temp_c")
    mc_on = s.get("monte_carlo_v") is not None
    rows = [("noise gain", sl.gain_text(s.get("noise_gain"))),
            ("R+", sl.ohms(s.get("resistance_plus_ohm"))),
            ("R−", sl.ohms(s.get("resistance_minus_ohm"))),
            ("own at 25 °C", sl.volts(s.get("worst_case_own_v"))),
            ("total at 25 °C", sl.volts(s.get("worst_case_total_v"))),
            ("RSS", sl.volts(s.get("rss_v"))),
            ("worst case", sl.volts(s.get("worst_case_over_temp_v"))
             + (f" at {at:g} °C" if at is not None else "")),
            ("MC 99.7 %", sl.volts(s.get("monte_carlo_v")) if mc_on else "off"),
            ("referred to input", sl.volts(s.get("rti_v"))),
            ("budget", sl.volts(s["budget_v"]) if s.get("budget_v") is not None else "none")]
    if s.get("resistance_plus_ohm") is None:
        rows = [r for r in rows if r[0] not in ("R+", "R−")]
    return rows


def _curve_note(s: Stage) -> str:
    curve = s.get("over_temperature") or {}
    if not curve:
        return ""
    text = (f"Worst case computed at {len(curve['temps_c'])} temperatures from "
            f"{curve['temps_c'][0]:g} to {curve['temps_c'][-1]:g} °C.")
    if curve.get("monte_carlo_v"):
        text += (f" The Monte Carlo 99.7 % bound is sampled at "
                 f"{curve['monte_carlo_temp_c']:g} °C (dot) and carried to the other "
                 "temperatures in proportion to the RSS (an estimate: exact for Gaussian "
                 "sources).")
    else:
        text += " No Monte Carlo: the dotted line is the RSS."
    return text


def _stage(s: Stage, design: int, span: tuple[float, float] | None) -> dict[str, Any]:
    name = sl.stage_name(s)
    out = (s.get("nets") or {}).get("out")
    return {
        "name": name,
        "anchor": figures.element_id("stage", design, name),
        "value": s.get("value", ""),
        "sheet": s.get("sheet", ""),
        "topology": s.get("topology", ""),
        "out": out,
        "verdict": figures.verdict(s),
        "figures": _figures_line(s),
        "details": stage_details(s, span),
        "driven_by": s.get("driven_by") or [],
        "curve": figures.temperature_curve(s, design),
        "curve_id": figures.element_id("curve", design, name),
        "curve_note": _curve_note(s),
        "histogram": figures.mc_histogram(s, design),
        "hist_id": figures.element_id("hist", design, name),
        "raw": s,
    }


def _design(design: dict[str, Any], index: int) -> dict[str, Any]:
    span = temp_range(design)
    stages = design["stages"]
    by_name = {sl.stage_name(s): s for s in stages}
    return {
        "index": index,
        "file": design["file"],
        "settings": settings_line(design),
        "findings": [{"f": f, "text": finding_text(f),
                      "figures": finding_figures(f, by_name.get(f.get("stage") or ""))}
                     for f in design["findings"]],
        "stages": [_stage(s, index, span) for s in stages],
        "budget_chart": figures.budget_chart(stages, index),
        "any_worst_case": any(s.get("worst_case_over_temp_v") is not None for s in stages),
        "chain": figures.chain_view(stages, index),
        "chain_loops": figures.has_loops(stages),
        "not_analysed": design.get("not_analysed") or [],
        "assumptions": design.get("assumptions") or [],
        "errors": design.get("errors") or [],
        "missing": design.get("missing_parameters") or [],
    }


def summary(report: dict[str, Any]) -> dict[str, Any]:
    """Counts for the summary: designs, stages by verdict, findings by severity."""
    stages = [s for d in report["designs"] for s in d["stages"]]
    verdicts: dict[str, int] = {}
    for s in stages:
        v = figures.verdict(s)
        key = "not solved" if v.startswith("not solved") else v
        verdicts[key] = verdicts.get(key, 0) + 1
    findings = {sev: sum(1 for d in report["designs"] for f in d["findings"]
                         if f["severity"] == sev) for sev in SEVERITIES}
    return {"designs": len(report["designs"]), "stages": len(stages),
            "not_analysed": sum(len(d.get("not_analysed") or []) for d in report["designs"]),
            "verdicts": verdicts, "findings": findings}


def html_report(report: dict[str, Any]) -> str:
    """The serialised ``report`` as one self-contained HTML page."""
    designs = [_design(d, i) for i, d in enumerate(report["designs"], start=1)]
    missing = report.get("missing_parameters") or []
    caution = next((d.get("caution") for d in report["designs"] if d.get("caution")), None)
    tool = report.get("tool") or {}
    return _environment().get_template("report.html.j2").render(
        designs=designs, summary=summary(report), tool=tool,
        model_assumptions=report.get("assumptions") or [], caution=caution,
        missing_across=sl.missing_summary(missing) if len(designs) > 1 and missing else "",
        warnings=report.get("warnings") or [], colours=figures.COLOURS)
