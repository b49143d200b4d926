"""The fast S-expression reader against kiutils' own (the reference implementation).

Outside source: kiutils 1.4.8 (PyPI), ``kiutils.utils.sexpr.parse_sexp`` and
``kiutils.schematic.Schematic.from_sexpr``; every expected tree below is what kiutils
itself returns for the same text.
"""

from __future__ import annotations

import re

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from kiutils.schematic import Schematic
from kiutils.utils.sexpr import parse_sexp

from schemcheck.errors import ParseError
from schemcheck.io import sexpr
from schemcheck.io.files import read_text

from .conftest import FIXTURES, corpus_files, corpus_ids

CORPUS_SCH = corpus_files(".kicad_sch")
CORPUS_ALL = CORPUS_SCH + corpus_files(".net")
FIXTURE_FILES = sorted(FIXTURES.rglob("*.kicad_sch")) + sorted(FIXTURES.rglob("*.net"))


@pytest.mark.parametrize("path", CORPUS_ALL + FIXTURE_FILES,
                         ids=corpus_ids(CORPUS_ALL) + [p.name for p in FIXTURE_FILES])
def test_tree_identical_to_kiutils(path):
    # Outside source: kiutils' parse_sexp on the same UTF-8 text.
    text = read_text(path)
    assert sexpr.parse(text, compat=True) == parse_sexp(text)


@pytest.mark.parametrize("path", CORPUS_ALL + FIXTURE_FILES,
                         ids=corpus_ids(CORPUS_ALL) + [p.name for p in FIXTURE_FILES])
def test_exact_path_agrees_with_fast_path(path):
    text = read_text(path)
    assert sexpr._parse_exact(text, False, None) == sexpr.parse(text)


@pytest.mark.parametrize("path", CORPUS_SCH + [p for p in FIXTURE_FILES
                                              if p.suffix == ".kicad_sch"],
                         ids=corpus_ids(CORPUS_SCH) + [p.name for p in FIXTURE_FILES
                                                         if p.suffix == ".kicad_sch"])
def test_kiutils_objects_identical(path):
    # Outside source: kiutils' object model built from kiutils' own tree.
    text = read_text(path)
    assert Schematic.from_sexpr(sexpr.parse(text, compat=True)) == Schematic.from_sexpr(
        parse_sexp(text))


@pytest.mark.parametrize(
    "text",
    [
        pytest.param("(a 1.0 2.50 -0.0 -3)", id="integral-floats-become-int"),
        pytest.param("(a +5 +1.5 1e3 .5 5.)", id="kiutils-number-grammar"),
        pytest.param("(a 5\n 6\t7)", id="number-before-newline-is-text"),
        pytest.param("(a 5(b))", id="number-glued-to-bracket-is-text"),
        pytest.param("(a 007 12345678901234567890)", id="leading-zero-and-huge-int"),
        pytest.param('(a "x \\"q\\" y" "")', id="escaped-quotes"),
        pytest.param('(a "multi\nline" b)', id="raw-newline-in-string"),
        pytest.param('(a "Ω µ ±")', id="non-ascii"),
        pytest.param("(a ^b c^d)", id="caret-skipped"),
        pytest.param('(a "open)', id="unclosed-quote-falls-back"),
        pytest.param('(a abc"def ghi")', id="quote-inside-bare-token"),
        pytest.param("(a) (b)", id="only-first-expression"),
        pytest.param("(a ٣ 1.5)", id="unicode-digit"),
    ],
)
def test_edge_cases_match_kiutils(text):
    # Outside source: kiutils' parse_sexp on each string.
    assert sexpr.parse(text, compat=True) == parse_sexp(text)
    assert [type(x) for x in sexpr.parse(text, compat=True)] == [type(x) for x in parse_sexp(text)]


