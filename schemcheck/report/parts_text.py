"""Text forms of ``schemcheck parts missing`` and ``schemcheck parts check``."""

from __future__ import annotations

from typing import Any

from schemcheck.partdata import DISPLAY
from schemcheck.units import format_si

_NAMES = DISPLAY
_UNITS = {"vos": "V", "ib": "A", "ios": "A", "tcvos": "V/°C", "ib_hot": "A", "ios_hot": "A"}


def _libraries(libraries: list[dict[str, Any]]) -> list[str]:
    if not libraries:
        return ["parts libraries read: none"]
    return ["parts libraries read (a later one wins):"] + [
        f"  {lib['origin']}: {lib['path']} ({lib['entries']} "
        f"entr{'y' if lib['entries'] == 1 else 'ies'})" for lib in libraries]


def missing_text(report: dict[str, Any]) -> str:
    parts = report["parts"]
    designs = report["designs"]
    title = (f"op-amp part numbers with no DC data in {len(designs)} "
             f"design{'' if len(designs) == 1 else 's'}: {len(parts)}")
    lines = [title, ""]
    for part in parts:
        missing = ", ".join(_NAMES[n] for n in part["missing"])
        lines.append(f"{part['part']}  (no {missing})")
        lines.append("  used by " + "; ".join(f"{', '.join(use['units'])} in {use['design']}"
                                              for use in part["used_by"]))
        how = f"by {part['field']} {part['part']}"
        if part["other_keys"]:
            how += ", then " + ", ".join(part["other_keys"])
        if part["family"].casefold() != part["part"].casefold():
            how += f", then by family {part['family']}"
        lines.append(f"  would be matched {how}")
        if part["entry"]:
            lines.append(f"  library entry {part['entry']} found, without these figures")
        if part["ambiguous"]:
            lines.append(f"  ambiguous by family: {', '.join(part['ambiguous'])}")
        if part["input"]:
            source = part["input_source"] or ""
            source = source.split(" via ")[0] if source.startswith("library:") else source
            lines.append(f"  input type: {part['input']} (from {source})")
    if parts:
        lines.append("")
    lines += _libraries(report["libraries"])
    return "\n".join(lines) + "\n"


def _pair(figure: dict[str, float | None] | None, unit: str, sign: str = "") -> str:
    if not figure:
        return "-"
    shown = [sign + format_si(figure[k], unit).replace(" ", "") if figure[k] is not None
             else "-" for k in ("typ", "max")]
    return " / ".join(shown)


def check_text(report: dict[str, Any]) -> str:
    entries = report["entries"]
    title = (f"parts library {report['library']}: {len(entries)} "
             f"entr{'y' if len(entries) == 1 else 'ies'}, valid")
    lines = [title, ""]
    names = ("vos", "ib", "ios", "tcvos", "ib_hot")
    header = f"  {'entry':<14} {'input':<20}" + "".join(
        f" {_NAMES[n] + ' typ / max':<24}" for n in names) + f" {'T_hot':>6}"
    lines.append(header.rstrip())
    for entry in entries:
        cells = []
        for name in names:
            sign = "±" if name == "ib" and entry["ib_either_sign"] else ""
            cell = _pair(entry["figures"].get(name), _UNITS[name], sign)
            cells.append(f" {cell:<24}")
        t_hot = f"{entry['t_hot']:g}" if entry["t_hot"] is not None else "-"
        lines.append((f"  {entry['name']:<14} {entry['input']:<20}" + "".join(cells)
                      + f" {t_hot:>6}").rstrip())
    notes = []
    for entry in entries:
        if entry["aliases"]:
            notes.append(f"  {entry['name']}: aliases {', '.join(entry['aliases'])}")
        if entry["typical_only"]:
            notes.append(f"  {entry['name']}: typical only (no max): "
                         + ", ".join(_NAMES[n] for n in entry["typical_only"]))
    if notes:
        lines += [""] + notes
    return "\n".join(lines) + "\n"
