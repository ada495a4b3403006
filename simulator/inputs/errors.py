"""The one exception a user ever sees, and the helpers that word it.

Every mistake in a user's file or command line becomes an :class:`InputError` whose message is one
line: what is wrong, where (file, row as a spreadsheet counts it, column or key) and what to do.
``cli.py`` prints it to standard error and exits with status 2, having written nothing.
"""

from __future__ import annotations

import difflib
import stat
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


def read_input_file(path: Path, what: str, expected: str, limit: int | None = None) -> bytes:
    """The bytes of a user's input file, or an :class:`InputError` saying why there are none.

    ``what`` names the file in messages ("scenario", "history"); ``expected`` says what to give
    instead of a folder ("the scenario's .toml file"). Only a regular file is opened (a named pipe
    would block, a device may never end), and at most ``limit`` bytes are read: a longer file is
    refused, naming the limit.
    """
    try:
        mode = path.stat().st_mode
    except FileNotFoundError:
        raise InputError(f"{path}: no such {what} file; check the path") from None
    except OSError as exc:
        raise InputError(f"{path}: cannot be looked at ({exc.strerror or exc}); check the path") from None
    if stat.S_ISDIR(mode):
        raise InputError(f"{path}: is a folder; give {expected}")
    if not stat.S_ISREG(mode):
        kind = ("a named pipe" if stat.S_ISFIFO(mode) else "a device" if stat.S_ISCHR(mode) or stat.S_ISBLK(mode)
                else "a socket" if stat.S_ISSOCK(mode) else "not a regular file")
        raise InputError(f"{path}: is {kind}, not a file; save the {what} to a file and give {expected}")
    try:
        with path.open("rb") as handle:
            raw = handle.read(limit + 1) if limit is not None else handle.read()
    except PermissionError:
        raise InputError(f"{path}: you may not read this {what} file; ask its owner for read access or "
                         "copy it somewhere you may read") from None
    except OSError as exc:
        raise InputError(f"{path}: cannot be read ({exc.strerror or exc}); check the file") from None
    if limit is not None and len(raw) > limit:
        size = f"{limit / 2**20:g} MiB" if limit >= 2**20 else f"{limit / 2**10:g} KiB"
        raise InputError(f"{path}: is larger than the {size} that gonogo reads from a {what} "
                         f"file; keep only the rows that matter (for example fewer years or sites)")
    return raw
