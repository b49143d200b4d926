"""The explanation of one stage, shared by the text table and the Markdown checklist.

Each function takes a serialised stage (``report.json.to_data``) and returns one compact
line in engineering units, or "" when it has nothing to say. Figures are the JSON's own,
only scaled for display; a term that is zero is left out. Designs read back from an older
cache row may lack the newer keys: every reader uses ``.get``.
"""

from __future__ import annotations

import math
from typing import Any

from schemcheck.engine.eseries import nearest
from schemcheck.units import format_si

Stage = dict[str, Any]


def stage_name(s: Stage) -> str:
    """The stage identifier (``U4/2``)."""
    if s.get("id"):
        return s["id"]
    name = s["ref"] + (f"/{s['unit']}" if s.get("unit") else "")
    return name + (f".{s['channel']}" if s.get("channel") else "")


def volts(value: float | None) -> str:
    return format_si(value, "V")


def amps(value: float | None) -> str:
    return format_si(value, "A")


def ohms(value: float | None) -> str:
    return format_si(value, "Ω")


def gain_text(value: float | None) -> str:
    return "-" if value is None else f"{value:.4g}"


def per_microamp(value: float) -> str:
    """A V/A coefficient as volts per µA: 10e3 -> ``10 mV/µA``."""
    return f"{format_si(value * 1e-6, 'V')}/µA"


def _signed(terms: list[tuple[float, str]]) -> str:
    """``a·X + b·Y - c·Z`` from (coefficient, text) pairs, zero ones left out."""
    out = ""
    for value, text in terms:
        if value == 0.0:
            continue
        sign = "-" if value < 0 else "+"
        if not out:
            out = ("-" if value < 0 else "") + text
        else:
            out += f" {sign} {text}"
    return out or "0"


def coefficients(s: Stage) -> str:
    """``output error = 1.91·Vos + 10 mV/µA·Ib- - 1.91 mV/µA·Ib+`` (signed sensitivities)."""
    sens = s.get("sensitivity") or {}
    if sens.get("vos") is None:
        return ""
    vos, plus, minus = sens["vos"], sens.get("ib_plus") or 0.0, sens.get("ib_minus") or 0.0
    return "output error = " + _signed([
        (vos, f"{abs(vos):.3g}·Vos"),
        (minus, f"{per_microamp(abs(minus))}·Ib-"),
        (plus, f"{per_microamp(abs(plus))}·Ib+")])


def _e96(value: float) -> str:
    return f"E96 {ohms(nearest(value, 'E96'))}" if value > 0 else ""


def compensation(s: Stage) -> str:
    """What the + input should see for the bias currents to cancel."""
    comp = s.get("compensation")
    if not comp:
        return ""
    ideal, resistor, useful = comp.get("ideal_ohm"), comp.get("resistor"), comp.get("useful")
    if useful is False:
        if resistor:
            return (f"{resistor} ({ohms(comp['resistor_ohm'])}) cancels little: the bias "
                    "currents do not track")
        return ""
    when = " for matched (bipolar) inputs" if useful is None else ""
    minus = comp.get("minus_ohm")
    if minus:
        nets = s.get("nets") or {}
        follower = bool(nets.get("minus")) and nets.get("minus") == nets.get("out")
        where = "in the feedback path" if follower else "in series with the - input"
        return (f"the + input sees more: {ohms(minus)} {where} would balance the inputs "
                f"({_e96(minus)}){when}")
    if resistor:
        if ideal is None:
            return f"{resistor} cannot balance the inputs (the + input sees more)"
        if math.isclose(ideal, comp["resistor_ohm"], rel_tol=0.01):
            return f"{resistor} ({ohms(comp['resistor_ohm'])}) balances the inputs"
        return (f"{resistor} {ohms(comp['resistor_ohm'])} -> {ohms(ideal)} ({_e96(ideal)})"
                f"{when}")
    if ideal is None:
        return ""
    if ideal == 0.0:
        return "the inputs see equal resistances"
    return f"{ohms(ideal)} in series with the + input ({_e96(ideal)}){when}"


def split(s: Stage) -> str:
    """``Vos 2.75 mV + Ib 1.2 mV + Ios 60 µV + U4/1 x11: 240 mV + drift to 70 °C 8.9 mV
    = 253 mV``: the terms of the worst case over temperature."""
    sp = s.get("split")
    if not sp or sp.get("vos_v") is None:
        return ""
    parts: list[str] = []
    plus, minus = sp.get("ib_plus_v") or 0.0, sp.get("ib_minus_v") or 0.0
    for label, key in (("Vos", "vos_v"), ("Ib", "ib_v"), ("Ios", "ios_v")):
        if sp.get(key):
            text = f"{label} {volts(sp[key])}"
            if key == "ib_v" and plus and minus:
                text += f" (Ib+ alone {volts(plus)}, Ib- alone {volts(minus)})"
            parts.append(text)
    for up in s.get("upstream") or ():
        via = f" ×{gain_text(up['gain'])}" if up.get("gain") is not None else ""
        if up.get("worst_case_v") is None:
            parts.append(f"{up['id']}{via}: unknown")
        elif up["worst_case_v"]:
            parts.append(f"{up['id']}{via}: {volts(up['worst_case_v'])}")
    if s.get("depends_on_undefined_output"):
        parts.append("an output with no defined DC level")
    if sp.get("drift_v"):
        parts.append(f"drift to {sp['worst_temp_c']:g} °C {volts(sp['drift_v'])}")
    total = s.get("worst_case_over_temp_v")
    return " + ".join(parts) + (f" = {volts(total)}" if total is not None else "")


