"""Which parts-library entry a placed op-amp finds, and how the JSON says so.

Outside sources: none is needed for the matching itself (no number is computed): the
expected entries follow the order and the suffix table documented in the README
("Parts library", "Matching"), which are ours; the part numbers are invented. The
fixture's expected results are listed in fixtures/README.md.
"""

from __future__ import annotations

import pytest

from schemcheck.engine.params import resolve
from schemcheck.engine.partmatch import (
    LibrarySource,
    PartsLibrary,
    family,
    family_chain,
    match_part,
)
from schemcheck.model import Part, Pin
from schemcheck.run.batch import audit_paths
from schemcheck.run.runner import options_to_overrides

from . import make_parts
from .conftest import FIXTURES

PARTS = FIXTURES / "parts"
PINS = (Pin("3", "+", "input", 1), Pin("2", "-", "input", 1), Pin("1", "~", "output", 1))

LIBRARY = {
    "LX1612": {"input": "jfet", "vos": "2mV", "ib": "40pA", "ios": "20pA"},
    "LX1612A": {"input": "jfet", "vos": "1mV", "ib": "40pA", "ios": "20pA"},
    "OPX-22": {"input": "bipolar", "vos": "1mV", "ib": "100nA", "ios": "10nA"},
    "OPX-44": {"aliases": ["OPX-44S"], "vos": "60uV", "ib": "±3nA", "ios": "3nA"},
    "OPX-55A": {"vos": "0.5mV", "ib": "50nA", "ios": "5nA"},
    "OPX-55B": {"vos": "1.5mV", "ib": "80nA", "ios": "8nA"},
    "OPX-66": {"vos": "3mV", "ib": "1nA", "ios": "1nA"},
}


def opamp(value: str = "OPAMP", lib_id: str = "Amplifier_Operational:Generic",
          fields: dict[str, str] | None = None, **more: str) -> Part:
    named = {"Reference": "U1", "Value": value, **(fields or {}), **more}
    return Part("U1", 1, value, lib_id, "/", named, PINS)


def test_parts_fixture_is_current(tmp_path, monkeypatch):
    monkeypatch.setattr(make_parts, "OUT", tmp_path)
    make_parts.main()
    made = (tmp_path / "matching.kicad_sch").read_text(encoding="utf-8")
    assert made == (PARTS / "matching.kicad_sch").read_text(encoding="utf-8"), \
        "fixtures/parts/matching.kicad_sch is stale: run python -m tests.make_parts"


@pytest.mark.parametrize(("key", "chain"), [
    pytest.param("LX1612AIDR", ["LX1612AIDR", "LX1612AID", "LX1612AI", "LX1612A", "LX1612"],
                 id="reel-package-temperature-grade"),
    pytest.param("LX1612AxD", ["LX1612AxD", "LX1612Ax", "LX1612A", "LX1612"],
                 id="open-temperature-letter"),
    pytest.param("LX1612IDR", ["LX1612IDR", "LX1612ID", "LX1612I", "LX1612"], id="IDR"),
    pytest.param("LX1612/TR", ["LX1612/TR", "LX1612"], id="slash-TR"),
    pytest.param("LX1612-REEL7", ["LX1612-REEL7", "LX1612"], id="REEL7"),
    pytest.param("LX1612-REEL7/NOPB", ["LX1612-REEL7/NOPB", "LX1612-REEL7", "LX1612"],
                 id="two-packing-marks"),
    pytest.param("lx1612aidbvr", ["lx1612aidbvr", "lx1612aidbv", "lx1612ai", "lx1612a",
                                  "lx1612"], id="lower-case"),
    pytest.param("OPX-1", ["OPX-1"], id="nothing-to-strip"),
    pytest.param("OPAMP", ["OPAMP"], id="no-digits-no-family"),
    pytest.param("LX1612", ["LX1612"], id="digits-never-stripped"),
])
def test_family_chain_follows_the_documented_table(key, chain):
    # The README's suffix table and its two worked examples.
    assert family_chain(key) == chain
    assert family(key) == chain[-1]


