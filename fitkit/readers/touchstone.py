"""Touchstone files (an open standard, versions 1.x and 2.0): one- and two-port S data.

What is read: the option line ``# <unit> <parameter> <format> R <ohm>`` (defaults
``GHz S MA R 50``; in v1 only the first counts), ``!`` comments, formats RI, MA and DB,
the v1 two-port order N11 N21 N12 N22, the v2 keywords ``[Version]``,
``[Number of Ports]``, ``[Two-Port Data Order]``, ``[Number of Frequencies]``,
``[Reference]``, ``[Matrix Format]``, ``[Network Data]``, ``[Noise Data]`` and ``[End]``.
Noise parameters are skipped: in v1 they begin where a frequency is not above the one
before, in v2 at ``[Noise Data]``.

S parameters give the kinds ``s11`` and ``s21``. A one-port Z or Y file gives the kind
``impedance`` (v1 values are normalised to R, v2 values are not). Two-port Z, Y, H and G
files are refused: the fit needs S parameters or an impedance.
"""

from __future__ import annotations

import re
from collections.abc import Iterable
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from fitkit.errors import InputError
from fitkit.readers.layout import ColumnInfo, Reading
from fitkit.readers.text import FileText, file_sha256, read_all, read_head
from fitkit.readers.tidy import tidy_sweep

_FREQ_UNITS = {"hz": 1.0, "khz": 1e3, "mhz": 1e6, "ghz": 1e9}
_PARAMETERS = ("s", "y", "z", "h", "g")
_FORMATS = ("ri", "ma", "db")
_FIRST_PART = {"ri": ("real", "ratio"), "ma": ("mag", "ratio"), "db": ("mag", "dB")}
_SECOND_PART = {"ri": ("imag", "ratio"), "ma": ("phase", "deg"), "db": ("phase", "deg")}
_OPENING = 4096  # how much of a file's start shows whether it is Touchstone text
_OPTION = re.compile(r"#(\s+(hz|khz|mhz|ghz|s|y|z|h|g|db|ma|ri|r\s+\S+))*\s*", re.I)


@dataclass
class _Options:
    unit: str = "ghz"
    parameter: str = "s"
    format: str = "ma"
    reference: float = 50.0
    line: int | None = None


@dataclass
class _File:
    """What the keywords and the option line said, and the network data numbers."""

    version: str = "1.1"
    ports: int | None = None
    order: str = "21_12"
    frequencies: int | None = None
    matrix: str = "full"
    references: list = field(default_factory=list)
    options: _Options = field(default_factory=_Options)
    numbers: list = field(default_factory=list)
    record_lines: list = field(default_factory=list)
    notes: list = field(default_factory=list)


def looks_like_touchstone(path: Path, head: str | None = None) -> bool:
    """True for a ``.sNp`` or ``.ts`` name, or text opening with an option line or [Version].

    ``head`` is the start of the file as text, when already read.
    """
    if re.fullmatch(r"\.(s\d+p|ts)", path.suffix.lower()):
        return True
    if head is None:
        try:
            head = read_head(path, _OPENING, grow=False).head
        except InputError:
            return False
    opening = head[:_OPENING]
    for size in (256, _OPENING):  # most files decide on their first line
        lines = opening[:size].splitlines()
        if size < len(opening):
            lines.pop()  # it may be cut
        for line in lines:
            text = line.split("!", 1)[0].strip()
            if text:
                return text.lower().startswith("[version]") or (
                    bool(_OPTION.fullmatch(text)) and len(text.split()) > 1
                )
        if size >= len(opening):
            break
    return False


