"""The one exception a user ever sees, and the helpers that word it.

Every mistake in a user's file or command line becomes an :class:`InputError` whose message is one
line: what is wrong, where (file, row as a spreadsheet counts it, column or key) and what to do.
``cli.py`` prints it to standard error and exits with status 2, having written nothing.
"""

from __future__ import annotations

import difflib
from collections.abc import Iterable
from pathlib import Path

__all__ = ["InputError", "closest", "did_you_mean", "read_input_file"]


class InputError(Exception):
    """A problem with the user's input, worded for the user (one line, no traceback)."""


def closest(word: str, choices: Iterable[str]) -> str | None:
    """The choice closest to ``word`` by :func:`difflib.get_close_matches`, or None."""
    matches = difflib.get_close_matches(word, list(choices), n=1, cutoff=0.5)
    return matches[0] if matches else None


def did_you_mean(word: str, choices: Iterable[str]) -> str:
    """'; did you mean "x"?' when a close choice exists, else a list of the valid choices."""
    choices = list(choices)
    best = closest(word, choices)
    if best is not None:
        return f'; did you mean "{best}"?'
    return "; expected one of " + ", ".join(f'"{c}"' for c in choices)


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
