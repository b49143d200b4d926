"""The project's error types.

Every error a user can cause with bad input is a :class:`SchemcheckError`; the CLI and
the service turn it into one clear line (or a JSON problem body), never a traceback.
"""

from __future__ import annotations


class SchemcheckError(Exception):
    """Base of every error schemcheck raises on purpose."""


class ParseError(SchemcheckError, ValueError):
    """A file could not be read as what it claims to be.

    ``file``, ``line`` and ``column`` (1-based) locate the problem; ``expected`` says
    what should have been there.
    """

    def __init__(
        self,
        message: str,
        *,
        file: str | None = None,
        line: int | None = None,
        column: int | None = None,
        snippet: str | None = None,
    ) -> None:
        super().__init__(message)
        self.message = message
        self.file = file
        self.line = line
        self.column = column
        self.snippet = snippet

    def with_file(self, file: str) -> ParseError:
        """Return a copy that names ``file`` (used where the tokenizer did not know it)."""
        return ParseError(
            self.message, file=file, line=self.line, column=self.column, snippet=self.snippet
        )

    def __str__(self) -> str:
        where = self.file or "<input>"
        if self.line is not None:
            where += f":{self.line}"
            if self.column is not None:
                where += f":{self.column}"
        return f"{where}: {self.message}"

    def detail(self) -> str:
        """The one-line message plus, when known, the offending line with a caret."""
        text = str(self)
        if self.snippet is not None and self.column is not None:
            line = self.snippet.rstrip("\n").replace("\t", " ")
            start = max(0, self.column - 61)
            shown = line[start: start + 120]
            caret = " " * (self.column - 1 - start) + "^"
            text += f"\n    {shown}\n    {caret}"
        return text


class DesignError(SchemcheckError):
    """The files read, but the design they describe is inconsistent (missing sheet, cycle)."""


class PathNotAllowedError(SchemcheckError):
    """A file a design pulls in (child sheet, settings, parts library) lies outside the
    folders this run may read (the service's upload and allowed folders). The file was
    not opened. ``reference`` is the path as the design wrote it; ``file``, ``line`` and
    ``column`` locate the reference where known."""

    def __init__(self, reference: str, what: str, *, file: str | None = None,
                 line: int | None = None, column: int | None = None) -> None:
        self.reference, self.what = reference, what
        self.file, self.line, self.column = file, line, column
        where = ""
        if file:
            where = file + (f":{line}:{column}" if line is not None and column is not None
                            else "") + ": "
        super().__init__(f"{where}the {what} {reference!r} lies outside the folders this "
                         "service may read (the upload and the allowed folders); it was not "
                         "opened")

    def __reduce__(self):  # keeps the keyword fields across process boundaries
        return (_rebuild_not_allowed, (self.reference, self.what, self.file, self.line,
                                       self.column))


def _rebuild_not_allowed(reference: str, what: str, file: str | None, line: int | None,
                         column: int | None) -> PathNotAllowedError:
    return PathNotAllowedError(reference, what, file=file, line=line, column=column)
