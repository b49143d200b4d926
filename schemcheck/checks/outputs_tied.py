"""``outputs-tied``: two outputs drive one net (op-amp outputs, or an op-amp output and
another part's output pin). Each fights the other; the net's level is whichever wins, so
the stages driving it have no defined output (status ``outputs-tied``) and the stages it
feeds are marked as depending on an undefined output. The rest of the design is solved."""

from __future__ import annotations

from schemcheck.checks.context import StageContext
from schemcheck.model import Finding


def check_outputs_tied(ctx: StageContext) -> list[Finding]:
    findings = []
    network = ctx.network
    for net, drivers in network.tied.items():
        stages = [k for k, op in enumerate(network.opamps) if op.out == net]
        named = " and ".join([", ".join(d.describe() for d in drivers[:-1]),
                              drivers[-1].describe()])
        first = next((d for d in drivers if d.stage), drivers[0])
        if stages:
            ref, unit, sheet = ctx.who(stages[0])
            ids = ctx.ids(stages[0])
        else:
            ref, unit, sheet, ids = first.ref, first.unit, "", {"stage": first.stage}
        findings.append(Finding(
            "outputs-tied", "error", ref, unit,
            f"{named} {'both' if len(drivers) == 2 else 'all'} drive net {net}: two outputs on "
            "one net fight each other (the net's level is whichever wins, with a large current "
            "between them); the stages driving it have no defined output",
            "keep one driver on the net: separate the outputs (each to its own net, or "
            "through a resistor each where they are meant to share a load) or remove the "
            "wrong connection", sheet,
            data={"net": net, "drivers": [d.describe() for d in drivers],
                  "stages": [d.stage for d in drivers if d.stage]}, **ids))
    return findings
