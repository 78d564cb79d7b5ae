"""Errors the tool raises for bad input.

:class:`InputError` is the one error the CLI turns into a single line on
stderr with exit status 2: it always names the file (or the spec string) and
what is wrong, and, where there is one, the fix.
"""

from __future__ import annotations

__all__ = ["InputError"]


class InputError(ValueError):
    """Bad input from the user: a file, a spec string or an option value.

    Parameters
    ----------
    message
        What is wrong, in plain words.
    source
        The file path or spec string concerned.
    line, column
        1-based position in a text file, where known.
    hint
        How to fix it.
    """

    def __init__(self, message: str, *, source: str | None = None, line: int | None = None,
                 column: int | str | None = None, hint: str | None = None) -> None:
        self.message = message
        self.source = source
        self.line = line
        self.column = column
        self.hint = hint
        super().__init__(str(self))

    def __str__(self) -> str:
        where = []
        if self.source is not None:
            where.append(str(self.source))
        if self.line is not None:
            where.append(f"line {self.line}")
        if self.column is not None:
            where.append(f"column {self.column}")
        text = ": ".join(where + [self.message]) if where else self.message
        if self.hint:
            text += f" ({self.hint})"
        return " ".join(text.split())