def chain(s: Stage) -> str:
    """``U1/1 (gain -3.08)``: the stages feeding this one, where the split (which names
    them with their shares) cannot be shown."""
    ups = s.get("upstream") or []
    if not ups or (s.get("split") or {}).get("vos_v") is not None:
        return ""
    return ", ".join(f"{u['id']} (gain {gain_text(u['gain'])})" for u in ups)


_PARAMS = (("vos", "Vos", "V"), ("ib", "Ib", "A"), ("ios", "Ios", "A"),
           ("tcvos", "TCVos", "V/°C"), ("ib_hot", "Ib hot", "A"), ("ios_hot", "Ios hot", "A"))


_INPUT = {"jfet": "JFET", "cmos": "CMOS"}
_DEFAULTS = {"ios": "Ios = Ib", "tcvos": "TCVos 0 (no drift data)"}


def _source_label(source: str) -> str:
    if source.startswith("library:"):
        return f"library {source.removeprefix('library:')}"
    if source == "field":
        return "symbol fields"
    return "default"


def values(s: Stage) -> str:
    """The part figures used, grouped by where they came from."""
    p = s.get("params") or {}
    source = p.get("source") or {}
    groups: dict[str, list[str]] = {}
    for key, label, unit in _PARAMS:
        if p.get(key) is None:
            continue
        origin = source.get(key, "")
        text = f"{label} {format_si(p[key], unit)}"
        if origin.startswith("default"):
            text = _DEFAULTS.get(key, f"{text} {origin.removeprefix('default').strip()}")
        groups.setdefault(_source_label(origin), []).append(text)
    if not groups:
        return ""
    extra = []
    if p.get("input") and p["input"] != "unknown":
        extra.append(f"{_INPUT.get(p['input'], p['input'])} input")
    if p.get("t_hot") is not None and (p.get("ib_hot") is not None or p.get("ios_hot") is not None):
        extra.append(f"hot values at {p['t_hot']:g} °C")
    if p.get("aol"):
        extra.append(f"Aol {20 * math.log10(p['aol']):.0f} dB")
    if extra:
        first = next(iter(groups))
        groups[first] += extra
    return f"{s['value']}: " + "; ".join(f"{', '.join(items)} ({origin})"
                                          for origin, items in groups.items())


def requirements(s: Stage, temp_range: tuple[float, float] | None) -> str:
    """What the stage's own part must meet for the budget, and what the part gives."""
    need = s.get("requirements")
    if not need:
        return ""
    span = f" over {temp_range[0]:g} to {temp_range[1]:g} °C" if temp_range else ""
    budget = volts(need["budget_v"])
    upstream = need.get("upstream_v")
    unknown = need.get("upstream_unknown") or []
    if need["available_v"] <= 0:
        return (f"no part meets the {budget} budget: the stages upstream already give "
                f"{volts(need['budget_v'] - need['available_v'])} at the worse end of the range")
    note = []
    if upstream:
        note.append(f"after {volts(upstream)} from upstream")
    if unknown:
        note.append(f"upstream {', '.join(unknown)} not counted (no data)")
    elif upstream is None:
        note.append("an upstream output with no defined DC level is not counted")

    def limits(kind: str) -> str:
        items = []
        for label, key, fmt in (("Vos", f"vos_{kind}_v", volts), ("Ib", f"ib_{kind}_a", amps),
                                ("Ios", f"ios_{kind}_a", amps)):
            if need.get(key) is not None:
                items.append(f"{label} < {fmt(need[key])}")
        return ", ".join(items)

    drift = f", Vos with its drift over {need['delta_t_c']:g} °C" if need.get("delta_t_c") else ""
    text = (f"{limits('split')} (even split) or {limits('alone')} (each alone) for the "
            f"{budget} budget{span}{drift}" + "".join(f"; {n}" for n in note))
    gives = [(need.get("part_vos_v"), volts), (need.get("part_ib_a"), amps),
             (need.get("part_ios_a"), amps)]
    if any(v is not None for v, _ in gives):
        shown = ", ".join(fmt(v) for v, fmt in gives if v is not None)
        verdict = {True: "fits", False: "too much", None: "incomplete"}[need.get("part_within")]
        text += f"; {s['value']} gives {shown} at worst over the range: {verdict}"
    return text


def _plural(count: int, word: str) -> str:
    return f"{count} {word}{'s' if count != 1 else ''}"


def missing_summary(missing: list[dict[str, Any]]) -> str:
    """``2 part numbers have no data: TL074 (8 units in 2 designs), ...``."""
    verb = "have" if len(missing) != 1 else "has"
    return (f"{_plural(len(missing), 'part number')} {verb} no data: " + ", ".join(
        f"{m['part']} ({_plural(m['units'], 'unit')} in {_plural(len(m['designs']), 'design')})"
        for m in missing))
