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

    def with_file(self, file: str) -> "ParseError":
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
