"""Fast S-expression reader for KiCad files.

Produces exactly the nested lists that ``kiutils.utils.sexpr.parse_sexp`` produces, so the
trees can be handed to kiutils' ``from_sexpr`` unchanged:

* numbers are the tokens kiutils' grammar calls numbers (``[+-]?d+.d+`` or ``-?d+``,
  followed by a space or ``)``), converted with ``float`` and turned into ``int`` when
  integral;
* quoted strings are unquoted; with ``compat=True`` only ``\\"`` is unescaped, as kiutils
  does; by default every escape KiCad's writer emits (``\\\\``, ``\\"``, ``\\n``, ``\\r``,
  ``\\t``) is decoded, so ``C:\\\\lib`` reads back as ``C:\\lib``;
* everything else is a bare string.

Two paths give the same tree. The fast path tokenizes with one group-free regex and
classifies each token by its first character (about 5x kiutils' speed, see
``benchmarks/bench_netlist.py``). It bails out to the exact path, a restatement of kiutils'
grammar, on anything where the two could differ (a ``^`` anywhere, a quote that does not
close a string, unbalanced brackets, and in compat mode an escaped backslash). The exact
path also produces the error messages.

Unlike kiutils, malformed input raises :class:`~schemcheck.errors.ParseError` with line,
column and what was expected (kiutils raises a bare ``AssertionError``), a number too
large for a double (kiutils makes it infinite) is refused, and nesting depth is bounded
so no later recursive walk can overflow the stack. Both paths stop at the first list
nested too deeply: the fast path tokenizes a large file a few MB at a time, the exact
path one token at a time, so a file of millions of ``(`` costs what its first few MB
cost. Outside compat mode,
lists that hold numbers only (:data:`NUMERIC_HEADS`: positions, sizes, widths, colours)
are checked by the token regex itself, dropped cosmetic blocks included; a numeric list
written as the editor writes it is one token, which pays for the check (the cost is
measured in ``benchmarks/bench_netlist.py``).
"""

from __future__ import annotations

import gc
import math
import re
from collections.abc import Iterator
from contextlib import contextmanager
from typing import Any

from schemcheck.errors import ParseError

#: kiutils 1.4.8's ``term_regex``, written without verbose mode.
_KIUTILS_TOKEN = re.compile(
    r"""\s*(?:(\()|(\))|([+-]?\d+\.\d+(?=[ )])|-?\d+(?=[ )]))|("(?:[^"]|(?<=\\)")*"(?=[)\s]))|([^(^)\s]+))"""  # noqa: E501 - one token pattern
)
#: The same grammar with KiCad's own string rule (a backslash escapes the next character).
_PROPER_TOKEN = re.compile(
    r"""\s*(?:(\()|(\))|([+-]?\d+\.\d+(?=[ )])|-?\d+(?=[ )]))|("(?:[^"\\]|\\.)*"(?=[)\s]))|([^(^)\s]+))"""  # noqa: E501 - one token pattern
)
#: Fast path: no groups. A bare token carries one extra character when what follows it
#: changes its reading in kiutils' grammar (``(`` or whitespace other than a space: not a
#: number). A lone ``"`` is a quote that does not close a string: bail out.
_FAST_TOKEN = re.compile(
    r"""\(|\)|"[^"\\]*+(?:\\.[^"\\]*+)*+"(?=[)\s])|[^\s()"^][^\s()^]*+(?:(?=[ )])|[^\S ]|\(|\Z)|\""""  # noqa: E501 - one token pattern
)
_NUMBER = re.compile(r"[+-]?\d+\.\d+|-?\d+").fullmatch
_OPENS = object()  # marker: a bare token glued to a following '('

#: Deeper than any KiCad file nests (about 12); deep enough for odd generators.
MAX_DEPTH = 256

_ESCAPES = {"n": "\n", "r": "\r", "t": "\t", "\\": "\\", '"': '"'}
_ESCAPE_RE = re.compile(r"\\(.)", re.S)


def _unescape(body: str) -> str:
    return _ESCAPE_RE.sub(lambda m: _ESCAPES.get(m.group(1), m.group(0)), body)


class _NotFinite(Exception):
    """Internal: a number token too large for a double; the exact path locates it."""


def _number(token: str) -> int | float:
    value = float(token)
    if not math.isfinite(value):
        raise _NotFinite(token)
    return int(value) if value.is_integer() else value


