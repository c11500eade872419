"""Reading the small TOML files users keep beside their sweeps (setup, specification)."""

from __future__ import annotations

import difflib
import re
import sys
from pathlib import Path

from fitkit.errors import InputError

if sys.version_info >= (3, 11):
    import tomllib
else:  # pragma: no cover
    import tomli as tomllib


def read_toml(path: str | Path, *, what: str, option: str, layout: str) -> dict:
    """The file's tables as a dict, or an InputError naming the file and the fix.

    Parameters
    ----------
    path : str or Path
        The file.
    what : str
        What the file is, for the message ("setup file").
    option : str
        The command-line option that names it ("--setup").
    layout : str
        Where the user finds the expected layout, for the remedy.
    """
    p = Path(path)
    if p.exists() and not p.is_file():
        raise InputError(
            f"the {what} is a folder or a pipe, not a file",
            remedy=f"give {option} the path of a TOML file",
            path=p,
        )
    try:
        return tomllib.loads(p.read_text(encoding="utf-8"))
    except FileNotFoundError:
        raise InputError(f"no such {what}", remedy=f"check the {option} path", path=p) from None
    except OSError as exc:
        raise InputError(
            f"cannot read the {what} ({exc.strerror})",
            remedy="check that the file is readable by you (its permissions)",
            path=p,
        ) from None
    except UnicodeDecodeError:
        raise InputError(
            f"the {what} is not UTF-8 text", remedy=f"save it as UTF-8 text; {layout}", path=p
        ) from None
    except tomllib.TOMLDecodeError as exc:
        raise InputError(f"not a valid TOML {what} ({exc})", remedy=layout, path=p) from None


def refuse_unknown_keys(where: str, table: dict, allowed, path: str | Path) -> None:
    """Refuse keys outside ``allowed``, suggesting the nearest known one (``decison``).

    Raises
    ------
    InputError
        Naming the file, where the keys are and the known keys.
    """
    unknown = sorted(set(table) - set(allowed))
    if unknown:
        near = difflib.get_close_matches(unknown[0], list(allowed), n=1)
        hint = f"did you mean {near[0]!r} for {unknown[0]!r}? " if near else ""
        raise InputError(
            f"{where} has unknown key(s) {', '.join(unknown)}",
            remedy=f"{hint}known keys: {', '.join(allowed)}",
            path=path,
        )


def table_line(path: str | Path, name: str) -> int | None:
    """The line (from 1) of the header ``[name]`` in a TOML file; None when not found."""
    header = re.compile(rf"""\s*\[\s*(?:{re.escape(name)}|"{re.escape(name)}")\s*\]""")
    try:
        lines = Path(path).read_text(encoding="utf-8").splitlines()
    except (OSError, UnicodeDecodeError):
        return None
    return next((i for i, line in enumerate(lines, 1) if header.match(line)), None)
