"""Which files a batch fits: folders, files and glob patterns, found without looping,
and what keeps a path from being read (before anything opens it).

Folders are walked following folder links, but each real folder is searched once, so a
link back into the tree (a loop) cannot multiply the inputs. A named pipe, a folder
named like a sweep, or a link that loops on itself is an input whose record says why it
was not read; nothing is opened that could wait forever.
"""

from __future__ import annotations

import errno
import glob
import hashlib
import os
import stat
from collections.abc import Callable, Iterable, Iterator
from dataclasses import dataclass, field
from fnmatch import fnmatchcase
from pathlib import Path
from urllib.parse import quote

from fitkit.errors import InputError

#: file name endings a folder is searched for
SWEEP_SUFFIXES = (".csv", ".tsv", ".txt", ".dat", ".s1p", ".s2p", ".ts")
_MAGIC = "*?["


@dataclass
class Inputs:
    """The inputs of a batch.

    Attributes
    ----------
    files : list of Path
        Every input once, in a stable order (by folder, then name).
    root : Path
        The folder all inputs lie below; record names are paths relative to it.
    skipped : list of str
        One line per folder not searched (a link back to a folder already searched, a
        folder that cannot be listed).
    """

    files: list[Path]
    root: Path
    skipped: list[str] = field(default_factory=list)


def find_inputs(items: Iterable[str], *, skip: Path | None = None) -> Inputs:
    """The sweep files named by folders, files or glob patterns.

    Parameters
    ----------
    items : iterable of str
        Folders (searched below for files ending in one of ``SWEEP_SUFFIXES``), files
        (kept even when missing or unreadable, so their row can say so), or glob patterns
        (``*``, ``?``, ``[``; ``**`` reaches into subfolders).
    skip : Path, optional
        A folder whose files are never inputs (the output folder).

    Raises
    ------
    InputError
        When nothing matches, or an input folder is the output folder or inside it.
    """
    items = list(items)
    skip_real = os.path.realpath(skip) if skip is not None else None
    walk = _Walk(skip_real)
    found: list[Path] = []
    for item in items:
        if os.path.isdir(item):
            _refuse_output_as_input(item, skip_real)
            found += walk.files(Path(item), _has_sweep_suffix)
        elif any(ch in item for ch in _MAGIC):
            found += _glob(item, walk)
        else:
            found.append(Path(item))
    if skip_real is not None:
        found = [f for f in found if not _inside(os.path.realpath(f), skip_real)]
    unique, seen = [], set()
    for f in found:  # each path once, where it first appears
        if os.path.abspath(f) not in seen:
            seen.add(os.path.abspath(f))
            unique.append(f)
    if not unique:
        raise InputError(
            f"no sweep files matched {' '.join(items)}",
            remedy=f"give folders holding files ending in {', '.join(SWEEP_SUFFIXES)}, "
            "files, or a quoted glob such as 'kits/*.csv'",
        )
    parents = [os.path.dirname(os.path.abspath(f)) for f in unique]
    return Inputs(unique, Path(os.path.commonpath(parents)), walk.skipped)


def _has_sweep_suffix(path: Path) -> bool:
    return path.suffix.lower() in SWEEP_SUFFIXES


def _inside(path: str, folder: str) -> bool:
    return path == folder or path.startswith(folder.rstrip(os.sep) + os.sep)


def _refuse_output_as_input(item: str, skip_real: str | None) -> None:
    if skip_real is not None and _inside(os.path.realpath(item), skip_real):
        raise InputError(
            "the output folder would also be searched for sweeps",
            remedy="choose an --out folder outside the input folders",
            path=item,
        )


class _Walk:
    """A folder walk that follows folder links but searches each real folder once."""

    def __init__(self, skip_real: str | None) -> None:
        self.skip_real = skip_real
        self.skipped: list[str] = []

    def files(self, folder: Path, wanted: Callable[[Path], bool]) -> list[Path]:
        """Every non-folder entry below ``folder`` (depth first, by name) that is wanted."""
        return [p for p, is_dir in self.entries(folder) if not is_dir and wanted(p)]

    def entries(self, folder: Path) -> Iterator[tuple[Path, bool]]:
        """(path, is a folder) for everything below ``folder``, each real folder once."""
        return self._entries(folder, {})

    def _entries(self, folder: Path, seen: dict) -> Iterator[tuple[Path, bool]]:
        try:
            st = os.stat(folder)
            with os.scandir(folder) as listing:
                names = sorted(entry.name for entry in listing)
        except OSError as exc:
            self.skipped.append(f"{folder}: cannot be listed ({exc.strerror})")
            return
        ident = (st.st_dev, st.st_ino)
        if ident in seen:
            self.skipped.append(
                f"{folder}: a link to the folder {seen[ident]}, already searched; "
                "not searched again"
            )
            return
        seen[ident] = folder
        for name in names:
            path = folder / name
            is_dir = os.path.isdir(path)
            if is_dir and self.skip_real and os.path.realpath(path) == self.skip_real:
                continue
            yield path, is_dir
            if is_dir:
                yield from self._entries(path, seen)


