"""The one exception a user ever sees, and the helpers that word it.

Every mistake in a user's file or command line becomes an :class:`InputError` whose message is one
line: what is wrong, where (file, row as a spreadsheet counts it, column or key) and what to do.
``cli.py`` prints it to standard error and exits with status 2, having written nothing.
"""

from __future__ import annotations

import difflib
from collections.abc import Iterable
from pathlib import Path

__all__ = ["InputError", "closest", "did_you_mean", "excerpt", "quoted", "printable", "read_input_file",
           "EXCERPT_CHARS"]

EXCERPT_CHARS = 60  # the most of a user's text an error message quotes back
_CHOICES_LISTED = 12  # the most valid choices a message lists


class InputError(Exception):
    """A problem with the user's input, worded for the user (one line, no traceback)."""


def printable(text: str) -> str:
    """``text`` with every control character (C0, DEL, C1, and the line and paragraph separators)
    written as a Python escape (``\\x1b``, ``\\n``, ``\\u2028``), so that a user's string can reach a
    terminal or a one-line message without acting on it. Printable text is left as it is."""
    if text.isprintable():
        return text
    return "".join(ch if ch.isprintable() or ch == " " else ch.encode("unicode_escape").decode("ascii")
                   for ch in text)


def excerpt(value: object, limit: int = EXCERPT_CHARS, quote: str | None = None) -> str:
    """A short, printable quotation of ``value`` for a message: a string as Python writes it
    (``'high'``), or between ``quote`` marks when given, cut to ``limit`` characters with its full
    length said; control characters escaped either way. Other values as ``repr`` writes them."""
    if not isinstance(value, str):
        text = repr(value)
        return printable(text[:limit]) + (f"... ({len(text):,} characters)" if len(text) > limit else "")
    shown = repr(value[:limit]) if quote is None else f"{quote}{printable(value[:limit])}{quote}"
    if len(value) > limit:
        return f"{shown[:-1]}...{shown[-1]} ({len(value):,} characters)"
    return shown


def quoted(value: str) -> str:
    """:func:`excerpt` between double quotes, as messages quote names and keys: "hit"."""
    return excerpt(value, quote='"')


def closest(word: str, choices: Iterable[str]) -> str | None:
    """The choice closest to ``word`` by :func:`difflib.get_close_matches`, or None."""
    matches = difflib.get_close_matches(word, list(choices), n=1, cutoff=0.5)
    return matches[0] if matches else None


def did_you_mean(word: str, choices: Iterable[str]) -> str:
    """'; did you mean "x"?' when a close choice exists, else a list of the valid choices."""
    choices = list(choices)
    best = closest(word[:1000], choices)
    if best is not None:
        return f"; did you mean {quoted(best)}?"
    listed = ", ".join(quoted(c) for c in choices[:_CHOICES_LISTED])
    more = f" and {len(choices) - _CHOICES_LISTED:,} more" if len(choices) > _CHOICES_LISTED else ""
    return f"; expected one of {listed}{more}"


def read_input_file(path: Path, what: str, expected: str) -> bytes:
    """The bytes of a user's input file, or an :class:`InputError` saying why there are none.

    ``what`` names the file in messages ("scenario", "history"); ``expected`` says what to give
    instead of a folder ("the scenario's .toml file").
    """
    if not path.exists():
        raise InputError(f"{path}: no such {what} file; check the path")
    if path.is_dir():
        raise InputError(f"{path}: is a folder; give {expected}")
    return path.read_bytes()
