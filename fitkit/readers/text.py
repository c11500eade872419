"""Bytes to text: which encoding a sweep file uses, and refusing files that are not text.

Instruments write UTF-8 (with or without a byte-order mark), UTF-16 with a byte-order mark
(some Windows software) or a legacy 8-bit code page; Latin-1 is the fallback because it
decodes any byte, so it is tried last and said in the notes.
"""

from __future__ import annotations

import codecs
import hashlib
import re
from dataclasses import dataclass
from pathlib import Path

from fitkit.errors import InputError

#: How much of a file is read at first; a sweep file of up to this size is read, hashed
#: and parsed from these bytes alone (a larger one is parsed from the file by pandas).
HEAD_BYTES = 256 * 1024
#: A head is read further (doubling) until it holds this many lines or this many bytes,
#: so a long comment or metadata line before the table does not hide the table.
_HEAD_LINES = 40
_HEAD_LIMIT = 64 * 1024 * 1024
#: How much of the start of a file is checked for binary data.
_BINARY_SAMPLE = 65536
_CONTROL = re.compile(r"[\x01-\x08\x0e-\x1f]")
#: every byte but the control characters of ``_CONTROL``: deleting these from ASCII
#: bytes leaves the control characters, counted in one pass
_NOT_CONTROL = bytes(b for b in range(256) if not (1 <= b <= 8 or 14 <= b <= 31))


@dataclass(frozen=True)
class FileText:
    """The start of a file decoded, and how to decode the rest.

    Attributes
    ----------
    encoding : str
        A Python codec name that decodes the whole file (pandas takes the same name).
    head : str
        The first :data:`HEAD_BYTES` decoded, cut at the last complete line unless the
        whole file fits.
    complete : bool
        True when ``head`` is the whole file.
    notes : list of str
        What the decoding had to do, for the user.
    sha256 : str or None
        The SHA-256 of the file's bytes when ``head`` is the whole file (so the file is
        read once), else None.
    """

    encoding: str
    head: str
    complete: bool
    notes: list
    sha256: str | None = None


def read_head(path: Path, size: int = HEAD_BYTES, *, grow: bool = True) -> FileText:
    """Decode the first ``size`` bytes of ``path`` and decide its encoding.

    With ``grow``, a head of few lines (a very long line before the table) is read
    further until it holds enough lines to sniff the layout.

    Raises
    ------
    InputError
        When the file is empty or holds binary data rather than text.
    """
    try:
        with open(path, "rb") as fh:
            raw = fh.read(size + 1)
            while (
                grow and len(raw) > size and size < _HEAD_LIMIT and raw.count(b"\n") < _HEAD_LINES
            ):
                raw += fh.read(size)
                size *= 2
    except OSError as exc:
        raise InputError(
            f"cannot read the file ({exc.strerror})",
            remedy="check that the file is readable by you (its permissions) and not in use",
            path=path,
        ) from None
    complete = len(raw) <= size
    raw = raw[:size]
    if not raw.strip(b" \t\r\n\x00\xef\xbb\xbf\xff\xfe"):
        raise InputError(
            "the file is empty", remedy="export the sweep again; the file holds no text", path=path
        )
    notes: list[str] = []
    if raw.startswith((codecs.BOM_UTF16_LE, codecs.BOM_UTF16_BE)):
        encoding = "utf-16"
        notes.append("decoded as UTF-16 (byte-order mark)")
    elif raw.startswith(codecs.BOM_UTF8):
        encoding = "utf-8-sig"
    else:
        encoding = "utf-8"
    head = _decode(raw, encoding, complete)
    if head is None and encoding == "utf-8":
        encoding = "latin-1"
        head = _decode(raw, encoding, complete)
        notes.append("not valid UTF-8; decoded as Latin-1")
    if head is None:
        raise InputError(
            f"the file is not valid {encoding} text",
            remedy="export the sweep again as plain text (UTF-8)",
            path=path,
        )
    if raw.isascii():
        _refuse_binary_ascii(raw, path)
    else:
        _refuse_binary(head, path)
    if not complete:
        cut = head.rfind("\n")
        head = head[: cut + 1] if cut >= 0 else head
    sha = hashlib.sha256(raw).hexdigest() if complete else None
    return FileText(encoding=encoding, head=head, complete=complete, notes=notes, sha256=sha)


def split_lines(text: str) -> list[str]:
    r"""The lines of ``text``, broken at CRLF, CR or LF only (not at the other characters
    :meth:`str.splitlines` breaks at).

    Examples
    --------
    >>> split_lines("a\r\nb\rc\n")
    ['a', 'b', 'c', '']
    """
    if "\r" in text:
        text = text.replace("\r\n", "\n").replace("\r", "\n")
    return text.split("\n")


def read_all(path: Path, encoding: str) -> str:
    """Decode the whole file with ``encoding`` (used for small formats such as Touchstone).

    Raises
    ------
    InputError
        When a byte past the sniffed start does not decode.
    """
    try:
        text = path.read_bytes().decode(encoding)
    except UnicodeDecodeError as exc:
        raise InputError(
            f"byte {exc.start} is not valid {encoding} text",
            remedy="export the file again as plain text (UTF-8)",
            path=path,
        ) from None
    _refuse_binary(text, path)
    return text


def file_sha256(path: Path) -> str:
    """The SHA-256 of the file's bytes, read in blocks (the file is not held in memory)."""
    digest = hashlib.sha256()
    with open(path, "rb") as fh:
        for block in iter(lambda: fh.read(1 << 20), b""):
            digest.update(block)
    return digest.hexdigest()


def _decode(raw: bytes, encoding: str, complete: bool) -> str | None:
    """Decode, tolerating a multi-byte character cut at the end of an incomplete head."""
    decoder = codecs.getincrementaldecoder(encoding)()
    try:
        return decoder.decode(raw, final=complete)
    except UnicodeDecodeError:
        return None


def _refuse_binary(text: str, path: Path) -> None:
    """Text files hold no NUL and few control characters; anything else is not a sweep."""
    sample = text[:_BINARY_SAMPLE]
    _judge_controls(sample, len(_CONTROL.findall(sample)), path)


def _refuse_binary_ascii(raw: bytes, path: Path) -> None:
    """:func:`_refuse_binary` for ASCII bytes (one character a byte), counted in C."""
    sample = raw[:_BINARY_SAMPLE]
    _judge_controls(sample, len(sample.translate(None, _NOT_CONTROL)), path)


def _judge_controls(sample: str | bytes, controls: int, path: Path) -> None:
    nul = "\x00" if isinstance(sample, str) else b"\x00"
    if nul in sample or controls > max(8, len(sample) // 100):
        newline = "\n" if isinstance(sample, str) else b"\n"
        line = sample[: sample.find(nul)].count(newline) + 1 if nul in sample else None
        raise InputError(
            "the file holds binary data, not a text sweep",
            remedy="export the sweep from the instrument as CSV or Touchstone text",
            path=path,
            line=line,
        )