def _bare(token: str) -> Any:
    last = token[-1]
    if last == "(":
        return _OPENS
    if last.isspace():
        return token[:-1]
    if _NUMBER(token):
        return _number(token)
    return token


#: Lists that only draw: text effects, strokes, fills, graphic shapes, images, notes,
#: and placed-symbol pin uuids. No connectivity rule reads them; together they are
#: about half of a typical file's tokens.
COSMETIC_HEADS = ("effects", "stroke", "fill", "polyline", "rectangle", "circle", "arc",
                  "bezier", "image", "text", "text_box")
_STRING = r'"[^"\\]*+(?:\\.[^"\\]*+)*+"'


def _nested(depth: int) -> str:
    """Regex for a list body with up to ``depth`` levels of nested lists."""
    inner = r'(?:[^()"]++|' + _STRING + ")*+"
    for _ in range(depth):
        inner = r'(?:[^()"]++|' + _STRING + r"|\(" + inner + r"\))*+"
    return inner


#: Lists whose every value is a number (coordinates, sizes, widths, colours) wherever
#: they are: the schematic editor refuses a file with anything else there, so the reader
#: does too, in lists the connectivity never reads as much as in those it reads.
NUMERIC_HEADS = ("at", "xy", "size", "width", "color", "thickness", "length", "diameter",
                 "start", "end", "mid", "center", "radius", "margins", "offset")


def _words(words: tuple[str, ...]) -> str:
    """Regex for any of ``words`` (then a blank or ')'), grouped by first letter so a
    list head that is none of them is turned down at its first character."""
    by_first: dict[str, list[str]] = {}
    for word in words:
        by_first.setdefault(word[0], []).append(re.escape(word[1:]))
    branches = [re.escape(c) + ("(?:" + "|".join(rest) + ")" if len(rest) > 1 else rest[0])
                for c, rest in by_first.items()]
    return "(?=[" + "".join(by_first) + "])(?:" + "|".join(branches) + r")(?=[\s)])"


#: A number as the editor reads one (integers, decimals, exponents).
_EDITOR_NUMBER = r"[+-]?+(?:\d++(?:\.\d*+)?+|\.\d++)(?:[eE][+-]?+\d++)?+"
_NUMERIC_HEAD = _words(NUMERIC_HEADS)
#: The rest of a numeric list that is well formed: one or more numbers, then ')'.
_NUMBERS_TO_END = r"(?:\s++" + _EDITOR_NUMBER + r")++\s*+\)"
#: The same, written as the editor writes it (single blanks): taken as one token.
_NUMBERS_WRITTEN = r"(?: " + _EDITOR_NUMBER + r")++\)"
#: The first letters of the numeric heads: a list starting otherwise needs no check.
_NUMERIC_FIRST = "".join(sorted({head[0] for head in NUMERIC_HEADS}))
#: What replaces the tokenizer's '(' when numeric lists are checked: a numeric list as
#: the editor writes it, whole (one token, split in Python: fewer tokens pay for the
#: check); the opening '(head' alone of a numeric list that holds anything but numbers
#: (a token that never ends with ')'); else '(' alone.
_OPEN_CHECKED = (r"\((?:" + _NUMERIC_HEAD + r"(?:" + _NUMBERS_WRITTEN + r"|(?!"
                 + _NUMBERS_TO_END + r")))?")
#: First three characters of a whole numeric-list token after its '(' (never those of a
#: cosmetic block: tests/test_sexpr.py checks).
NUMERIC_PREFIXES = frozenset((head + " ")[:3] for head in NUMERIC_HEADS)


def _nested_checked(depth: int) -> str:
    """:func:`_nested`, where a nested numeric list must hold numbers only (else the
    enclosing block is not taken whole, and the tokenizer meets the bad list itself)."""
    inner = r'(?:[^()"]++|' + _STRING + ")*+"
    for _ in range(depth):
        inner = (r'(?:[^()"]++|' + _STRING + r"|\((?:(?![" + _NUMERIC_FIRST + r"])" + inner
                 + r"\)|" + _NUMERIC_HEAD + r"(?:" + _NUMBERS_WRITTEN + "|" + _NUMBERS_TO_END
                 + r")|(?!" + _NUMERIC_HEAD + r")" + inner + r"\)))*+")
    return inner


