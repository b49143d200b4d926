"""One entry point: any supported design file in, a :class:`Netlist` out."""

from __future__ import annotations

import dataclasses
import os

from schemcheck.errors import ParseError
from schemcheck.io.files import decode, read_bytes
from schemcheck.io.sexpr import collector_paused
from schemcheck.model import Netlist

#: What a file starts with -> its kind.
_SIGNATURES = (("(kicad_sch", "kicad_sch"), ("(export", "kicad_net"), ("<", "kicad_xml"))


def sniff(text: str) -> str | None:
    """The kind of design file ``text`` is, or None."""
    head = text.lstrip()[:64]
    for signature, kind in _SIGNATURES:
        if head.startswith(signature):
            return kind
    return None


def load_netlist(path: str | os.PathLike[str]) -> Netlist:
    """Read a root schematic (with its hierarchy) or an exported netlist.

    Raises :class:`ParseError` when ``path`` itself cannot be read. Child sheets that
    cannot be read are listed in ``Netlist.errors``; the rest of the design is kept.
    """
    with collector_paused():
        return _load(os.fspath(path))


def _load(name: str) -> Netlist:
    data = read_bytes(name)
    text = decode(data, name)
    kind = sniff(text)
    if kind == "kicad_sch":
        from schemcheck.circuit.connectivity import build_netlist
        from schemcheck.io.design import check_cycles, load_design

        design = load_design(name, text)
        check_cycles(design)
        netlist = build_netlist(design)
        if design.problems or design.warnings:
            netlist = dataclasses.replace(
                netlist, errors=tuple(str(p) for p in design.problems),
                warnings=tuple(design.warnings) + netlist.warnings,
                error_locations=tuple(_where(p, name) for p in design.problems))
        return netlist
    if kind == "kicad_net":
        from schemcheck.io.netlist import read_sexpr_netlist

        return read_sexpr_netlist(text, name)
    if kind == "kicad_xml":
        from schemcheck.io.netlist import read_xml_netlist

        return read_xml_netlist(data, name)
    first = text.lstrip().split("\n", 1)[0][:40]
    raise ParseError("expected a KiCad schematic '(kicad_sch ...)' or an exported netlist "
                     f"('(export ...)' or XML '<export ...>'), found {first!r}",
                     file=name, line=1, column=1)


def _where(problem: Exception, root: str) -> tuple[str, int | None, int | None]:
    """(file, line, column) of a problem with one file of a design."""
    if isinstance(problem, ParseError):
        return problem.file or root, problem.line, problem.column
    return root, None, None


__all__ = ["load_netlist", "sniff", "decode"]