def read_touchstone(
    path: Path, *, parameter: str | None = None, head: FileText | None = None
) -> Reading:
    """Read a one- or two-port Touchstone file.

    Parameters
    ----------
    path : Path
        The file.
    parameter : {"s21", "s11"}, optional
        Which S parameter to read; S21 by default for two-port files, S11 for one-port.
    head : FileText, optional
        The start of the file as :func:`fitkit.readers.text.read_head` read it, when
        already read (a small file is then not read again).

    Raises
    ------
    InputError
        For anything the standard does not allow, a truncated data block, Z/Y/H/G
        two-port data, or more than two ports.
    """
    head = head or read_head(path)
    text = head.head if head.complete else read_all(path, head.encoding)
    lines = text.splitlines()
    state = _parse(lines, path)
    opts = state.options
    ports = state.ports
    k = _record_size(ports, state.matrix)
    records = len(state.numbers) // k if k else 0
    if len(state.numbers) % k:
        start = state.record_lines[-1]
        raise InputError(
            f"the last network data record holds {len(state.numbers) % k} of {k} numbers "
            "(the file is truncated?)",
            remedy="export the file again, or delete the incomplete record",
            path=path,
            line=start,
        )
    if state.frequencies is not None and records != state.frequencies:
        raise InputError(
            f"[Number of Frequencies] says {state.frequencies} but the network data holds "
            f"{records} (the file is truncated?)",
            remedy="export the file again, or correct [Number of Frequencies]",
            path=path,
            line=state.record_lines[-1] if state.record_lines else None,
        )
    data = np.array(state.numbers, dtype=np.float64).reshape(records, k)
    kind, index, label = _choose(ports, opts, state, parameter, path)
    pair = data[:, 1 + 2 * index : 3 + 2 * index]
    values = _complex(pair, opts.format)
    if kind == "impedance":
        values = _to_impedance(values, opts, state)
    reference = state.references or [opts.reference] * ports
    metadata = {
        "reference_ohm": float(reference[0]),
        "touchstone_version": state.version,
        "ports": ports,
        "parameter_written": opts.parameter.upper(),
        "format": opts.format.upper(),
    }
    notes = list(state.notes)
    if len(set(reference)) > 1:
        metadata["reference_ohm_per_port"] = [float(r) for r in reference]
        notes.append(f"ports have different reference impedances {reference}; kept port 1's")
    sweep = tidy_sweep(
        data[:, 0] * _FREQ_UNITS[opts.unit],
        values,
        np.array(state.record_lines[:records]),
        path=path,
        kind=kind,
        recorded_in_db=opts.format == "db",
        metadata=metadata,
        notes=notes,
        duplicates="refuse",
        freq_column=1,
        sha256=head.sha256 or file_sha256(path),
    )
    first, second = _FIRST_PART[opts.format], _SECOND_PART[opts.format]
    unit = {"hz": "Hz", "khz": "kHz", "mhz": "MHz", "ghz": "GHz"}[opts.unit]
    columns = [
        ColumnInfo(1, "frequency", "freq", unit),
        ColumnInfo(2 + 2 * index, f"{label} {first[0]}", first[0], first[1]),
        ColumnInfo(3 + 2 * index, f"{label} {second[0]}", second[0], second[1]),
    ]
    details = {
        "option line": f"line {opts.line}" if opts.line else "none (defaults GHz S MA R 50)",
        "parameter": opts.parameter.upper(),
        "format": opts.format.upper(),
        "ports": str(ports),
        "reference": f"{reference[0]:g} ohm",
    }
    return Reading(sweep, f"Touchstone {state.version}", details, columns)