def test_default_mode_decodes_kicad_escapes():
    # KiCad's writer escapes backslash, quote and newline (OUTPUTFORMATTER::Quotes,
    # from memory of KiCad's source); kiutils only undoes \" (kiutils 1.4.8 sexpr.py).
    text = r'(a "C:\\lib\\x" "two\nlines" "say \"hi\"")'
    assert sexpr.parse(text) == ["a", "C:\\lib\\x", "two\nlines", 'say "hi"']
    assert sexpr.parse(text, compat=True) == parse_sexp(text)


@pytest.mark.skipif(not any("HaasoscopePro" in str(p) for p in CORPUS_SCH),
                    reason="corpus file with \\n escapes not present")
def test_real_file_newline_escapes():
    # The real file's Description properties contain "\n\nSource:" escapes.
    path = next(p for p in CORPUS_SCH if "Input_amps_1" in p.name)
    tree = sexpr.parse(read_text(path))
    descriptions = [item[2] for sym in tree if isinstance(sym, list) and sym[0] == "lib_symbols"
                    for lib in sym[1:] for item in lib
                    if isinstance(item, list) and item[:2] == ["property", "Description"]]
    assert any("\n\nSource:" in d for d in descriptions)
    assert not any("\\n" in d for d in descriptions)


@pytest.mark.parametrize(
    ("text", "line", "column", "message"),
    [
        pytest.param("(kicad_sch\n  (a 1))\n)", 3, 1, "unbalanced ')': no '(' is open here",
                     id="extra-close"),
        pytest.param("(kicad_sch\n  (symbol (at 1 2)\n", 2, 19,
                     "expected ')' but the file ends here: it is truncated or its brackets are "
                     "unbalanced ('(symbol' opened at line 2, column 3 is never closed)",
                     id="truncated"),
        pytest.param("", 1, 1, "expected an S-expression starting with '(', found no data",
                     id="empty"),
        pytest.param("(" * 300 + ")" * 300, 1, 257,
                     "expected at most 256 nested lists, found deeper nesting", id="too-deep"),
    ],
)
def test_malformed_input_is_located(text, line, column, message):
    with pytest.raises(ParseError) as caught:
        sexpr.parse(text, file="bad.kicad_sch")
    error = caught.value
    assert (error.file, error.line, error.column, error.message) == (
        "bad.kicad_sch", line, column, message)


def test_kiutils_raises_bare_assertion_where_we_locate():
    # The reason our reader reports malformed files itself: kiutils' parser asserts.
    with pytest.raises(AssertionError):
        parse_sexp("(a (b)")
    with pytest.raises(ParseError):
        sexpr.parse("(a (b)")


def test_locate_finds_nested_node():
    text = "(kicad_sch\n  (version 1)\n  (symbol (at x 2 0)))"
    assert sexpr.locate(text, (2, 1, 1))[:2] == (3, 15)


@pytest.mark.parametrize("path", CORPUS_SCH + [p for p in FIXTURE_FILES
                                              if p.suffix == ".kicad_sch"],
                         ids=corpus_ids(CORPUS_SCH) + [p.name for p in FIXTURE_FILES
                                                         if p.suffix == ".kicad_sch"])
def test_dropping_cosmetic_lists_keeps_the_rest(path):
    text = read_text(path)
    assert sexpr.parse(text, drop_cosmetic=True) == sexpr.without_cosmetic(sexpr.parse(text))


def test_cosmetic_look_alikes_inside_strings_are_kept():
    text = '(kicad_sch (label "see (effects (font x)) here" (at 1 2 0) (effects (font))))'
    assert sexpr.parse(text, drop_cosmetic=True) == [
        "kicad_sch", ["label", "see (effects (font x)) here", ["at", 1, 2, 0]]]


@pytest.mark.parametrize("path", CORPUS_ALL + FIXTURE_FILES,
                         ids=corpus_ids(CORPUS_ALL) + [p.name for p in FIXTURE_FILES])
