"""Read the schematic editor's exported netlists into the connectivity model.

Two forms carry the same content (KiCad's netlist format "E"):

* the S-expression netlist ``(export (version "E") ...)``, usually ``*.net``;
* the XML intermediate netlist that the editor hands to external generator scripts
  (``<export version="E">``). It is parsed with defusedxml: entity expansion, external
  entities and DTDs are refused with a clear error, never expanded.

Netlists carry no drawing, so a part's pins are not split by unit: every pin is given
unit 0 unless the libpart lists its units.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field
from typing import Any

from schemcheck.errors import ParseError
from schemcheck.io import sexpr
from schemcheck.model import Net, Netlist, Node, Part, Pin
from schemcheck.model import natural_key as _natural

#: Net names that are supply rails when a netlist does not say which nets came from
#: power symbols (common practice in KiCad's power library names).
POWER_NAME = re.compile(r"^(?:[AD]?GND[A-Z0-9_]*|GNDA|GNDD|PGND|EARTH|V(?:CC|DD|EE|SS|BAT|BUS)"
                        r"[A-Z0-9_]*|[+-]\d+(?:[.V]\d*)?V?\d*[A-Z0-9_]*|VREF)$", re.I)


@dataclass(slots=True)
class _Comp:
    ref: str
    value: str = ""
    lib: str = ""
    part: str = ""
    description: str = ""
    sheet: str = "/"
    fields: dict[str, str] = field(default_factory=dict)
    flags: set[str] = field(default_factory=set)


@dataclass(slots=True)
class _LibPart:
    pins: list[Pin]
    description: str = ""
    keywords: str = ""
    unit_count: int = 1


def _assemble(comps: list[_Comp], libparts: dict[tuple[str, str], _LibPart],
              nets: list[tuple[str, list[tuple[str, str]]]], source: str, fmt: str,
              version: str) -> Netlist:
    parts = []
    warnings = []
    seen_refs: set[str] = set()
    for comp in comps:
        if comp.ref in seen_refs:
            warnings.append(f"{source}: reference {comp.ref} names two components; the "
                            "netlist cannot tell their pins apart (annotate the design and "
                            "export it again)")
        seen_refs.add(comp.ref)
    seen_nets: set[str] = set()
    for name, _ in nets:
        if name in seen_nets:
            warnings.append(f"{source}: net name {name!r} is used by two nets; the audit "
                            "joins them into one (export the netlist again)")
        seen_nets.add(name)
    for comp in comps:
        lib = libparts.get((comp.lib, comp.part))
        if lib is None:
            warnings.append(f"{source}: part {comp.ref} names library part "
                            f"{comp.lib}:{comp.part}, which the netlist's libparts lack")
        fields = {"Reference": comp.ref, "Value": comp.value}
        fields.update(comp.fields)
        parts.append(Part(
            ref=comp.ref, unit=1, value=comp.value, lib_id=f"{comp.lib}:{comp.part}",
            sheet=comp.sheet, fields=fields, pins=tuple(lib.pins) if lib else (),
            dnp="dnp" in comp.flags, exclude_from_sim="exclude_from_sim" in comp.flags,
            in_bom="exclude_from_bom" not in comp.flags,
            unit_count=lib.unit_count if lib else 1,
            description=comp.description or (lib.description if lib else ""),
            keywords=(lib.keywords if lib else "") or comp.fields.get("ki_keywords", ""),
            source_file=source))
    dnp = {comp.ref for comp in comps if "dnp" in comp.flags}
    out_nets = []
    for name, nodes in nets:
        kept = sorted({Node(ref, pin) for ref, pin in nodes
                       if not ref.startswith("#") and ref not in dnp},
                      key=lambda n: (_natural(n.ref), _natural(n.pin)))
        if kept:
            generated = name.startswith(("Net-(", "unconnected-("))
            kind = ("" if generated else "label" if name.startswith("/") else
                    "power" if POWER_NAME.match(name) else "global_label")
            out_nets.append(Net(name, tuple(kept), not generated,
                                kind in ("power", "global_label"), (), kind))
    out_nets.sort(key=lambda n: _natural(n.name))
    parts.sort(key=lambda p: (_natural(p.ref), p.unit))
    return Netlist(nets=tuple(out_nets), parts=tuple(parts), source=source, format=fmt,
                   version=version, files=(source,), warnings=tuple(warnings))


# ---------------------------------------------------------------------------
# S-expression form


def _child(node: list[Any], head: str) -> list[Any] | None:
    for sub in node[1:]:
        if sub.__class__ is list and sub and sub[0] == head:
            return sub
    return None


def _children(node: list[Any], head: str) -> list[list[Any]]:
    return [sub for sub in node[1:] if sub.__class__ is list and sub and sub[0] == head]


def _value(node: list[Any] | None, default: str = "") -> str:
    if node is None or len(node) < 2 or node[1].__class__ is list:
        return default
    return str(node[1])


def read_sexpr_netlist(text: str, file: str) -> Netlist:
    """Parse an S-expression netlist ``(export (version "E") ...)``."""
    tree = sexpr.parse(text, file=file)
    if not tree or tree[0] != "export":
        raise ParseError("expected a netlist '(export (version \"E\") ...)'", file=file,
                         line=1, column=1)
    version = _value(_child(tree, "version"))
    comps = []
    components = _child(tree, "components") or ["components"]
    for comp in _children(components, "comp"):
        ref = _value(_child(comp, "ref"))
        if not ref:
            line, column, snippet = sexpr.locate(text, (tree.index(components),
                                                        components.index(comp)))
            raise ParseError("expected '(ref \"...\")' in '(comp ...)'", file=file, line=line,
                             column=column, snippet=snippet)
        c = _Comp(ref=ref, value=_value(_child(comp, "value")))
        libsource = _child(comp, "libsource")
        if libsource is not None:
            c.lib = _value(_child(libsource, "lib"))
            c.part = _value(_child(libsource, "part"))
            c.description = _value(_child(libsource, "description"))
        sheetpath = _child(comp, "sheetpath")
        if sheetpath is not None:
            c.sheet = _value(_child(sheetpath, "names"), "/")
        for name in ("footprint", "datasheet"):
            got = _child(comp, name)
            if got is not None:
                c.fields[name.capitalize()] = _value(got)
        fields = _child(comp, "fields")
        if fields is not None:
            for f in _children(fields, "field"):
                key = _value(_child(f, "name"))
                rest = [x for x in f[1:] if x.__class__ is not list]
                c.fields[key] = str(rest[0]) if rest else ""
        for prop in _children(comp, "property"):
            key = _value(_child(prop, "name"))
            if key in ("dnp", "exclude_from_sim", "exclude_from_bom", "exclude_from_board"):
                c.flags.add(key)
            elif key and key not in ("Sheetname", "Sheetfile"):
                c.fields.setdefault(key, _value(_child(prop, "value")))
        comps.append(c)
    libparts: dict[tuple[str, str], _LibPart] = {}
    for lp in _children(_child(tree, "libparts") or ["libparts"], "libpart"):
        pins = []
        for pin in _children(_child(lp, "pins") or ["pins"], "pin"):
            pins.append(Pin(_value(_child(pin, "num")), _value(_child(pin, "name")),
                            _value(_child(pin, "type"), "passive")))
        part_key = (_value(_child(lp, "lib")), _value(_child(lp, "part")))
        libparts[part_key] = _LibPart(pins, _value(_child(lp, "description")))
    nets = []
    for net in _children(_child(tree, "nets") or ["nets"], "net"):
        nodes = [(_value(_child(n, "ref")), _value(_child(n, "pin")))
                 for n in _children(net, "node")]
        nets.append((_value(_child(net, "name")), nodes))
    return _assemble(comps, libparts, nets, file, "kicad_net", version)


# ---------------------------------------------------------------------------
# XML form


def _xml_position(data: bytes | str, marks: tuple[bytes, ...], skip: int = 0) -> tuple[int, int]:
    """Line and column of the ``skip``-th match of the first of the patterns ``marks``
    that matches ``data`` (for messages only; 1, 1 when none does)."""
    raw = data.encode("utf-8") if isinstance(data, str) else data
    for mark in marks:
        found = list(re.finditer(mark, raw))
        if len(found) > skip:
            at = found[skip].start()
            return raw.count(b"\n", 0, at) + 1, at - (raw.rfind(b"\n", 0, at) + 1) + 1
    return 1, 1


def read_xml_netlist(data: bytes | str, file: str) -> Netlist:
    """Parse the XML intermediate netlist, refusing entity tricks."""
    import xml.etree.ElementTree as ElementTree

    import defusedxml.ElementTree as SafeTree
    from defusedxml import DefusedXmlException

    try:
        root = SafeTree.fromstring(data, forbid_dtd=True)
    except DefusedXmlException as error:
        line, column = _xml_position(data, (rb"<!DOCTYPE", rb"<!ENTITY", rb"<!"))
        raise ParseError(f"expected a plain XML netlist, found a forbidden construct "
                         f"({type(error).__name__}: DTDs and entities are refused)",
                         file=file, line=line, column=column) from None
    except ElementTree.ParseError as error:
        line, column = error.position
        raise ParseError(f"expected well-formed XML: {error}", file=file, line=line,
                         column=column + 1) from None
    except (LookupError, ValueError) as error:  # e.g. an unknown encoding declaration
        raise ParseError(f"expected a UTF-8 XML netlist: {error}", file=file, line=1,
                         column=1) from None
    if root.tag != "export":
        raise ParseError(f"expected an XML netlist <export version=\"E\">, found <{root.tag}>",
                         file=file, line=1, column=1)
    comps = []
    for number, comp in enumerate(root.iterfind("components/comp")):
        c = _Comp(ref=comp.get("ref", ""), value=comp.findtext("value", ""))
        if not c.ref:
            line, column = _xml_position(data, (rb"<comp[\s/>]",), number)
            raise ParseError("expected a 'ref' attribute on <comp>", file=file, line=line,
                             column=column)
        libsource = comp.find("libsource")
        if libsource is not None:
            c.lib = libsource.get("lib", "")
            c.part = libsource.get("part", "")
            c.description = libsource.get("description", "")
        sheetpath = comp.find("sheetpath")
        if sheetpath is not None:
            c.sheet = sheetpath.get("names", "/")
        for name in ("footprint", "datasheet"):
            text = comp.findtext(name)
            if text is not None:
                c.fields[name.capitalize()] = text
        for f in comp.iterfind("fields/field"):
            c.fields[f.get("name", "")] = f.text or ""
        for prop in comp.iterfind("property"):
            key = prop.get("name", "")
            if key in ("dnp", "exclude_from_sim", "exclude_from_bom", "exclude_from_board"):
                c.flags.add(key)
            elif key and key not in ("Sheetname", "Sheetfile"):
                c.fields.setdefault(key, prop.get("value", ""))
        comps.append(c)
    libparts = {}
    for lp in root.iterfind("libparts/libpart"):
        pins = [Pin(p.get("num", ""), p.get("name", ""), p.get("type", "passive"))
                for p in lp.iterfind("pins/pin")]
        libparts[(lp.get("lib", ""), lp.get("part", ""))] = _LibPart(
            pins, lp.findtext("description", ""))
    nets = []
    for net in root.iterfind("nets/net"):
        nodes = [(n.get("ref", ""), n.get("pin", "")) for n in net.iterfind("node")]
        nets.append((net.get("name", ""), nodes))
    return _assemble(comps, libparts, nets, file, "kicad_xml", root.get("version", ""))
