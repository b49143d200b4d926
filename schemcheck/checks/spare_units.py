"""``spare-inputs-floating``: a spare amplifier unit (its output reaches nothing) whose
inputs float. A floating spare may oscillate or sit at a rail and draw supply current
(common practice: tie a spare off as a follower, its + input to a level inside the input
range). A spare tied off that way, or with its inputs on rails, is not a stage and not a
finding."""

from __future__ import annotations

from schemcheck.checks.context import StageContext
from schemcheck.model import Finding


def check_spare_units(ctx: StageContext) -> list[Finding]:
    findings = []
    for unit, pins in ctx.network.floating_spares:
        part = unit.part
        findings.append(Finding(
            "spare-inputs-floating", "warning", part.ref, part.unit,
            f"{unit.name} ({part.value}) is a spare amplifier whose inputs float "
            f"({', '.join(pins)}): a floating spare may oscillate or sit at a rail and draw "
            "supply current",
            "tie the spare off: output to its - input (a follower) and its + input to a "
            "level inside its input range (mid-supply, or ground on a split supply)",
            part.sheet, data={"floating_pins": list(pins)}, channel=unit.channel,
            stage=unit.name))
    return findings