def test_tokenizing_in_pieces_gives_the_same_tree(path, monkeypatch):
    # Outside source: the exact path (kiutils' grammar restated) on the whole text. With
    # pieces of a few hundred characters every kind of cut happens: inside strings,
    # inside cosmetic lists, between a bare word and its '('.
    text = read_text(path)
    whole = sexpr._parse_exact(text, False, None)
    monkeypatch.setattr(sexpr, "CHUNK_CHARS", 397)
    assert sexpr.parse(text) == whole
    assert sexpr.parse(text, drop_cosmetic=True) == sexpr.without_cosmetic(whole)


def test_nesting_limit_stops_after_the_first_piece(monkeypatch):
    pieces = []
    real = sexpr._chunks

    def counted(text, token_re):
        for tokens in real(text, token_re):
            pieces.append(len(tokens))
            yield tokens

    monkeypatch.setattr(sexpr, "_chunks", counted)
    text = "(kicad_sch " + "(" * (4 * sexpr.CHUNK_CHARS)
    with pytest.raises(ParseError, match="expected at most 256 nested lists") as caught:
        sexpr.parse(text, file="deep.kicad_sch", drop_cosmetic=True)
    assert (caught.value.line, caught.value.column) == (1, 11 + 256)  # "(kicad_sch " + 256
    assert len(pieces) == 1  # of the four pieces, only the first was tokenized


@pytest.mark.parametrize("number", ["1" * 400, "-" + "9" * 309, "1" * 320 + ".5"])
def test_numbers_too_large_for_a_double_are_located(number):
    # Outside source: IEEE 754 binary64 holds at most about 1.8e308 (float("1"*400) is inf)
    text = f"(kicad_sch\n  (wire (pts (xy {number} 0) (xy 1 2)))\n)"
    with pytest.raises(ParseError) as caught:
        sexpr.parse(text, file="n.kicad_sch")
    assert (caught.value.line, caught.value.column) == (2, 18)  # after "  (wire (pts (xy "
    assert caught.value.message == (f"expected a number, found one of {len(number)} digits, too "
                                    "large to store")


# --- Numeric lists hold numbers only -------------------------------------------------
# Outside source: KiCad's file-format documentation ("S-Expression common syntax" and
# "Schematic File Format") gives these lists as numbers only: '(at X Y [ANGLE])',
# '(xy X Y)', '(size WIDTH HEIGHT)', '(width WIDTH)', '(color R G B A)', '(start X Y)',
# '(length LENGTH)'; the editor refuses a file with anything else there.

#: Each item has '|' where the error must point (removed before parsing).
JUNK = [
    pytest.param('(property "Value" "10k" (at |zero 5.08 0) (effects (font (size 1.27 1.27))))',
                 "expected a number for X in '(at ...)', found 'zero'", id="property-position"),
    pytest.param('(property "Value" "10k" (at 0 5.08 0) (effects (font (size 1.27 |big))))',
                 "expected a number for the height in '(size ...)', found 'big'",
                 id="font-size-in-effects"),
    pytest.param('(wire (pts (xy 1 2) (xy 3 4)) (stroke (width |thin) (type default)))',
                 "expected a number for the width in '(width ...)', found 'thin'",
                 id="stroke-width"),
    pytest.param('(rectangle (start 0 0) (end 1 1) (fill (type color) (color 0 0 |"0" 1)))',
                 "expected a number in '(color ...)', found '\"0\"'", id="fill-colour"),
    pytest.param('(polyline (pts (xy 1 2) (xy 3 |(y))))',
                 "expected a number for Y in '(xy ...)', found a list", id="polyline-point"),
    pytest.param('(text "note" (at 1 2) (effects (font (size 1.27 1.27)))) (junction (at|))',
                 "expected a number for X in '(at ...)', found nothing", id="empty-position"),
]


