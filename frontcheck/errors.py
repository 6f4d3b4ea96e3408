"""Errors that end a run with exit status 2: the input could not be read or the command was
misused. Each names the file (and line and column where there is one) and says what to do."""

from __future__ import annotations


class InputError(Exception):
    """Bad input: unreadable, malformed, unsupported or inconsistent design files."""

    def __init__(self, message: str, file: str | None = None, line: int | None = None,
                 column: int | None = None, hint: str | None = None):
        self.message, self.file, self.line, self.column, self.hint = message, file, line, column, hint
        super().__init__(self.render())

    def render(self) -> str:
        where = ":".join(str(p) for p in (self.file, self.line, self.column) if p is not None)
        text = f"{where}: {self.message}" if where else self.message
        return f"{text}\n  what to do: {self.hint}" if self.hint else text