def _cosmetic(body: str) -> str:
    return (r"\((?:" + "|".join(COSMETIC_HEADS) + r")(?=[\s)])" + body + r"\)"
            + r'|\(pin "[^"\\]*+"\s*\(uuid [^()]*\)\s*\)')


#: As alternatives of the token regex these can only start where a token starts, never
#: inside a string. Deeper lists than four levels are left in (KiCad writes three).
_COSMETIC = _cosmetic(_nested(3))
_FAST_TOKEN_NO_COSMETIC = re.compile(_COSMETIC + "|" + _FAST_TOKEN.pattern)
#: The same two with numeric lists checked (the default outside compat mode).
_AFTER_OPEN = _FAST_TOKEN.pattern.removeprefix(r"\(|")
_FAST_TOKEN_CHECKED = re.compile(_OPEN_CHECKED + "|" + _AFTER_OPEN)
_FAST_TOKEN_NO_COSMETIC_CHECKED = re.compile(
    _cosmetic(_nested_checked(3)) + "|" + _OPEN_CHECKED + "|" + _AFTER_OPEN)
_TOKEN_RES = {(False, False): _FAST_TOKEN, (True, False): _FAST_TOKEN_NO_COSMETIC,
              (False, True): _FAST_TOKEN_CHECKED, (True, True): _FAST_TOKEN_NO_COSMETIC_CHECKED}


def parse(text: str, *, compat: bool = False, file: str | None = None,
          drop_cosmetic: bool = False, check_numbers: bool = True) -> list[Any]:
    """Parse the first S-expression in ``text`` into nested lists.

    ``compat=True`` reproduces kiutils' string handling exactly (only ``\\"`` is
    unescaped) and, like kiutils, accepts anything in numeric lists. ``drop_cosmetic=True``
    leaves out the lists named in :data:`COSMETIC_HEADS` and placed-symbol pin uuids (up
    to four levels deep); the rest of the tree is unchanged. Unless ``compat`` or
    ``check_numbers=False``, a list named in :data:`NUMERIC_HEADS` holding anything but
    numbers is malformed, dropped or not. Raises :class:`ParseError` naming ``file``, line
    and column.
    """
    checked = check_numbers and not compat
    with collector_paused():
        try:
            tree = _parse_fast(text, compat, _TOKEN_RES[drop_cosmetic, checked])
        except _NotFinite:
            tree = None
        if (isinstance(tree, list) and drop_cosmetic and len(text) > CHUNK_CHARS):
            # a cosmetic list cut by a chunk boundary was tokenized as ordinary lists
            tree = without_cosmetic(tree)
        if tree is _BAD:
            _parse_exact(text, compat, file)  # a truncated or unbalanced file says so first
            _fail_numeric(text, file)
        if tree is None:
            tree = _parse_exact(text, compat, file)
            if checked:
                _fail_numeric(text, file, found_only=True)
            if drop_cosmetic:
                tree = without_cosmetic(tree)
        return tree


def without_cosmetic(tree: list[Any]) -> list[Any]:
    """A copy of ``tree`` without the lists :func:`parse` drops on request."""
    out: list[Any] = []
    stack = [(tree, out)]
    while stack:
        source, target = stack.pop()
        for item in source:
            if item.__class__ is list:
                if item and (item[0] in COSMETIC_HEADS or _is_pin_uuid(item)):
                    continue
                copy: list[Any] = []
                target.append(copy)
                stack.append((item, copy))
            else:
                target.append(item)
    return out


@contextmanager
def collector_paused() -> Iterator[None]:
    """Pause Python's cyclic garbage collector (restoring its state after).

    Trees and netlists are acyclic, so collections while building them find nothing;
    on a large sheet they cost more than the parse itself (full collections walk every
    list of the tree).
    """
    was_enabled = gc.isenabled()
    gc.disable()
    try:
        yield
    finally:
        if was_enabled:
            gc.enable()


#: The fast path tokenizes this many characters at a time (more in one piece: up to the
#: next bracket or line end), so that a deeply nested file is refused after its first
#: piece; a schematic of a few MB is one piece.
CHUNK_CHARS = 4 * 1024 * 1024
_BOUNDARY = re.compile(r"[\n()]")