def _parse(lines: list[str], path: Path) -> _File:
    """Walk the lines: keywords, the option line, network data; stop at noise data."""
    state = _File()
    m = re.fullmatch(r"\.s(\d+)p", path.suffix.lower())
    content = [(n, ln.split("!", 1)[0].strip()) for n, ln in enumerate(lines, start=1)]
    content = [(n, t) for n, t in content if t]
    if not content:
        raise InputError(
            "the Touchstone file holds no option line and no data",
            remedy="export the network data again",
            path=path,
        )
    v2 = content[0][1].lower().startswith("[version]")
    state.ports = int(m.group(1)) if m and not v2 else None
    in_data, in_reference, previous = not v2, False, None
    for n, text in content:
        if text.startswith("["):
            keyword, _, arg = text[1:].partition("]")
            keyword = keyword.strip().lower()
            if _keyword(state, keyword, arg.strip(), n, path):
                break
            in_data, in_reference = keyword == "network data", keyword == "reference"
            continue
        if text.startswith("#"):
            _option_line(state, text, n, path)
            continue
        if in_reference and len(state.references) < (state.ports or 0):
            state.references.extend(_numbers(text, n, path))
            continue
        if not in_data:
            raise InputError(
                f"numbers {text[:30]!r} outside [Network Data]",
                remedy="put the data after the [Network Data] keyword",
                path=path,
                line=n,
            )
        values = _numbers(text, n, path)
        if state.ports is None and not v2:
            state.ports = {3: 1, 9: 2}.get(len(values))
        if state.ports is None:
            raise InputError(
                "cannot tell the number of ports",
                remedy="name the file .s1p or .s2p, or write [Number of Ports]",
                path=path,
                line=n,
            )
        size = _record_size(state.ports, state.matrix)
        if len(values) > size:
            found = {9: "two-port", 3: "one-port"}.get(len(values), f"{len(values)}-number")
            raise InputError(
                f"the line holds {len(values)} numbers where a {state.ports}-port record "
                f"holds {size} ({found} data in a {path.suffix or 'Touchstone'} file?)",
                remedy="name the file after its ports (.s1p: 3 numbers a line, .s2p: 9), "
                "or export it again",
                path=path,
                line=n,
            )
        if len(state.numbers) % size == 0:
            if previous is not None and values[0] <= previous:
                if v2 or state.ports != 2:
                    raise InputError(
                        f"frequency {values[0]:g} is not above the one before",
                        remedy="network data must ascend; sort the file or export it again",
                        path=path,
                        line=n,
                    )
                _skip_noise(state, content, n, path)
                break
            previous = values[0]
            state.record_lines.append(n)
        state.numbers.extend(values)
    if state.options.line is None and v2:
        raise InputError(
            "a Touchstone 2.0 file needs an option line ('# GHz S MA R 50')",
            remedy="add the option line after [Version]",
            path=path,
        )
    if not state.numbers:
        raise InputError(
            "the Touchstone file holds no network data",
            remedy="export the network data again",
            path=path,
        )
    return state


def _keyword(state: _File, keyword: str, arg: str, n: int, path: Path) -> bool:
    """Apply one v2 keyword; True when the network data has ended."""
    if keyword == "version":
        state.version = arg or "2.0"
    elif keyword == "number of ports":
        state.ports = _count(arg, keyword, n, path)
    elif keyword == "two-port data order":
        if arg.lower() not in ("12_21", "21_12"):
            raise InputError(
                f"[Two-Port Data Order] {arg!r} is neither 12_21 nor 21_12",
                remedy="write 12_21 or 21_12",
                path=path,
                line=n,
            )
        state.order = arg.lower()
    elif keyword == "number of frequencies":
        state.frequencies = _count(arg, keyword, n, path)
    elif keyword == "reference":
        state.references = _numbers(arg, n, path) if arg else []
    elif keyword == "matrix format":
        if arg.lower() not in ("full", "lower", "upper"):
            raise InputError(
                f"[Matrix Format] {arg!r} is not Full, Lower or Upper",
                remedy="write one of Full, Lower, Upper",
                path=path,
                line=n,
            )
        state.matrix = arg.lower()
    elif keyword == "mixed-mode order":
        raise InputError(
            "mixed-mode (differential) data is not read",
            remedy="export single-ended S parameters",
            path=path,
            line=n,
        )
    elif keyword in ("noise data", "end"):
        return True
    return False


