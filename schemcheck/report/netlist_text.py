"""Readable text form of a netlist (``schemcheck netlist --format text``)."""

from __future__ import annotations

from schemcheck.model import Netlist


def netlist_text(netlist: Netlist) -> str:
    """One line per net (name: nodes), then one line per part."""
    lines = [f"design: {netlist.source} ({netlist.format} {netlist.version})",
             f"{len(netlist.nets)} nets, {len(netlist.parts)} parts", "", "nets:"]
    width = max((len(net.name) for net in netlist.nets), default=0)
    for net in netlist.nets:
        nodes = " ".join(f"{n.ref}.{n.pin}" for n in net.nodes)
        lines.append(f"  {net.name:<{width}}  {nodes}")
    lines += ["", "parts:"]
    for part in netlist.parts:
        flags = "".join((" DNP" if part.dnp else "", " no-sim" if part.exclude_from_sim else ""))
        unit = f" unit {part.unit}" if part.unit_count > 1 else ""
        lines.append(f"  {part.ref}{unit}  {part.value}  {part.lib_id}  {part.sheet}{flags}")
    for warning in netlist.warnings:
        lines.append(f"warning: {warning}")
    for error in netlist.errors:
        lines.append(f"error: {error}")
    return "\n".join(lines) + "\n"
