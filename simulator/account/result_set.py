"""The output folder filled with one whole result set at a time (checked before any work by ``out_folder``).

A reader of the output folder (a person, a spreadsheet, a dashboard polling ``summary.json``) only
ever sees the previous result set or the new one, never a mix, and a run that fails or is stopped
while writing leaves the folder as it was, with no temporary file or folder beside it.

How (Linux; the same on any system with ``renameat2``):

1. Every file of the new result set, and a list of them (:data:`MANIFEST`), is written into a
   staging folder beside the output folder (same parent, so the same file system).
2. Files the user put in the output folder (anything the previous set's list does not name) are
   carried into the staging folder as hard links (copies where the file system has no hard links):
   they stay, byte for byte, and nothing is copied at any size.
3. The staging folder and the output folder are exchanged in one step by ``renameat2(...,
   RENAME_EXCHANGE)`` (Linux 3.15 and later, glibc 2.28 and later, called through ctypes): the
   output folder's name points at the old folder before the call and at the new one after it,
   with no moment in between. The old folder, now under the staging name, is then removed, with
   the previous set's files that the new set no longer has (a ``stress.csv`` from a run that had
   ``[[stress]]`` cases, say). A run ended at any point leaves either set whole; a staging folder
   left by a killed process is removed by the next run that writes beside it.

Alternatives considered: a symbolic link swapped atomically (``rename`` over the link) makes the
output folder a link to a hidden versioned folder, which surprises users, backup tools and
Windows shares; renaming the whole folder aside and the new one in leaves a moment with no
folder at all, and a process killed then loses the name. The second is still the fallback where
``renameat2`` is missing or the file system refuses the exchange (for example some network file
systems).

Where the output folder cannot be renamed (it is a mount point, as a container's bound volume is,
or the current directory lies inside it, so that a shell sitting in it would be left in a removed
folder), the staging folder is made inside the output folder instead and the files are renamed
into place one by one: each file is still whole, and the previous set's stale files are still
removed, but a reader may for a moment see some new files beside old ones.

Nothing is synced to disk (no ``fsync``): this guards against the process ending, not against the
machine losing power.
"""

from __future__ import annotations

import ctypes
import errno
import os
import re
import shutil
import stat
from collections.abc import Mapping
from pathlib import Path

from ..execution.lifetime import process_running
from .out_folder import (STAGING_PREFIX, _make_parents, _not_renamable, _remove_made, _staging_path, _target,
                         _unwritable, check_out_folder)

__all__ = ["write_files", "MANIFEST"]

MANIFEST = ".gonogo-result-set"  # in the output folder: the files of the result set, one a line
_STAGING = re.compile(rf"^{re.escape(STAGING_PREFIX)}(\d+)-[0-9a-f]+$")
_RENAME_EXCHANGE = 2  # linux/fs.h
_AT_FDCWD = -100  # linux/fcntl.h

# ------------------------------------------------------------------------------------------------
# writing a result set


def write_files(files: Mapping[str, bytes], out: Path, force: bool) -> list[Path]:
    """Write the result set ``files`` (relative name to bytes) into ``out`` as one whole.

    The previous result set in ``out`` (the files its :data:`MANIFEST` names) is replaced as a
    whole: files of it that the new set lacks are removed; files the user put in the folder stay.
    A folder without a manifest (written by an older gonogo) has only the files of the same names
    replaced. See the module's docstring for how the swap is made atomic.

    Returns
    -------
    list of Path
        The result set's files, in the order of ``files``.

    Raises
    ------
    InputError
        When the folder is refused (:func:`check_out_folder`) or writing fails (a full disk, a
        read-only file system, ...): then the folder is as it was and nothing is left beside it.
    """
    out = Path(out)
    check_out_folder(out, force)
    target = _target(out)
    in_place = _not_renamable(target)
    made: list[Path] = []
    staging: Path | None = None
    try:
        made = _make_parents(target)
        _remove_stale(target.parent)
        if in_place:
            target.mkdir(exist_ok=True)
            _remove_stale(target)
        staging = _staging_path(target, inside=in_place)
        staging.mkdir()
        _write_all(staging, files)
        previous = _previous_set(target)
        if in_place:
            _move_in(staging, target, files, previous)
        else:
            if target.is_dir():
                _carry_over(target, staging, skip=previous | set(files) | {MANIFEST})
                _same_owner_and_mode(target, staging)
            staging = _swap(staging, target)  # now the old folder, or None
    except BaseException as exc:  # also a stop (Ctrl-C, SIGTERM): leave nothing behind
        if staging is not None:
            shutil.rmtree(staging, ignore_errors=True)
        _remove_made(made)
        if isinstance(exc, OSError):
            raise _unwritable(out, exc) from None
        raise
    if staging is not None:
        shutil.rmtree(staging, ignore_errors=True)  # the old set; a failure here leaves it for later
    return [out / name for name in files]


def _write_all(folder: Path, files: Mapping[str, bytes]) -> None:
    for name, data in files.items():
        path = folder / name
        path.parent.mkdir(parents=True, exist_ok=True)
        path.write_bytes(data)
    lines = ["# The files gonogo wrote as one result set; the next run with --force replaces or removes",
             "# them and keeps every other file in this folder.", *files]
    (folder / MANIFEST).write_text("\n".join(lines) + "\n", encoding="utf-8")


