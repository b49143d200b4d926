"""``missing-parameters``: an op-amp with no Vos, Ib or Ios."""

from __future__ import annotations

from schemcheck.model import Finding
from schemcheck.checks.context import StageContext

_NAMES = {"vos": "Vos", "ib": "Ib", "ios": "Ios"}


def check_parameters(ctx: StageContext) -> list[Finding]:
    findings = []
    seen: set[tuple[str, int]] = set()
    for k, params in enumerate(ctx.params):
        missing = params.missing()
        ref, unit, sheet = ctx.who(k)
        if not missing or (ref, unit) in seen:
            continue
        seen.add((ref, unit))
        value = ctx.network.opamps[k].unit.part.value
        names = ", ".join(_NAMES[m] for m in missing)
        why = ""
        if ctx.estimate_missing and params.input_type == "unknown":
            why = (" (no class estimate: its input type is unknown; give it an Input field "
                   "or an input in the library)")
        findings.append(Finding(
            "missing-parameters", "warning", ref, unit,
            f"{ctx.name(k)} ({value}) has no {names}: its sensitivities are reported, its "
            f"error is unknown{why}",
            f"add the fields {names} to the symbol, or an entry for {value!r} to the parts "
            "library", sheet))
    return findings
