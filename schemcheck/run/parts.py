"""``schemcheck parts``: which op-amps of a set of designs have no data, a library skeleton
to fill for them, and a library checked and tabulated (the I/O edge around the engine's
matching and parameters)."""

from __future__ import annotations

import os
from typing import Any

from schemcheck.errors import SchemcheckError
from schemcheck.settings import Settings


def _display(path: str) -> str:
    """``path`` relative to the working folder when inside it."""
    relative = os.path.relpath(os.path.abspath(path))
    return path if relative.startswith("..") else relative


def _unit_name(part, channel: int | None) -> str:
    name = f"{part.ref}/{part.unit}"
    return name + (f".{channel}" if channel else "")


def missing_parts(paths: list[str], *, overrides: dict[str, Any] | None = None,
                  settings_path: str | None = None) -> dict[str, Any]:
    """The op-amp part numbers with no Vos, Ib or Ios (from fields or the libraries)
    across the designs under ``paths``, grouped by the key they would be matched by."""
    from schemcheck.circuit.load import load_netlist
    from schemcheck.engine.params import ParameterError, resolve
    from schemcheck.engine.partmatch import family, match_keys
    from schemcheck.engine.stages import recognise
    from schemcheck.io.discover import find_designs
    from schemcheck.run.batch import read_libraries, settings_for

    designs, unreadable = find_designs(paths)
    errors = [str(e) for e in unreadable]
    groups: dict[str, dict[str, Any]] = {}
    libraries: dict[tuple[str, str], dict[str, Any]] = {}
    audited: list[str] = []
    for design in designs:
        shown = _display(design.root)
        try:
            settings = settings_for(design.root, Settings(), dict(overrides or {}),
                                    settings_path)
            library = read_libraries(design.root, settings)
            netlist = load_netlist(design.root)
        except SchemcheckError as error:
            errors.append(str(error))
            continue
        except OSError as error:
            errors.append(f"{error.filename or design.root}: could not read "
                          f"({error.strerror or error})")
            continue
        errors.extend(netlist.errors)
        audited.append(shown)
        for source, (_, path) in zip(library.sources, settings.parts_libraries()):
            libraries.setdefault((source.origin, _display(os.path.abspath(path))),
                                 {"origin": source.origin, "path": _display(os.path.abspath(path)),
                                  "entries": source.entries})
        units, _ = recognise(netlist.parts)
        for unit in units:
            part = unit.part
            try:
                params = resolve(part, library)
            except ParameterError as error:
                errors.append(f"{shown}: {error}")
                continue
            missing = params.missing()
            if not missing:
                continue
            keys = match_keys(part)
            if keys:
                _, field_name, key = keys[0]
            else:
                field_name, key = "Reference", part.ref
            group = groups.setdefault(key.casefold(), {
                "part": key, "field": field_name, "family": family(key),
                "other_keys": [], "missing": [], "used_by": [], "designs": [],
                "input": None, "input_source": None, "description": part.description,
                "entry": params.library_entry,
                "ambiguous": list(params.ambiguity.candidates) if params.ambiguity else []})
            for _, other_field, other in keys[1:]:
                label = f"{other_field} {other}"
                if label not in group["other_keys"]:
                    group["other_keys"].append(label)
            for name in missing:
                if name not in group["missing"]:
                    group["missing"].append(name)
            if shown not in group["designs"]:
                group["designs"].append(shown)
                group["used_by"].append({"design": shown, "units": []})
            group["used_by"][group["designs"].index(shown)]["units"].append(
                _unit_name(part, unit.channel))
            if params.input_type != "unknown" and group["input"] is None:
                group["input"] = params.input_type
                group["input_source"] = params.source.get("input_type")
    order = ("vos", "ib", "ios")
    parts = []
    for group in sorted(groups.values(), key=lambda g: g["part"].casefold()):
        group["missing"] = [n for n in order if n in group["missing"]]
        parts.append(group)
    return {"designs": audited, "libraries": list(libraries.values()), "parts": parts,
            "errors": errors}


def check_library(path: str) -> dict[str, Any]:
    """The library at ``path`` validated (a :class:`schemcheck.errors.ParseError` names
    the file, entry and key of the first problem) and read back as numbers."""
    from schemcheck.engine.params import from_library
    from schemcheck.engine.partmatch import family
    from schemcheck.io.partslib import load_parts_library
    from schemcheck.partdata import FIGURES, parse_figure

    entries = load_parts_library(path)
    rows = []
    for name, entry in entries.items():
        params = from_library(name, entry)
        figures: dict[str, dict[str, float | None]] = {}
        for figure in FIGURES:
            raw = entry.get(figure)
            if raw is None or raw == "":
                continue
            limits = raw if isinstance(raw, dict) else {"max": raw}
            figures[figure] = {
                limit: (abs(parse_figure(figure, str(limits[limit]), figure).value)
                        if limits.get(limit, "") != "" else None) for limit in ("typ", "max")}
            if figures[figure] == {"typ": None, "max": None}:
                del figures[figure]
        rows.append({"name": name, "aliases": list(entry.get("aliases", [])),
                     "family": family(name), "input": params.input_type,
                     "ib_either_sign": params.ib_either_sign, "figures": figures,
                     "typical_only": list(params.typical_only), "t_hot": params.t_hot,
                     "aol": params.aol, "description": entry.get("description", "")})
    return {"library": path, "entries": rows}