def _option_line(state: _File, text: str, n: int, path: Path) -> None:
    if state.options.line is not None:
        state.notes.append(f"ignored a second option line (line {n}); the first counts")
        return
    opts = _Options(line=n)
    tokens = text[1:].split()
    i = 0
    while i < len(tokens):
        word = tokens[i].lower()
        if word in _FREQ_UNITS:
            opts.unit = word
        elif word in _PARAMETERS:
            opts.parameter = word
        elif word in _FORMATS:
            opts.format = word
        elif word == "r" and i + 1 < len(tokens):
            opts.reference = _numbers(tokens[i + 1], n, path)[0]
            i += 1
        else:
            raise InputError(
                f"option {tokens[i]!r} is not a Touchstone option",
                remedy="write the option line as '# <Hz|kHz|MHz|GHz> <S|Y|Z|H|G> "
                "<DB|MA|RI> R <ohm>'",
                path=path,
                line=n,
            )
        i += 1
    state.options = opts


def _skip_noise(state: _File, content, start: int, path: Path) -> None:
    rest = [(n, t) for n, t in content if n >= start and not t.startswith(("[", "#"))]
    count = sum(len(t.split()) for _, t in rest)
    if count % 5:
        raise InputError(
            "the noise-parameter block does not hold 5 numbers per frequency "
            "(the file is truncated, or a frequency is out of order?)",
            remedy="export the file again; network data must ascend",
            path=path,
            line=rest[-1][0],
        )
    state.notes.append(
        f"skipped the noise-parameter block (lines {start} to {rest[-1][0]}, "
        f"{count // 5} frequencies)"
    )


def _numbers(text: str, n: int, path: Path) -> list[float]:
    out = []
    for token in text.split():
        try:
            out.append(float(token))
        except ValueError:
            raise InputError(
                f"{token!r} is not a number",
                remedy="repair the line or export the file again",
                path=path,
                line=n,
            ) from None
    if not np.all(np.isfinite(out)):
        raise InputError(
            "the line holds an infinite or NaN value",
            remedy="repair the line or export the file again",
            path=path,
            line=n,
        )
    return out


def _count(arg: str, keyword: str, n: int, path: Path) -> int:
    if not arg.strip().isdigit() or int(arg) < 1:
        raise InputError(
            f"[{keyword.title()}] {arg!r} is not a positive whole number",
            remedy="correct the keyword's value",
            path=path,
            line=n,
        )
    return int(arg)


def _record_size(ports: int, matrix: str) -> int:
    pairs = ports * ports if matrix == "full" else ports * (ports + 1) // 2
    return 1 + 2 * pairs


def _choose(ports: int, opts: _Options, state: _File, parameter, path: Path):
    """(kind, index of the value pair in a record, label) for the parameter asked."""
    if ports > 2:
        raise InputError(
            f"a {ports}-port file; fitkit reads one- and two-port files",
            remedy="export the one- or two-port S parameters of the circuit",
            path=path,
        )
    if opts.parameter != "s":
        if ports == 1 and opts.parameter in ("z", "y"):
            return "impedance", 0, opts.parameter.upper()
        raise InputError(
            f"{opts.parameter.upper()} parameters of a {ports}-port are not read",
            remedy="export S parameters (or a one-port Z or Y file)",
            path=path,
            line=opts.line,
        )
    want = (parameter or ("s21" if ports == 2 else "s11")).lower()
    if want not in ("s11", "s21") or (want == "s21" and ports == 1):
        raise InputError(
            f"cannot read {want.upper()} from a {ports}-port file",
            remedy="ask for s11" + (" or s21" if ports == 2 else ""),
            path=path,
        )
    if want == "s11":
        return "s11", 0, "S11"
    # S21 is the second pair for the orders N11 N21 ... and Lower; the third for 12_21
    index = 2 if state.order == "12_21" and state.matrix == "full" else 1
    if state.matrix == "upper":
        raise InputError(
            "an upper-triangle two-port file holds no S21",
            remedy="export the full matrix, or ask for s11",
            path=path,
        )
    return "s21", index, "S21"


def _complex(pair: np.ndarray, fmt: str) -> np.ndarray:
    a, b = pair[:, 0], pair[:, 1]
    if fmt == "ri":
        return a + 1j * b
    mag = 10.0 ** (a / 20.0) if fmt == "db" else a
    return mag * np.exp(1j * np.deg2rad(b))