def _glob(pattern: str, walk: _Walk) -> list[Path]:
    """Matches of a glob pattern: files, and folders named like a sweep (so their row
    can say they are folders). ``**`` is matched on a loop-safe walk."""
    parts = Path(pattern).parts
    if "**" not in parts:
        matches = [Path(m) for m in sorted(glob.glob(pattern))]
        return [m for m in matches if not os.path.isdir(m) or _has_sweep_suffix(m)]
    fixed = 0
    while not any(ch in parts[fixed] for ch in _MAGIC) and parts[fixed] != "**":
        fixed += 1
    base = Path(*parts[:fixed]) if fixed else Path(".")
    rest = parts[fixed:]
    if not os.path.isdir(base):
        return []
    found = []
    for path, is_dir in walk.entries(base):
        if is_dir and not _has_sweep_suffix(path):
            continue
        if _match(path.relative_to(base).parts, rest):
            found.append(path)
    return found


def _match(parts: tuple, pattern: tuple) -> bool:
    """Whether path parts match pattern parts; ``**`` stands for any number of folders
    and, as in :func:`glob.glob`, names starting with a dot are matched only by a
    pattern that starts with one."""
    if not pattern:
        return not parts
    head, rest = pattern[0], pattern[1:]
    if head == "**":
        return any(
            _match(parts[i:], rest) and not any(p.startswith(".") for p in parts[:i])
            for i in range(len(parts) + 1)
        )
    if not parts or (parts[0].startswith(".") and not head.startswith(".")):
        return False
    return fnmatchcase(parts[0], head) and _match(parts[1:], rest)


def unreadable_reason(path: Path) -> tuple[str, str] | None:
    """Why a path cannot be read as a sweep file, without opening it: ``(what, fix)``,
    or None for a regular file that can be opened for reading."""
    try:
        mode = os.stat(path).st_mode
    except OSError as exc:
        return _os_error_reason(exc)
    if stat.S_ISDIR(mode):
        return (
            "a folder, not a sweep file",
            "give the folder itself to search it, or name the sweep files inside it",
        )
    if stat.S_ISFIFO(mode):
        return (
            "a named pipe (FIFO), not a file; batch does not read pipes, which can wait forever",
            "save the sweep to an ordinary file and give that",
        )
    if not stat.S_ISREG(mode):
        return "not an ordinary file (a device or socket)", "give an ordinary sweep file"
    if not os.access(path, os.R_OK):
        return _os_error_reason(PermissionError(errno.EACCES, os.strerror(errno.EACCES)))
    return None


def _os_error_reason(exc: OSError) -> tuple[str, str]:
    if exc.errno == errno.ENOENT:
        if os.path.islink(exc.filename or ""):
            return "a link to a file that does not exist", "point the link at the sweep file"
        return "no such file", "check the name; quote a glob pattern such as 'kits/*.csv'"
    if exc.errno == errno.ELOOP:
        return (
            "a symbolic link that loops back on itself",
            "point the link at the sweep file, or remove it",
        )
    if exc.errno in (errno.EACCES, errno.EPERM):
        return "cannot be read: permission denied", "give read permission, or copy the file"
    return f"cannot be read ({exc.strerror})", "check the file and the disk it is on"


def file_sha256(path: Path) -> str | None:
    """The SHA-256 of a file's bytes, or None when it cannot be read (or is not an
    ordinary file: a pipe is never opened)."""
    if unreadable_reason(path) is not None:
        return None
    digest = hashlib.sha256()
    try:
        with open(path, "rb") as fh:
            for block in iter(lambda: fh.read(1 << 20), b""):
                digest.update(block)
    except OSError:
        return None
    return digest.hexdigest()


#: the longest record file name (many file systems allow 255 bytes)
_MAX_NAME = 200


def record_name(path: Path, root: Path) -> str:
    """The record file name of an input: its path relative to the batch root, made safe.

    Characters other than letters, digits and `` ()+,-.=@_`` are percent-encoded (a
    folder separator too), so two inputs never share a name; a name that would be too
    long is cut and ends in ``~`` and a hash of the whole path.

    Examples
    --------
    >>> record_name(Path("kits/a/kit 01.csv"), Path("kits"))
    'a%2Fkit 01.csv.json'
    """
    full, base = os.path.abspath(path), os.path.abspath(root)
    below = base if base.endswith(os.sep) else base + os.sep
    # below the root (always, for a batch's inputs): the rest of the path is relative
    rel = full[len(below) :] if full.startswith(below) else os.path.relpath(full, base)
    name = quote(os.fsencode(rel), safe=" ()+,-.=@_")
    if name.startswith("."):
        name = "%2E" + name[1:]
    if len(name) > _MAX_NAME:
        digest = hashlib.sha256(os.fsencode(rel)).hexdigest()[:16]
        name = name[: _MAX_NAME - 17] + "~" + digest
    return name + ".json"