def _chunks(text: str, token_re: re.Pattern[str]) -> Iterator[list[str]]:
    """The tokens of ``text``, a piece at a time. A piece ends just after a bracket or a
    line end, where no token but a string or a cosmetic list can continue: a cut string
    leaves a lone quote (the fast path bails out), a cut cosmetic list is tokenized as
    ordinary lists (and dropped afterwards by :func:`parse`)."""
    start, size = 0, len(text)
    while start < size:
        found = _BOUNDARY.search(text, start + CHUNK_CHARS) if size - start > CHUNK_CHARS \
            else None
        end = found.end() if found else size
        yield token_re.findall(text, start, end)
        start = end


_BAD = object()  # the fast path met a numeric list holding something else


def _parse_fast(text: str, compat: bool, token_re: re.Pattern[str]) -> Any:
    """The tree; None where the exact path must decide (odd or malformed input); _BAD
    at a numeric list that holds something else."""
    if "^" in text or (compat and "\\\\" in text):
        return None
    unescape = (lambda body: body.replace('\\"', '"')) if compat else _unescape
    stack: list[list[Any]] = []
    out: list[Any] = []
    push = stack.append
    pop = stack.pop
    memo: dict[str, Any] = {}
    recall = memo.get
    for tokens in _chunks(text, token_re):
        for token in tokens:
            if token == "(":
                push(out)
                out = []
                if len(stack) > MAX_DEPTH:
                    return None
                continue
            if token == ")":
                if not stack:
                    return None
                parent = pop()
                parent.append(out)
                out = parent
                continue
            first = token[0]
            if first == '"':
                if len(token) == 1:
                    return None
                body = token[1:-1]
                out.append(unescape(body) if "\\" in body else body)
            elif first == "(":
                if token[-1] != ")":
                    return _BAD
                if token[1:4] in NUMERIC_PREFIXES:  # a whole numeric list
                    if len(stack) >= MAX_DEPTH:
                        return None
                    items = token[1:-1].split(" ")
                    for i in range(1, len(items)):
                        word = items[i]
                        value = recall(word)
                        if value is None:
                            value = memo[word] = _bare(word)
                        items[i] = value
                    out.append(items)
                # else a whole cosmetic block, dropped on request
            else:
                value = recall(token)
                if value is None:
                    value = memo[token] = _bare(token)
                if value is _OPENS:
                    out.append(token[:-1])
                    push(out)
                    out = []
                    if len(stack) > MAX_DEPTH:
                        return None
                else:
                    out.append(value)
    if stack or not out:
        return None
    return out[0]


def _is_pin_uuid(item: list[Any]) -> bool:
    return (len(item) == 3 and item[0] == "pin" and item[1].__class__ is str
            and item[2].__class__ is list and len(item[2]) == 2 and item[2][0] == "uuid")


def _parse_exact(text: str, compat: bool, file: str | None) -> list[Any]:
    """kiutils' grammar, one token at a time: stops at the first error, whatever follows."""
    stack: list[list[Any]] = []
    out: list[Any] = []
    token_re = _KIUTILS_TOKEN if compat else _PROPER_TOKEN
    for match in token_re.finditer(text):
        kind = match.lastindex
        if kind == 1:
            stack.append(out)
            out = []
            if len(stack) > MAX_DEPTH:
                raise _error_at(text, match.start(1), f"expected at most {MAX_DEPTH} nested "
                                "lists, found deeper nesting", file)
        elif kind == 2:
            if not stack:
                raise _error_at(text, match.start(2), "unbalanced ')': no '(' is open here",
                                file)
            parent = stack.pop()
            parent.append(out)
            out = parent
        elif kind == 3:
            try:
                out.append(_number(match.group(3)))
            except _NotFinite:
                digits = len(match.group(3))
                raise _error_at(text, match.start(3), f"expected a number, found one of "
                                f"{digits} digits, too large to store", file) from None
        elif kind == 4:
            body = match.group(4)[1:-1]
            if "\\" in body:
                body = body.replace('\\"', '"') if compat else _unescape(body)
            out.append(body)
        elif kind == 5:
            out.append(match.group(5))
    if stack:
        _fail_unclosed(text, file)
    if not out:
        raise ParseError("expected an S-expression starting with '(', found no data",
                         file=file, line=1, column=1, snippet=text.split("\n", 1)[0])
    return out[0]


# ---------------------------------------------------------------------------
# Error location: only on the slow path, by re-scanning with positions.

