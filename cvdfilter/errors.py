"""Errors and warnings the tool raises for bad or doubtful input.

:class:`InputError` is the one error the CLI turns into a single line on
stderr with exit status 2: it always names the file (or the spec string) and
what is wrong, and, where there is one, the fix. :class:`InputWarning` is
emitted (with :func:`warnings.warn`) for things a user must know about an input
that was still used, such as extrapolation beyond a measured range; the CLI
prints each as one ``warning:`` line.

Helpers shared by every parser: :func:`did_you_mean` (close matches for a
misspelt name, with :mod:`difflib`) and :func:`clip_text` (cap what an error
echoes back from a file).
"""

from __future__ import annotations

__all__ = ["InputError", "InputWarning", "did_you_mean", "clip_text", "MAX_MESSAGE_CHARS"]

#: No error message is longer than this (a hostile file must not make the tool print megabytes).
MAX_MESSAGE_CHARS = 600
#: Echoed cell or header text is cut to this many characters.
MAX_ECHO_CHARS = 40


def clip_text(text, limit: int = MAX_ECHO_CHARS) -> str:
    """``text`` as a string of at most ``limit`` characters (with an ellipsis and the full length if cut).

    >>> clip_text("x" * 100, 10)
    'xxxxxxxxx… (100 characters)'
    """
    s = str(text)
    if len(s) <= limit:
        return s
    return f"{s[:max(limit - 1, 1)]}… ({len(s)} characters)"


def did_you_mean(word, choices, *, n: int = 3, cutoff: float = 0.6) -> str:
    """A ``did you mean ...?`` phrase for a misspelt name, or ``""`` when nothing is close.

    Uses :func:`difflib.get_close_matches` (case-insensitive).

    >>> did_you_mean("deuteranop", ["deuteranope", "protanope", "normal"])
    "did you mean 'deuteranope'?"
    >>> did_you_mean("xyz", ["normal"])
    ''
    """
    import difflib

    choices = [str(c) for c in choices]
    lower = {c.lower(): c for c in choices}
    matches = difflib.get_close_matches(str(word).lower(), list(lower), n=n, cutoff=cutoff)
    if not matches:
        return ""
    quoted = [f"'{lower[m]}'" for m in matches]
    return "did you mean " + (", ".join(quoted[:-1]) + " or " if len(quoted) > 1 else "") + quoted[-1] + "?"


class InputWarning(UserWarning):
    """Something about an input the user must know although it was used (extrapolation, clipping)."""


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
            where.append(clip_text(self.source, 200))
        if self.line is not None:
            where.append(f"line {self.line}")
        if self.column is not None:
            where.append(f"column {clip_text(self.column)}")
        text = ": ".join(where + [str(self.message)]) if where else str(self.message)
        if self.hint:
            text += f" ({self.hint})"
        return clip_text(" ".join(text.split()), MAX_MESSAGE_CHARS)
