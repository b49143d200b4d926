"""The design-specific assumptions of an audit, grouped so a reviewer reads a few lines.

One line per kind: the rails taken as ideal sources; the nets driven from outside with
their source resistance (annotated, or none); nets driven by parts that are not analysed;
the potentiometers at mid-travel; the parts left open that touch an analysed network
(never mechanical parts, nor parts whose other pins are all on rails); default part
values. An annotated source resistance replaces the "ideal source" statement of the same
net (never both); lines are de-duplicated; anything else the network states is kept as
it is. The model's own assumptions, the same for every design, are
:data:`schemcheck.results.MODEL_ASSUMPTIONS`.
"""

from __future__ import annotations

import re

from schemcheck.engine.network import Network
from schemcheck.engine.params import OpampParams
from schemcheck.model import Part, natural_key
from schemcheck.partdata import DISPLAY
from schemcheck.units import format_si

_POT = re.compile(r"^(?P<name>.+): potentiometer taken at mid-travel "
                  r"\((?P<ohms>\S+) Ω each side(?:, taper \w+)?\)$")
_ANNOTATED = re.compile(r"^net (?P<net>.+): driven through the annotated source resistance "
                        r"(?P<ohms>\S+) Ω$")
_IDEAL = re.compile(r"^net (?P<net>.+?): (?P<why>(?:external|driven by|global label).+), taken as "
                    r"an ideal 0 V source \(.*\)$")
_LEFT_OPEN = re.compile(r"^net (?P<net>.+?): (?P<why>.+), left open: (?P<reason>.+)$")
_CONNECTOR = re.compile(r"^external \(connector (?P<ref>[^)]+)\)$")
_DRIVEN = re.compile(r"^driven by (?P<what>.+)$")
_RAILS = re.compile(r"^supply rails and ground are ideal 0 V sources for the error analysis: "
                    r"(?P<nets>.+)$")
_SOURCE_SUFFIX = " (source)"
_MECHANICAL_LIB = re.compile(r"^Mechanical:|MountingHole|Fiducial|Logo", re.I)
_MECHANICAL_REF = re.compile(r"^(?:H|MH|FID|LOGO|MK)\d", re.I)
_TRAILING_NUMBER = re.compile(r"^(.*?)(\d+)$")


def compact(names: list[str]) -> str:
    """``RV1, RV2, RV3, RV5`` -> ``RV1–RV3, RV5``: runs of three or more consecutive
    numbers after one prefix are shown as a range (natural order)."""
    ordered = sorted(dict.fromkeys(names), key=natural_key)
    out: list[str] = []
    run: list[str] = []

    def flush() -> None:
        if len(run) >= 3:
            out.append(f"{run[0]}–{run[-1]}")
        else:
            out.extend(run)
        run.clear()

    for name in ordered:
        if run:
            a, b = _TRAILING_NUMBER.match(run[-1]), _TRAILING_NUMBER.match(name)
            if not (a and b and a.group(1) == b.group(1)
                    and int(b.group(2)) == int(a.group(2)) + 1):
                flush()
        run.append(name)
    flush()
    return ", ".join(out)


def _number(text: str) -> float:
    try:
        return float(text)
    except ValueError:
        return 0.0


def _ohms(text: str) -> str:
    try:
        return format_si(float(text), "Ω")
    except ValueError:
        return f"{text} Ω"


def _group_network(notes: list[str]) -> list[str]:
    """The network's statements, grouped (pots, external nets, driven nets)."""
    pots: dict[str, list[str]] = {}
    annotated: dict[str, str] = {}
    ideal: dict[str, str] = {}
    driven: dict[str, str] = {}
    left_open: dict[str, list[str]] = {}
    other: list[str] = []
    for note in notes:
        if m := _RAILS.match(note):
            other.append(f"rails and ground (0 V sources): {m['nets']}")
        elif m := _POT.match(note):
            pots.setdefault(m["ohms"], []).append(m["name"])
        elif m := _LEFT_OPEN.match(note):
            origin = m["why"].removeprefix("reached from outside ")
            left_open.setdefault(m["reason"], []).append(f"{m['net']} {origin}")
        elif m := _ANNOTATED.match(note):
            annotated[m["net"]] = m["ohms"]
        elif m := _IDEAL.match(note):
            why = m["why"]
            if d := _DRIVEN.match(why):
                driven[m["net"]] = d["what"]
            else:
                ideal[m["net"]] = why
        else:
            other.append(note)
    lines = list(other)
    if annotated or ideal:
        through: dict[tuple[str, str], list[str]] = {}
        plain: list[str] = []
        for net, why in ideal.items():
            c = _CONNECTOR.match(why)
            origin = c["ref"] if c else "global label" if "global label" in why else why
            base = net.removesuffix(_SOURCE_SUFFIX)
            if net.endswith(_SOURCE_SUFFIX) and base in annotated:
                through.setdefault((annotated.pop(base), origin), []).append(base)
            else:
                plain.append(f"{net} ({origin})")
        for net, ohms in annotated.items():  # annotated without a stated origin
            through.setdefault((ohms, ""), []).append(net)
        groups = [f"{', '.join(sorted(nets, key=natural_key))} through {_ohms(ohms)} "
                  f"(annotated{'; ' + origin if origin else ''})"
                  for (ohms, origin), nets in sorted(through.items())]
        if plain:
            groups.append(f"{', '.join(sorted(plain, key=natural_key))} with no source "
                          "resistance (none annotated: field Source_R on the connector, or "
                          "[source_resistance] in the settings)")
        lines.append("nets driven from outside the design, as 0 V sources: " + "; ".join(groups))
    if driven:
        lines.append("nets driven by other parts (outputs, ports, amplifiers not analysed), "
                     "as ideal 0 V sources: "
                     + ", ".join(f"{net} from {what}" for net, what in
                                 sorted(driven.items(), key=lambda i: natural_key(i[0]))))
    for reason, nets in left_open.items():
        lines.append(f"would-be sources left open ({reason}): "
                     + ", ".join(sorted(nets, key=natural_key)))
    if pots:
        lines.append("potentiometers at mid-travel: " + "; ".join(
            f"{compact(names)} ({_ohms(ohms)} each side)"
            for ohms, names in sorted(pots.items(), key=lambda i: _number(i[0]))))
    return lines