def _previous_set(target: Path) -> set[str]:
    """The files of the result set already in ``target`` (none without a manifest)."""
    try:
        text = (target / MANIFEST).read_text(encoding="utf-8")
    except (FileNotFoundError, NotADirectoryError):
        return set()
    names = {line.strip() for line in text.splitlines() if line.strip() and not line.startswith("#")}
    # only names inside the folder: a hand-edited list never removes anything outside it
    return {n for n in names if not Path(n).is_absolute() and ".." not in Path(n).parts}


def _carry_over(old: Path, new: Path, skip: set[str]) -> None:
    """Hard-link (else copy) into ``new`` every file of ``old`` not in ``skip``.

    Folders come along with what they hold, and a user's empty folder as it is; a folder that
    held only files of the previous set does not (``figures/`` of a set that no longer has any).
    """
    for dirpath, dirnames, filenames in os.walk(old):
        here = Path(dirpath)
        relative = here.relative_to(old)
        if relative == Path("."):
            dirnames[:] = [d for d in dirnames if not _STAGING.match(d)]
        for name in list(dirnames) + filenames:
            source, rel = here / name, (relative / name).as_posix()
            destination = new / rel
            if name in dirnames and not source.is_symlink():
                if os.path.lexists(destination) and not destination.is_dir():
                    dirnames.remove(name)  # the new set has a file of that name: it wins
                elif not any(os.scandir(source)):
                    destination.mkdir(exist_ok=True)
                    shutil.copymode(source, destination)
                continue
            if rel in skip or os.path.lexists(destination):
                continue
            if not destination.parent.is_dir():
                destination.parent.mkdir(parents=True)
                shutil.copymode(here, destination.parent)
            if source.is_symlink():
                os.symlink(os.readlink(source), destination)
            else:
                try:
                    os.link(source, destination)
                except OSError:
                    shutil.copy2(source, destination)


def _same_owner_and_mode(old: Path, new: Path) -> None:
    """The new folder takes the old one's permission bits and, where allowed, its owner and group
    (a folder shared with a team stays shared)."""
    status = old.stat()
    try:
        os.chown(new, status.st_uid, status.st_gid)
    except PermissionError:  # not root, and another owner: the folder becomes the user's own
        pass
    os.chmod(new, stat.S_IMODE(status.st_mode))


def _swap(staging: Path, target: Path) -> Path | None:
    """Put ``staging`` at ``target``; return where the old folder now is (None: there was none)."""
    if not target.exists():
        os.rename(staging, target)  # fails if a non-empty folder appeared meanwhile
        return None
    if _exchange(staging, target):
        return staging
    aside = _staging_path(target)
    os.rename(target, aside)
    try:
        os.rename(staging, target)
    except BaseException:
        os.rename(aside, target)
        raise
    return aside


def _exchange(a: Path, b: Path) -> bool:
    """Exchange two paths in one step (renameat2 RENAME_EXCHANGE); False where the system cannot."""
    renameat2 = _renameat2()
    if renameat2 is None:
        return False
    if renameat2(_AT_FDCWD, os.fsencode(a), _AT_FDCWD, os.fsencode(b), _RENAME_EXCHANGE) == 0:
        return True
    code = ctypes.get_errno()
    if code in (errno.ENOSYS, errno.EINVAL, errno.EOPNOTSUPP):
        return False
    raise OSError(code, os.strerror(code), str(b))


_RENAMEAT2: list = []


def _renameat2():
    if not _RENAMEAT2:
        function = None
        try:
            function = ctypes.CDLL(None, use_errno=True).renameat2
            function.argtypes = [ctypes.c_int, ctypes.c_char_p, ctypes.c_int, ctypes.c_char_p, ctypes.c_uint]
            function.restype = ctypes.c_int
        except (OSError, AttributeError, TypeError):  # not glibc 2.28+, or not Linux
            function = None
        _RENAMEAT2.append(function)
    return _RENAMEAT2[0]


def _move_in(staging: Path, target: Path, files: Mapping[str, bytes], previous: set[str]) -> None:
    """In place: rename each new file over its old one, remove the previous set's others."""
    for name in files:
        destination = target / name
        destination.parent.mkdir(parents=True, exist_ok=True)
        os.replace(staging / name, destination)
    for name in sorted(previous - set(files)):
        stale = target / name
        if stale.is_file() or stale.is_symlink():
            stale.unlink()
            _prune_empty(stale.parent, target)
    os.replace(staging / MANIFEST, target / MANIFEST)


def _prune_empty(folder: Path, top: Path) -> None:
    while folder != top:
        try:
            folder.rmdir()
        except OSError:
            return
        folder = folder.parent


def _remove_stale(folder: Path) -> None:
    """Remove staging folders left in ``folder`` by processes that no longer run."""
    try:
        entries = list(os.scandir(folder))
    except OSError:
        return
    for entry in entries:
        match = _STAGING.match(entry.name)
        if match and int(match.group(1)) != os.getpid() and not process_running(int(match.group(1))):
            shutil.rmtree(entry.path, ignore_errors=True)
