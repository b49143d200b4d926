"""``ambiguous-part-match``: a part number that fits several library entries, or one
entry of a different variant, only by its family: no entry is used."""

from __future__ import annotations

from schemcheck.checks.context import StageContext
from schemcheck.model import Finding


def check_part_match(ctx: StageContext) -> list[Finding]:
    findings = []
    seen: set[tuple[str, int]] = set()
    for k, params in enumerate(ctx.params):
        ambiguity = params.ambiguity
        ref, unit, sheet = ctx.who(k)
        if ambiguity is None or (ref, unit) in seen:
            continue
        seen.add((ref, unit))
        candidates = ", ".join(ambiguity.candidates)
        findings.append(Finding(
            "ambiguous-part-match", "warning", ref, unit,
            f"{ctx.name(k)} ({ambiguity.key}) matches no parts-library entry exactly; "
            f"{ambiguity.reason}: none is used",
            f"add {ambiguity.key!r} to the aliases of the entry whose figures apply "
            f"({candidates}), or give it an entry of its own", sheet))
    return findings
