"""Readable text form of an audit (``schemcheck audit --format text``, the default on a
terminal).

Per design: the settings on one line, the findings, one table row per stage (identifier,
topology, output net, noise gain, R+ and R-, the budget figures) with, under it, the split
of its error and the chain feeding it, the part figures used (or, without them, the
coefficients and the ideal compensation) and the part requirements; then the design's
own assumptions. The model's assumptions, the same for every design, close the report.
"""

from __future__ import annotations

import os
from typing import Any

from schemcheck.partdata import DISPLAY
from schemcheck.report import stage_lines as sl
from schemcheck.units import format_si

_COLUMNS = ("stage", "topology", "output", "noise gain", "R+", "R-", "own 25°C", "total 25°C",
            "RSS", "over temp", "MC 99.7%", "budget", "result")
_RIGHT = {"noise gain", "R+", "R-", "own 25°C", "total 25°C", "RSS", "over temp", "MC 99.7%",
          "budget"}


def settings_line(design: dict[str, Any]) -> str:
    """The design's settings that every figure depends on, with which are defaults."""
    settings = design.get("settings") or {}
    defaults = set(settings.get("defaults_used") or ())
    out = []
    if settings.get("temperature_range_c"):
        low, high = settings["temperature_range_c"]
        out.append(f"{low:g} to {high:g} °C" + (" (default)" if "temp_range" in defaults else ""))
    if settings.get("default_resistor_tolerance") is not None:
        tolerance = settings["default_resistor_tolerance"] * 100
        out.append(f"resistors without a Tolerance field ±{tolerance:g}%"
                   + (" (default)" if "default_tolerance" in defaults else ""))
    if settings.get("default_budget_v") is not None:
        budget = format_si(settings["default_budget_v"], "V")
        out.append(f"budget {budget} where no DC_Budget field")
    samples = settings.get("monte_carlo_samples")
    if samples is not None:
        out.append(f"Monte Carlo {samples} samples, seed {settings.get('seed')}" if samples
                   else "Monte Carlo off")
    if settings.get("parts_library"):
        out.append(f"parts library {os.path.basename(settings['parts_library'])}")
    return "; ".join(out)


def finding_text(f: dict[str, Any]) -> str:
    """The finding's message after its stage identifier (once: not where the message starts
    with it, nor for a finding about several stages, which names them)."""
    where = f.get("stage") or f["ref"]
    if not where or f["message"].startswith(where) or (f.get("data") or {}).get("stages"):
        return f["message"]
    return f"{where}: {f['message']}"


def temp_range(design: dict[str, Any]) -> tuple[float, float] | None:
    found = (design.get("settings") or {}).get("temperature_range_c")
    return (found[0], found[1]) if found else None


def _verdict(s: dict[str, Any]) -> str:
    if s["within_budget"] is None:
        if s["status"] != "ok":
            return s["status"]
        return "no budget" if s["budget_v"] is None else "unknown"
    return "pass" if s["within_budget"] else "FAIL"


def _row(s: dict[str, Any], mc_on: bool) -> list[str]:
    return [sl.stage_name(s), s["topology"], (s.get("nets") or {}).get("out", ""),
            sl.gain_text(s["noise_gain"]),
            sl.ohms(s["resistance_plus_ohm"]) if s["resistance_plus_ohm"] is not None else "-",
            sl.ohms(s["resistance_minus_ohm"]) if s["resistance_minus_ohm"] is not None else "-",
            sl.volts(s["worst_case_own_v"]), sl.volts(s["worst_case_total_v"]),
            sl.volts(s["rss_v"]),
            sl.volts(s["worst_case_over_temp_v"]), sl.volts(s["monte_carlo_v"]) if mc_on else "off",
            sl.volts(s["budget_v"]) if s["budget_v"] is not None else "-", _verdict(s)]


def stage_details(s: dict[str, Any], span: tuple[float, float] | None) -> list[tuple[str, str]]:
    """(label, text) lines explaining one stage; empty ones left out."""
    own_known = (s.get("split") or {}).get("vos_v") is not None
    lines = [("split", sl.split(s)), ("fed by", sl.chain(s))]
    gains = s.get("noise_gain_range")
    if gains:
        where = f"; budget at {s['budget_at']}" if s.get("budget_at") else ""
        lines.append(("potentiometers", f"noise gain {gains[0]:.4g} to {gains[1]:.4g} over "
                                         f"their travel{where}"))
    if s.get("excludes"):
        lines.append(("excludes", f"{', '.join(s['excludes'])} (not analysed, feeding this "
                                  "stage): the totals leave their error out"))
    if own_known:
        lines.append(("values", sl.values(s)))
    else:
        lines.append(("coefficients", sl.coefficients(s)))
    lines.append(("compensation", sl.compensation(s)))
    lines.append(("needs", sl.requirements(s, span)))
    lines.append(("part data", "; ".join(figure_marks(s))))
    return [(label, text) for label, text in lines if text]


def _table(design: dict[str, Any]) -> list[str]:
    stages, span = design["stages"], temp_range(design)
    mc_on = (design.get("settings") or {}).get("monte_carlo_samples") != 0
    rows = [_row(s, mc_on) for s in stages]
    widths = [max(len(c), *(len(r[i]) for r in rows)) for i, c in enumerate(_COLUMNS)]

    def line(cells: list[str] | tuple[str, ...]) -> str:
        return "  " + "  ".join(cell.rjust(w) if name in _RIGHT else cell.ljust(w)
                                for cell, w, name in zip(cells, widths, _COLUMNS)).rstrip()

    out = [line(_COLUMNS)]
    for s, row in zip(stages, rows):
        out.append(line(row))
        out += [f"      {label}: {text}" for label, text in stage_details(s, span)]
    return out


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
        lines += [f"design: {design['file']}", f"settings: {settings_line(design)}", ""]
        if design["findings"]:
            lines.append("findings:")
            for f in design["findings"]:
                lines.append(f"  {f['severity'].upper():<7} {f['rule']:<22} {finding_text(f)}")
                if f["suggestion"]:
                    lines.append(f"  {'':<7} {'':<22} -> {f['suggestion']}")
        else:
            lines.append("findings: none")
        lines += ["", "stages:"]
        if design["stages"]:
            lines += _table(design)
        else:
            lines.append("  (no op-amp stages found)")
        for item in design["not_analysed"]:
            name = item.get("id") or f"{item['ref']} unit {item['unit']}"
            lines.append(f"  not analysed: {name} ({item['value']}): {item['reason']}")
        if design["assumptions"]:
            lines += ["", "assumptions for this design:"]
            lines += [f"  - {a}" for a in design["assumptions"]]
        for error in design["errors"]:
            lines.append(f"  error: {error}")
        lines.append("")
    missing = report.get("missing_parameters") or []
    if len(report["designs"]) > 1 and missing:
        lines += [f"across the designs, {sl.missing_summary(missing)}", ""]
    if report.get("assumptions"):
        lines.append("model assumptions (every design):")
        lines += [f"  - {a}" for a in report["assumptions"]]
        lines.append("")
    caution = next((d.get("caution") for d in report["designs"] if d.get("caution")), None)
    if caution:
        lines += [caution, ""]
    return "\n".join(lines)