@pytest.mark.parametrize(("part", "source", "by"), [
    pytest.param(opamp("LX1612"), "library:LX1612", "value", id="value"),
    pytest.param(opamp("lx1612a"), "library:LX1612A", "value", id="value-case-insensitive"),
    pytest.param(opamp("OPX-44S"), "library:OPX-44 via alias OPX-44S", "value", id="alias"),
    pytest.param(opamp("OPAMP", MPN="opx-22"), "library:OPX-22 via MPN opx-22",
                 "part-number", id="mpn"),
    pytest.param(opamp("OPAMP", mpn="OPX-22"), "library:OPX-22 via MPN OPX-22",
                 "part-number", id="field-name-case-insensitive"),
    pytest.param(opamp("OPAMP", fields={"Part Number": "OPX-22"}),
                 "library:OPX-22 via Part Number OPX-22", "part-number", id="part-number-field"),
    pytest.param(opamp("~", lib_id="Invented:OPX-66"), "library:OPX-66 via lib_id symbol "
                 "OPX-66", "lib_id", id="lib-id-when-value-is-tilde"),
    pytest.param(opamp("", lib_id="Invented:OPX-66"), "library:OPX-66 via lib_id symbol "
                 "OPX-66", "lib_id", id="lib-id-when-value-is-empty"),
    pytest.param(opamp("LX1612BIDR"), "library:LX1612 via family of LX1612BIDR", "family",
                 id="family"),
    pytest.param(opamp("LX1612AIDR"), "library:LX1612A via family of LX1612AIDR", "family",
                 id="family-most-specific-first"),
    pytest.param(opamp("OPX-44SD"), "library:OPX-44 via family of OPX-44SD (alias OPX-44S)",
                 "family", id="family-through-an-alias"),
    pytest.param(opamp("OPAMP", Manufacturer_Part_Number="OPX-22IDR"),
                 "library:OPX-22 via family of Manufacturer_Part_Number OPX-22IDR", "family",
                 id="family-of-a-part-number-field"),
])
def test_each_matching_path(part, source, by):
    params = resolve(part, LIBRARY)
    assert params.source["vos"] == source
    assert params.match is not None and params.match.by == by
    assert params.ambiguity is None


def test_value_is_tried_before_the_part_number_field():
    params = resolve(opamp("OPX-66", MPN="OPX-22"), LIBRARY)
    assert params.library_entry == "OPX-66"


def test_exact_part_number_beats_a_family_match_of_the_value():
    params = resolve(opamp("LX1612IDR", MPN="OPX-22"), LIBRARY)
    assert params.library_entry == "OPX-22" and params.match.by == "part-number"


def test_lib_id_not_used_when_the_value_names_something():
    params = resolve(opamp("OPAMP", lib_id="Invented:OPX-66"), LIBRARY)
    assert params.library_entry is None and params.vos is None


def test_symbol_fields_win_figure_by_figure():
    params = resolve(opamp("LX1612", Vos="0.1mV"), LIBRARY)
    assert params.vos == pytest.approx(0.1e-3, rel=1e-12) and params.source["vos"] == "field"
    assert params.source["ib"] == "library:LX1612"


def test_siblings_by_family_are_ambiguous_not_a_guess():
    part = opamp("OPX-55CD")
    found, ambiguity = match_part(part, PartsLibrary.of(LIBRARY))
    assert found is None
    assert ambiguity.candidates == ("OPX-55A", "OPX-55B")
    assert ambiguity.reason == ("by its family OPX-55 it could be OPX-55A or OPX-55B "
                                "(other variants, whose figures may not apply)")
    params = resolve(part, LIBRARY)
    assert params.vos is None and params.ambiguity == ambiguity


def test_one_sibling_of_another_grade_is_not_used_either():
    # only the A grade is described: a C-grade part must not borrow its figures
    library = {"OPX-55A": LIBRARY["OPX-55A"]}
    found, ambiguity = match_part(opamp("OPX-55C"), PartsLibrary.of(library))
    assert found is None and ambiguity.candidates == ("OPX-55A",)