@pytest.mark.parametrize("drop_cosmetic", [False, True], ids=["whole", "drop-cosmetic"])
@pytest.mark.parametrize(("item", "message"), JUNK)
def test_junk_in_a_numeric_list_is_located(item, message, drop_cosmetic):
    # Guards: junk where the editor reads a number is a located error, in lists the
    # reader drops (drawing only) as much as in those it reads.
    marked = f"(kicad_sch\n\t(version 20250114)\n\t{item}\n)\n"
    offset = marked.index("|")
    text = marked.replace("|", "")
    with pytest.raises(ParseError) as caught:
        sexpr.parse(text, file="junk.kicad_sch", drop_cosmetic=drop_cosmetic)
    error = caught.value
    assert (error.file, error.line, error.column, error.message) == (
        "junk.kicad_sch", 3, offset - text.rfind("\n", 0, offset), message)


def test_numbers_the_editor_reads_are_accepted_and_kept_as_written():
    # The editor reads exponents and signs (strtod); the tree keeps kiutils' reading.
    text = "(kicad_sch (at 1e3 -.5 +2.) (xy 1\n 2) (size 1.5 2 ))"
    assert sexpr.parse(text) == sexpr.parse(text, compat=True) == parse_sexp(text)


def test_truncation_is_reported_before_a_numeric_list():
    with pytest.raises(ParseError) as caught:
        sexpr.parse("(kicad_sch\n\t(wire (pts (xy 1 2) (xy 3", file="t.kicad_sch")
    assert caught.value.message.startswith("expected ')' but the file ends here")


def test_kiutils_mode_accepts_junk_like_kiutils():
    text = "(kicad_sch (at zero 5.08 0))"
    assert sexpr.parse(text, compat=True) == parse_sexp(text)


def test_whole_numeric_list_tokens_never_look_like_cosmetic_blocks():
    # The fast path tells a whole numeric list from a dropped cosmetic block by its
    # first three characters.
    assert not {(head + " ")[:3] for head in sexpr.COSMETIC_HEADS} & sexpr.NUMERIC_PREFIXES


FIXTURE_SCH = [p for p in FIXTURE_FILES if p.suffix == ".kicad_sch"]


@pytest.mark.parametrize("path", CORPUS_SCH + FIXTURE_SCH,
                         ids=corpus_ids(CORPUS_SCH) + [p.name for p in FIXTURE_SCH])
def test_checked_tree_is_the_unchecked_tree(path):
    text = read_text(path)
    for drop in (False, True):
        assert sexpr.parse(text, drop_cosmetic=drop) == sexpr.parse(
            text, drop_cosmetic=drop, check_numbers=False)


_NUMERIC_VALUE = re.compile(r"\((?:at|xy|size|width|color|length|start|end)((?: [-\d.]+)+)\)")
_SEED_TEXT = (FIXTURES / "demo" / "chain.kicad_sch").read_text(encoding="utf-8")
_SEED_VALUES = [m.start(1) + 1 + sum(len(w) + 1 for w in m.group(1).split()[:k])
                for m in _NUMERIC_VALUE.finditer(_SEED_TEXT)
                for k in range(len(m.group(1).split()))]


@settings(max_examples=150, deadline=None)
@given(st.sampled_from(_SEED_VALUES), st.sampled_from(["x", "abc", '"1"', "1.2.3", "--5", "()"]))
def test_any_number_replaced_by_junk_is_located(offset, junk):
    # Guards: wherever a number of a numeric list is replaced by something that is not a
    # number, the reader refuses the file and points at it (line and column counted in
    # the text). Seeds: every value of such lists in a demo sheet (they hold no strings
    # that look like lists).
    end = re.compile(r"[^ )]+").match(_SEED_TEXT, offset).end()
    text = _SEED_TEXT[:offset] + junk + _SEED_TEXT[end:]
    for drop in (False, True):
        with pytest.raises(ParseError) as caught:
            sexpr.parse(text, file="chain.kicad_sch", drop_cosmetic=drop)
        assert (caught.value.line, caught.value.column) == (
            text.count("\n", 0, offset) + 1, offset - text.rfind("\n", 0, offset))
