"""The output folder checked before any work, and the places a write of a result set uses.

:func:`check_out_folder` refuses, in one line and before any work, an output folder the results
could not go to (a file, a dangling link, a name too long, a place the user may not write to, a
folder holding results without ``--force``), by making and removing the folders a write would make.
The helpers below it name those places (the folder itself, its staging folder) and make and remove
missing parents; ``result_set`` writes and swaps the files with them.

May import: ``inputs`` (for :class:`InputError`).
"""

from __future__ import annotations

import errno
import os
import secrets
from pathlib import Path

from ..inputs.errors import InputError

__all__ = ["check_out_folder", "STAGING_PREFIX"]

STAGING_PREFIX = ".gonogo-staging-"  # beside (or, in place, inside) the output folder: <pid>-<token>


_REASONS = {errno.EACCES: "permission denied", errno.EPERM: "not permitted",
            errno.EROFS: "the file system is read-only", errno.ENOSPC: "no space left on the device",
            errno.EDQUOT: "the disk quota is used up",
            errno.ENAMETOOLONG: "a name is too long for the file system",
            errno.ENOTDIR: "a part of the path is a file, not a folder",
            errno.ELOOP: "too many symbolic links", errno.EIO: "input/output error"}


# ------------------------------------------------------------------------------------------------
# before any work


def check_out_folder(out: Path, force: bool) -> None:
    """Refuse, in one line and before any work, an output folder the results could not go to.

    Refused: a path that is a file, or that has a file as a parent; a dangling symbolic link; a
    name longer than the file system allows (also a default folder named after a long scenario
    name); a place where the folder and its staging folder cannot be created (a read-only parent,
    or one the user may not write to); a folder that already holds files, unless ``force``. The
    check makes the folders a write would make, and removes them again: it proves the place
    writable as the file system and the user's rights see it, not as permission bits suggest.

    Raises
    ------
    InputError
        Naming the folder, what is wrong and what to do.
    """
    out = Path(out)
    try:
        _check_shape(out)
        if out.is_dir() and not force and any(out.iterdir()):
            raise InputError(f"{_shown(out)}: already holds results; add --force to replace them, or choose "
                             "another --out")
        made = _make_parents(_target(out))
        try:
            _probe(out)
        finally:
            _remove_made(made)
    except OSError as exc:
        raise _unwritable(out, exc) from None


def _check_shape(out: Path) -> None:
    """A name too long, a dangling link, a file as the folder or a parent: each its own message."""
    absolute = Path(os.path.abspath(out))
    existing = next(p for p in (absolute, *absolute.parents) if os.path.exists(p))
    name_max = _pathconf(existing, "PC_NAME_MAX", 255)
    for part in absolute.relative_to(existing).parts:
        size = len(os.fsencode(part))
        if size > name_max:
            raise InputError(f"{_shown(out)}: the name \"{_shown(part, 40)}\" is {size} bytes long, more than "
                             f"the {name_max} this file system allows; choose a shorter --out (or a shorter "
                             "scenario name)")
    path_max = _pathconf(existing, "PC_PATH_MAX", 4096)
    if len(os.fsencode(os.path.realpath(absolute))) + len(STAGING_PREFIX) + 40 >= path_max:
        raise InputError(f"{_shown(out)}: the path is too long for this file system (at most {path_max} bytes "
                         "with the files inside); choose a shorter --out")
    for path in (absolute, *absolute.parents):
        if path.is_symlink() and not path.exists():
            where = "" if path == absolute else f"{path} "
            raise InputError(f"{_shown(out)}: {where}is a symbolic link to {os.readlink(path)}, which does not "
                             "exist; create its target, remove the link, or choose another --out")
        if path.exists():
            if not path.is_dir():
                where = "" if path == absolute else f"{path} "
                raise InputError(f"{_shown(out)}: {where}is a file, not a folder; choose another --out")
            break


def _shown(path, limit: int = 80) -> str:
    """A path or name for a message: long ones cut in the middle."""
    text = str(path)
    return text if len(text) <= limit else text[: limit // 2 - 2] + "..." + text[-(limit // 2 - 1):]


def _pathconf(path: Path, name: str, default: int) -> int:
    try:
        value = os.pathconf(path, name)
    except (OSError, ValueError):
        return default
    return value if value > 0 else default


def _probe(out: Path) -> None:
    """Make the staging folder where a write would, and the output folder if missing; remove both."""
    target = _target(out)
    made = []
    try:
        if not target.exists():
            target.mkdir()
            made.append(target)
        staging = _staging_path(target, inside=_not_renamable(target))
        staging.mkdir()
        made.append(staging)
        if not os.access(target, os.R_OK | os.W_OK | os.X_OK):
            raise PermissionError(errno.EACCES, os.strerror(errno.EACCES), str(target))
    finally:
        _remove_made(made)


# ------------------------------------------------------------------------------------------------
# places


def _target(out: Path) -> Path:
    """The folder itself: symbolic links followed (a link to a folder keeps pointing at it)."""
    return Path(os.path.realpath(out))


def _not_renamable(target: Path) -> bool:
    if not target.is_dir():
        return False
    if os.path.ismount(target):
        return True
    here = Path(os.path.realpath(Path.cwd()))
    return here == target or target in here.parents


def _staging_path(target: Path, inside: bool = False) -> Path:
    """A fresh staging name, short whatever the output folder's name, in this process's name."""
    folder = target if inside else target.parent
    return folder / f"{STAGING_PREFIX}{os.getpid()}-{secrets.token_hex(4)}"



def _make_parents(target: Path) -> list[Path]:
    """Create the missing parents of ``target``; return them, outermost first."""
    missing = []
    for parent in target.parents:
        if parent.exists():
            break
        missing.append(parent)
    made = []
    try:
        for parent in reversed(missing):
            parent.mkdir()
            made.append(parent)
    except BaseException:
        _remove_made(made)
        raise
    return made


def _remove_made(made: list[Path]) -> None:
    for path in reversed(made):
        try:
            path.rmdir()
        except OSError:
            pass


def _unwritable(out: Path, exc: OSError) -> InputError:
    reason = _REASONS.get(exc.errno, (exc.strerror or type(exc).__name__).lower())
    remedy = {errno.ENOSPC: "free some space, or ", errno.EDQUOT: "free some space, or ",
              errno.EACCES: "check the folder's rights, or ", errno.EPERM: "check the folder's rights, or "}
    return InputError(f"{_shown(out)}: cannot write the results there ({reason}); "
                      f"{remedy.get(exc.errno, '')}choose another --out. Nothing was written")