def test_keys_reaching_different_entries_by_family_are_ambiguous():
    found, ambiguity = match_part(opamp("LX1612IDR", MPN="OPX-22IDR"), PartsLibrary.of(LIBRARY))
    assert found is None and ambiguity.candidates == ("LX1612", "OPX-22")
    assert ambiguity.reason == ("its keys lead to different entries (Value LX1612IDR by "
                                "family to LX1612, MPN OPX-22IDR by family to OPX-22)")


def test_later_library_wins_names_and_aliases():
    user = {"OPX-22": {"vos": "9mV", "ib": "1nA", "ios": "1nA"},
            "OPX-90": {"aliases": ["OPX-44S"], "vos": "7mV", "ib": "1nA", "ios": "1nA"}}
    project = {"OPX-22": {"vos": "1mV", "ib": "1nA", "ios": "1nA"},
               "OPX-44": {"aliases": ["OPX-44S"], "vos": "60uV", "ib": "1nA", "ios": "1nA"}}
    library = PartsLibrary.layered([(LibrarySource("user", "team.toml", 2), user),
                                    (LibrarySource("project", "parts.toml", 2), project)])
    assert resolve(opamp("OPX-22"), library).vos == pytest.approx(1e-3, rel=1e-12)
    assert resolve(opamp("OPX-44S"), library).library_entry == "OPX-44"
    assert resolve(opamp("OPX-90"), library).vos == pytest.approx(7e-3, rel=1e-12)
    assert resolve(opamp("OPX-22"), library).match.library == "parts.toml"
    assert [s.origin for s in library.sources] == ["user", "project"]


@pytest.fixture(scope="module")
def fixture_audit():
    report = audit_paths([str(PARTS / "matching.kicad_sch")],
                         overrides=options_to_overrides(samples=0), jobs=1)
    return report["designs"][0]


def test_fixture_sources_say_which_key_matched(fixture_audit):
    # fixtures/README.md lists what each op-amp of the fixture must find.
    sources = {s["ref"]: s["params"]["source"].get("vos") for s in fixture_audit["stages"]}
    assert sources == {
        "U1": "library:LX1612 via family of LX1612AxD",
        "U2": "library:OPX-22 via MPN opx-22",
        "U3": "library:OPX-33 via lib_id symbol OPX-33",
        "U4": "library:OPX-44 via alias OPX-44S",
        "U5": None, "U6": "library:OPX-Z6", "U7": None, "U8": None,
    }
    u1 = next(s for s in fixture_audit["stages"] if s["ref"] == "U1")
    assert u1["params"]["match"] == {"entry": "LX1612", "by": "family", "field": "Value",
                                     "key": "LX1612AxD", "matched": "LX1612",
                                     "library": "parts.toml"}
    assert fixture_audit["parts_libraries"] == [
        {"origin": "project", "path": "parts.toml", "entries": 7}]


def test_fixture_ambiguous_part_is_a_warning(fixture_audit):
    found = sorted((f["rule"], f["severity"], f["ref"]) for f in fixture_audit["findings"])
    assert found == [("ambiguous-part-match", "warning", "U5"),
                     ("missing-parameters", "warning", "U5"),
                     ("missing-parameters", "warning", "U7"),
                     ("missing-parameters", "warning", "U8")]
    warning = next(f for f in fixture_audit["findings"] if f["rule"] == "ambiguous-part-match")
    assert warning["message"] == (
        "U5/1 (OPX-55CD) matches no parts-library entry exactly; by its family OPX-55 it "
        "could be OPX-55A or OPX-55B (other variants, whose figures may not apply): none is "
        "used")
    assert warning["suggestion"] == ("add 'OPX-55CD' to the aliases of the entry whose figures "
                                     "apply (OPX-55A, OPX-55B), or give it an entry of its own")