def _is_mechanical(part: Part) -> bool:
    return bool(_MECHANICAL_LIB.search(part.lib_id) or _MECHANICAL_REF.match(part.ref))


def _open_parts(network: Network, parts: dict[str, Part], skipped: set[str]) -> str | None:
    near: set[str] = set()
    for op in network.opamps:
        near.update((op.plus, op.minus, op.out))
    for r in network.resistors:
        if r.a in near or r.b in near:
            near.update((r.a, r.b))
    found = []
    for ref, nets in network.open_parts.items():
        part = parts.get(ref)
        if ref in skipped or (part is not None and _is_mechanical(part)) or len(nets) < 2:
            continue
        if any(n in near and n not in network.fixed for n in nets):
            found.append(ref)
    if not found:
        return None
    return "parts with no DC model, left open, that touch an analysed net: " + compact(found)


def _defaults(network: Network, params: list[OpampParams]) -> str | None:
    used: dict[str, list[str]] = {}
    for k, p in enumerate(params):
        for name, source in p.source.items():
            if source.startswith("default") and name in ("ios", "tcvos"):
                what = ("Ios = Ib" if name == "ios" else
                        "TCVos 0 (no drift data)" if name == "tcvos" else f"{name} {source}")
                used.setdefault(what, []).append(network.opamps[k].unit.name)
    if not used:
        return None
    return "default part values: " + "; ".join(f"{what} for {compact(names)}"
                                               for what, names in sorted(used.items()))


def _part_data(network: Network, params: list[OpampParams]) -> list[str]:
    """Figures given as typical only, chopper inputs taken as flat, class estimates."""
    typical: dict[str, list[str]] = {}
    estimated: dict[str, list[str]] = {}
    flat_chopper: list[str] = []
    for k, p in enumerate(params):
        name = network.opamps[k].unit.part.ref
        for figure in p.typical_only:
            typical.setdefault(DISPLAY[figure], []).append(name)
        if p.estimated:
            estimated.setdefault(p.estimate_class or "", []).append(name)
        if p.input_type == "chopper" and p.ib is not None and p.ib_hot is None:
            flat_chopper.append(name)
    lines = []
    for figure, names in sorted(typical.items()):
        lines.append("typical only (no maximum given; the true worst case can be larger): "
                     f"{figure} of {compact(sorted(set(names), key=natural_key))}")
    if flat_chopper:
        lines.append("chopper (zero-drift) inputs without hot values: bias currents taken as "
                     "flat over temperature (set by the input switching, not doubling like a "
                     f"FET's) for {compact(sorted(set(flat_chopper), key=natural_key))}")
    for kind, names in sorted(estimated.items()):
        refs = compact(sorted(set(names), key=natural_key))
        lines.append(f"estimate (class {kind}): missing figures of {refs} filled "
                     "from class values, common practice orders of magnitude and no "
                     "datasheet; their budgets are orders of magnitude only")
    return lines


def design_assumptions(network: Network, parts: list[Part] | tuple[Part, ...],
                       params: list[OpampParams], skipped_refs: set[str],
                       problems: list[str]) -> list[str]:
    """The grouped, de-duplicated design-specific assumptions of one audit."""
    by_ref = {p.ref: p for p in parts}
    lines = _group_network(list(network.assumptions))
    for line in (_open_parts(network, by_ref, skipped_refs), _defaults(network, params)):
        if line:
            lines.append(line)
    lines += _part_data(network, params)
    if skipped_refs:
        lines.append("amplifiers recognised but not analysed (listed under not_analysed) are "
                     "open at DC")
    lines += [f"problem: {p}" for p in problems]
    return list(dict.fromkeys(lines))
