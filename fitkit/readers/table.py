"""Delimited text tables: a header naming each column and its unit, then numbers."""

from __future__ import annotations

import csv
import io
import math
import re
from pathlib import Path

import numpy as np

from fitkit.errors import InputError
from fitkit.sweep import Sweep

_FREQ_UNITS = {"hz": 1.0, "khz": 1e3, "mhz": 1e6, "ghz": 1e9}


def read_table(path: Path, *, columns: dict | None = None) -> Sweep:
    """Read a delimited text sweep (comma, semicolon, tab or spaces; '#' comments)."""
    try:
        text = path.read_bytes().decode("utf-8-sig")
    except UnicodeDecodeError:
        text = path.read_bytes().decode("latin-1")
    lines = [(i + 1, ln) for i, ln in enumerate(text.splitlines())]
    lines = [(n, ln) for n, ln in lines if ln.strip() and not ln.lstrip().startswith(("#", ";"))]
    if not lines:
        raise InputError("the file holds no table", remedy="export the sweep as text", path=path)
    header_no, header = lines[0]
    delim = _delimiter(header)
    names = [c.strip() for c in next(csv.reader(io.StringIO(header), delimiter=delim))]
    if delim == " ":
        names = header.split()
    roles = _roles(names, columns or {}, path, header_no)
    rows = []
    for n, ln in lines[1:]:
        cells = ln.split() if delim == " " else next(csv.reader(io.StringIO(ln), delimiter=delim))
        if len(cells) < len(names):
            raise InputError(
                f"{len(cells)} cells where the header has {len(names)}",
                remedy="complete or delete the row",
                path=path,
                line=n,
            )
        try:
            rows.append([float(c) for c in cells[: len(names)]])
        except ValueError:
            bad = next(c for c in cells if not _is_number(c))
            raise InputError(
                f"cell {bad!r} is not a number",
                remedy="repair the row or delete it",
                path=path,
                line=n,
            ) from None
    if not rows:
        raise InputError("the table has a header but no rows", remedy="export the data", path=path)
    data = np.array(rows, dtype=np.float64)
    return _to_sweep(data, names, roles, path)


def _is_number(c: str) -> bool:
    try:
        float(c)
        return True
    except ValueError:
        return False


def _delimiter(header: str) -> str:
    for d in ("\t", ";", ","):
        if d in header:
            return d
    return " "


def _unit_of(name: str) -> str:
    m = re.search(r"[\(\[]\s*([^\)\]]*)\s*[\)\]]", name)
    if m:
        return m.group(1).strip()
    m = re.search(r"[_ ]([A-Za-z]+)$", name)
    return m.group(1) if m else ""


def _roles(names: list[str], columns: dict, path: Path, line: int) -> dict:
    """Map roles (freq, mag, phase, re, im) to column indices by header words and units."""
    roles: dict[str, tuple[int, str]] = {}
    for role, name in columns.items():
        if name not in names:
            raise InputError(
                f"no column named {name!r} (columns: {', '.join(names)})",
                remedy="name a column exactly as the header spells it",
                path=path,
                line=line,
            )
        roles[role] = (names.index(name), _unit_of(name))
    for i, name in enumerate(names):
        if i in [idx for idx, _ in roles.values()]:
            continue
        low = name.lower()
        unit = _unit_of(name)
        ulow = unit.lower()
        if "freq" not in roles and (low.startswith("f") and (ulow in _FREQ_UNITS or "freq" in low)):
            roles["freq"] = (i, unit)
        elif "phase" not in roles and ("phase" in low or ulow in ("deg", "rad", "degree")):
            roles["phase"] = (i, unit)
        elif "re" not in roles and re.match(r"(re|real)\b", low):
            roles["re"] = (i, unit)
        elif "im" not in roles and re.match(r"(im|imag)\b", low):
            roles["im"] = (i, unit)
        elif "mag" not in roles:
            roles["mag"] = (i, unit)
    if "freq" not in roles:
        raise InputError(
            f"no column reads as frequency (columns: {', '.join(names)})",
            remedy="name it e.g. 'freq (Hz)', or pass the column name as the frequency column",
            path=path,
            line=line,
        )
    return roles


def _kind_of(name: str, unit: str) -> tuple[str, bool, float]:
    """(kind, recorded_in_db, factor to SI) for the magnitude column."""
    low, u = name.lower(), unit.lower()
    if "s11" in low:
        kind = "s11"
    elif "s21" in low:
        kind = "s21"
    elif "z" in re.sub(r"[^a-z]", "", low)[:2] or u in ("ohm", "ohms", "\u03c9"):
        kind = "impedance"
    elif u in ("v", "mv", "vpp", "vrms", "mvpp", "mvrms"):
        kind = "volts"
    else:
        kind = "ratio"
    if u == "db":
        return kind, True, 1.0
    factor = {"mv": 1e-3, "vpp": 0.5 / math.sqrt(2), "mvpp": 0.5e-3 / math.sqrt(2), "mvrms": 1e-3}
    return kind, False, factor.get(u, 1.0)


def _to_sweep(data: np.ndarray, names: list[str], roles: dict, path: Path) -> Sweep:
    fi, fu = roles["freq"]
    fscale = _FREQ_UNITS.get(fu.lower(), 1.0)
    freq = data[:, fi] * fscale
    if "re" in roles and "im" in roles:
        kind, _, factor = _kind_of(names[roles["re"][0]], roles["re"][1])
        values = (data[:, roles["re"][0]] + 1j * data[:, roles["im"][0]]) * factor
        in_db = False
    elif "mag" in roles:
        mi, mu = roles["mag"]
        kind, in_db, factor = _kind_of(names[mi], mu)
        mag = 10 ** (data[:, mi] / 20) if in_db else data[:, mi] * factor
        values = mag
        if "phase" in roles:
            pi_, pu = roles["phase"]
            ph = data[:, pi_] if pu.lower().startswith("rad") else np.deg2rad(data[:, pi_])
            values = mag * np.exp(1j * ph)
    else:
        raise InputError(
            "no measured column beside the frequency",
            remedy="add a magnitude (and phase) column",
            path=path,
        )
    order = np.argsort(freq)
    return Sweep(freq[order], values[order], kind, recorded_in_db=in_db, source=str(path))
