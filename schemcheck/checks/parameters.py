"""``missing-parameters``: a part number with no Vos, Ib or Ios, once per part number
(its value as drawn) and set of missing figures, naming every stage that uses it."""

from __future__ import annotations

from schemcheck.checks.context import StageContext
from schemcheck.model import Finding

_NAMES = {"vos": "Vos", "ib": "Ib", "ios": "Ios"}


def missing_by_part(ctx: StageContext) -> dict[tuple[str, tuple[str, ...]], list[int]]:
    """(part number, missing figures) -> the op-amps using it, in network order."""
    groups: dict[tuple[str, tuple[str, ...]], list[int]] = {}
    for k, params in enumerate(ctx.params):
        missing = tuple(params.missing())
        if missing:
            value = ctx.network.opamps[k].unit.part.value
            groups.setdefault((value, missing), []).append(k)
    return groups


def check_parameters(ctx: StageContext) -> list[Finding]:
    findings = []
    for (value, missing), opamps in missing_by_part(ctx).items():
        first = opamps[0]
        ref, unit, sheet = ctx.who(first)
        stages = [ctx.name(k) for k in opamps]
        names = ", ".join(_NAMES[m] for m in missing)
        why = ""
        if ctx.estimate_missing and ctx.params[first].input_type == "unknown":
            why = (" (no class estimate: its input type is unknown; give it an Input field "
                   "or an input in the library)")
        count = f"{len(stages)} units" if len(stages) > 1 else "1 unit"
        findings.append(Finding(
            "missing-parameters", "warning", ref, unit,
            f"{value} ({count}: {', '.join(stages)}) has no {names}: the stages' "
            f"sensitivities and part requirements are reported, their error is unknown{why}",
            f"add the fields {names} to the symbol, or an entry for {value!r} to the parts "
            "library", sheet,
            data={"missing": list(missing), "value": value, "stages": stages,
                  "units": len(stages)}, **ctx.ids(first)))
    return findings