def _to_impedance(values: np.ndarray, opts: _Options, state: _File) -> np.ndarray:
    # v1 normalises Z and Y data to R; v2 writes them in ohm and siemens
    r = opts.reference if state.version.startswith("1") else 1.0
    return values * r if opts.parameter == "z" else r / values


def write_touchstone(
    path: str | Path,
    freq_hz: Iterable[float],
    data: np.ndarray,
    *,
    fmt: str = "RI",
    freq_unit: str = "GHz",
    reference_ohm: float = 50.0,
    version: str = "1.1",
    parameter: str = "S",
    comments: Iterable[str] = (),
) -> Path:
    """Write S (or one-port Z) data as a Touchstone file.

    Parameters
    ----------
    path : str or Path
        Where to write; name it ``.s1p`` or ``.s2p`` for version 1.1.
    freq_hz : array_like
        Ascending frequencies in Hz.
    data : ndarray of complex
        Shape ``(N,)`` for a one-port, ``(N, 2, 2)`` for a two-port (``data[:, 1, 0]``
        is S21).
    fmt : {"RI", "MA", "DB"}
        How each complex value is written.
    freq_unit : {"Hz", "kHz", "MHz", "GHz"}
        The unit of the frequency column.
    reference_ohm : float
        The reference impedance R.
    version : {"1.1", "2.0"}
        Version 1.1 writes two-port rows as N11 N21 N12 N22; 2.0 writes keywords and
        the order 12_21.
    parameter : {"S", "Z"}
        Z is for one-port impedance data (normalised to R in version 1.1).
    comments : iterable of str
        Lines written as ``!`` comments at the top.

    Returns
    -------
    Path
        The path written.

    Raises
    ------
    ValueError
        For a zero value written as DB.

    Examples
    --------
    >>> import numpy as np
    >>> write_touchstone("/tmp/x.s1p", [1e6, 2e6], np.array([0.5, 0.25j]))
    ... # doctest: +SKIP
    """
    path = Path(path)
    freq = np.asarray(freq_hz, dtype=np.float64) / _FREQ_UNITS[freq_unit.lower()]
    data = np.asarray(data, dtype=np.complex128)
    ports = 1 if data.ndim == 1 else data.shape[1]
    if version.startswith("1") and parameter.upper() == "Z":
        data = data / reference_ohm
    if fmt.upper() == "DB" and not np.all(data):
        raise ValueError("a zero value has no dB form; write it as RI or MA")
    if ports == 1:
        cells = data[:, None]
    elif version.startswith("1"):
        cells = np.stack([data[:, 0, 0], data[:, 1, 0], data[:, 0, 1], data[:, 1, 1]], axis=1)
    else:
        cells = data.reshape(len(freq), 4)
    out = [f"! {c}" for c in comments]
    if not version.startswith("1"):
        out += ["[Version] 2.0"]
    out.append(f"# {freq_unit} {parameter.upper()} {fmt.upper()} R {reference_ohm:.17g}")
    if not version.startswith("1"):
        out += [f"[Number of Ports] {ports}"]
        if ports == 2:
            out.append("[Two-Port Data Order] 12_21")
        out += [f"[Number of Frequencies] {len(freq)}", "[Network Data]"]
    for f, row in zip(freq, cells, strict=True):
        out.append(" ".join([f"{f:.17g}"] + [_pair(v, fmt.lower()) for v in row]))
    if not version.startswith("1"):
        out.append("[End]")
    path.write_text("\n".join(out) + "\n", encoding="utf-8")
    return path


def _pair(value: complex, fmt: str) -> str:
    if fmt == "ri":
        a, b = value.real, value.imag
    elif fmt == "ma":
        a, b = abs(value), np.degrees(np.angle(value))
    else:
        a, b = 20.0 * np.log10(abs(value)), np.degrees(np.angle(value))
    return f"{a:.17g} {b:.17g}"