def _position(text: str, offset: int) -> tuple[int, int, str]:
    line = text.count("\n", 0, offset) + 1
    start = text.rfind("\n", 0, offset) + 1
    end = text.find("\n", offset)
    return line, offset - start + 1, text[start: end if end >= 0 else len(text)]


def _error_at(text: str, offset: int, message: str, file: str | None) -> ParseError:
    line, column, snippet = _position(text, offset)
    return ParseError(message, file=file, line=line, column=column, snippet=snippet)


def _scan_brackets(text: str):
    """Yield (kind, offset) for each bracket token, in kiutils' tokenization."""
    for match in _KIUTILS_TOKEN.finditer(text):
        if match.group(1):
            yield "(", match.start(1)
        elif match.group(2):
            yield ")", match.start(2)


def _fail_unclosed(text: str, file: str | None) -> None:
    open_at: list[int] = []
    for kind, offset in _scan_brackets(text):
        if kind == "(":
            open_at.append(offset)
        elif open_at:
            open_at.pop()
    end = len(text.rstrip())
    message = "expected ')' but the file ends here: it is truncated or its brackets are unbalanced"
    if open_at:
        line, column, snippet = _position(text, open_at[-1])
        word = re.match(r"\(\s*([^\s()]*)", text[open_at[-1]:open_at[-1] + 80])
        head = "(" + (word.group(1) if word else "")
        message += f" ('{head}' opened at line {line}, column {column} is never closed)"
    raise _error_at(text, end, message, file)


_ARGUMENT = re.compile(r'\s*("(?:[^"\\]|\\.)*"|[^\s()]+|\(|\)|$)')
_IS_NUMBER = re.compile(_EDITOR_NUMBER).fullmatch


def _fail_numeric(text: str, file: str | None, found_only: bool = False) -> None:
    """Raise a located :class:`ParseError` at the first value that is not a number in a
    numeric list of ``text`` (as the fast tokenizer reads the text); with ``found_only``,
    return when there is none."""
    for match in _FAST_TOKEN_CHECKED.finditer(text):
        token = match.group()
        if len(token) > 1 and token[0] == "(" and token[-1] != ")":
            break
    else:
        if found_only:
            return
        raise ParseError("expected numbers in a numeric list", file=file)  # pragma: no cover
    head = token[1:].strip()
    argument = _ARGUMENT.match(text, match.end())
    index = 1
    while argument is not None and _IS_NUMBER(argument.group(1)):
        argument = _ARGUMENT.match(text, argument.end())
        index += 1
    if argument is None:  # pragma: no cover - the pattern matches at any position
        raise _error_at(text, match.start(), f"expected numbers in '({head} ...)'", file)
    value = argument.group(1)
    found = {")": "nothing", "(": "a list", "": "the end of the file"}.get(value, repr(value))
    what = _VALUE_NAMES.get(head, ())
    named = f" for {what[index - 1]}" if index <= len(what) else ""
    raise _error_at(text, argument.start(1), f"expected a number{named} in '({head} ...)', "
                    f"found {found}", file)


#: What the values of the usual numeric lists are, for the messages.
_VALUE_NAMES = {"at": ("X", "Y", "the angle"), "xy": ("X", "Y"), "start": ("X", "Y"),
                "end": ("X", "Y"), "mid": ("X", "Y"), "center": ("X", "Y"),
                "size": ("the width", "the height"), "width": ("the width",),
                "length": ("the length",), "diameter": ("the diameter",),
                "radius": ("the radius",), "thickness": ("the thickness",)}


def locate(text: str, path: tuple[int, ...]) -> tuple[int, int, str]:
    """Line, column and source line of the node reached by list indices ``path``.

    ``path`` indexes from the top-level list, e.g. ``(5, 2)`` is the third element of
    the sixth element of the root. Used to report a bad value found after parsing.
    """
    stack: list[int] = []
    counts: list[int] = [0]
    target = list(path)
    for match in _KIUTILS_TOKEN.finditer(text):
        if match.group(2):
            if stack:
                stack.pop()
                counts.pop()
                counts[-1] += 1
            continue
        start = match.start(1) if match.group(1) else match.start(0) + len(match.group(0)) - len(
            match.group(0).lstrip()
        )
        position = stack + [counts[-1]]
        if len(stack) >= 1 and position[1:] == target:
            return _position(text, start)
        if match.group(1):
            stack.append(counts[-1])
            counts.append(0)
        else:
            counts[-1] += 1
    return _position(text, 0)
