"""Reading a lab's text file safely: regular files only, a size limit, the usual encodings.

A run file must be a regular file (not a directory, a named pipe, a device such as
``/dev/null`` or a socket): that is checked with ``os.stat`` before anything is read, and again
on the opened file, so that a pipe or a device is never read from. A file over
:data:`MAX_FILE_BYTES` is refused before it is read. The text is decoded as UTF-8 (a
byte-order mark is dropped), as UTF-16 when it starts with a UTF-16 byte-order mark (what
spreadsheet programs write as "Unicode text"), else as Windows-1252 (cp1252) or, for the five
bytes cp1252 leaves undefined, Latin-1, with a note saying so. A file with NUL bytes or other
control characters is binary and refused.
"""

from __future__ import annotations

import codecs
import os
import re
import stat
from dataclasses import dataclass
from pathlib import Path

from freezeout.errors import InputError

__all__ = ["MAX_FILE_BYTES", "TextFile", "check_regular_file", "read_text_file",
           "read_text_lines"]

#: Largest run file read (project choice, no source): 50 MB. A raw run of 200,000 readings
#: (the row limit, :data:`freezeout.io.table_reader.MAX_ROWS`) is about 9 MB.
MAX_FILE_BYTES = 50_000_000

_LINE_END = re.compile(r"\r\n|\r|\n")
_CONTROL = re.compile(r"[\x00-\x08\x0b\x0e-\x1f\x7f]")
_KINDS = ((stat.S_ISDIR, "a directory"), (stat.S_ISFIFO, "a named pipe"),
          (stat.S_ISCHR, "a character device"), (stat.S_ISBLK, "a block device"),
          (stat.S_ISSOCK, "a socket"))


@dataclass(frozen=True)
class TextFile:
    """A text file as read: its bytes, its lines and how it was decoded.

    Attributes
    ----------
    path
        The file, as given.
    data
        The file's bytes (for its SHA-256).
    lines
        The decoded lines without their line ends; ``lines[i]`` is file line ``i + 1``.
    encoding
        ``"utf-8"``, ``"utf-8-sig"`` (with a byte-order mark), ``"utf-16"``, ``"cp1252"`` or
        ``"latin-1"``.
    note
        What the reader should tell the user about the decoding (a fallback), or None.
    """

    path: str
    data: bytes
    lines: list[str]
    encoding: str
    note: str | None = None


def _kind(mode: int) -> str:
    return next((name for test, name in _KINDS if test(mode)), "not a regular file")


def check_regular_file(path: str | Path, *, max_bytes: int = MAX_FILE_BYTES) -> os.stat_result:
    """Refuse anything but a regular file of at most ``max_bytes``, before reading it.

    Parameters
    ----------
    path
        The file.
    max_bytes
        Size limit. [byte]

    Returns
    -------
    os.stat_result
        The file's status.

    Raises
    ------
    InputError
        If the file does not exist or cannot be examined, is a directory, a named pipe, a
        device or a socket, or is larger than ``max_bytes`` (the message states the limit).
    """
    name = str(path)
    try:
        st = os.stat(name)
    except OSError as exc:
        raise InputError(f"cannot read file: {exc.strerror or exc}", file=name) from None
    _check_status(st, name, max_bytes)
    return st


def _check_status(st: os.stat_result, name: str, max_bytes: int) -> None:
    if not stat.S_ISREG(st.st_mode):
        raise InputError(f"not a regular file ({_kind(st.st_mode)}): a run file must be a file "
                         "on disk; copy the data into one", file=name)
    if st.st_size > max_bytes:
        raise InputError(f"file is {st.st_size / 1e6:.1f} MB, over the limit of "
                         f"{max_bytes / 1e6:.0f} MB for a run file; split the run or remove "
                         "columns it does not need", file=name)


def _read_bytes(path: str | Path, max_bytes: int) -> bytes:
    """The bytes of a regular file, checked before reading and again on the open file."""
    name = str(path)
    check_regular_file(name, max_bytes=max_bytes)
    try:
        # O_NONBLOCK: a pipe swapped in after the check opens without waiting for a writer
        fd = os.open(name, os.O_RDONLY | getattr(os, "O_NONBLOCK", 0))
    except OSError as exc:
        raise InputError(f"cannot read file: {exc.strerror or exc}", file=name) from None
    try:
        _check_status(os.fstat(fd), name, max_bytes)
        with os.fdopen(fd, "rb", closefd=False) as fh:
            data = fh.read(max_bytes + 1)
    except OSError as exc:
        raise InputError(f"cannot read file: {exc.strerror or exc}", file=name) from None
    finally:
        os.close(fd)
    if len(data) > max_bytes:
        raise InputError(f"file is over the limit of {max_bytes / 1e6:.0f} MB for a run file",
                         file=name)
    return data


def _line_of(text_or_data, index: int) -> int:
    newline = b"\n" if isinstance(text_or_data, bytes) else "\n"
    return text_or_data[:index].count(newline) + 1


def _decode(data: bytes, name: str) -> tuple[str, str, str | None]:
    """(text, encoding, note) of a file's bytes, or an InputError for binary content."""
    if data.startswith(codecs.BOM_UTF8):
        enc, text = "utf-8-sig", None
    elif data.startswith((codecs.BOM_UTF16_LE, codecs.BOM_UTF16_BE)):
        enc = "utf-16"
        try:
            text = data.decode("utf-16")
        except UnicodeDecodeError:
            text = None
        # a table of numbers in UTF-16 is mostly ASCII; anything else is not text
        if text is not None and sum(c < "\u0100" for c in text) >= 0.9 * len(text):
            bad = _CONTROL.search(text)
            if bad is None:
                return text, enc, None
            raise InputError("file is not UTF-8 text (UTF-16 with control characters: a "
                             "binary file?)", file=name, line=_line_of(text, bad.start()))
        enc = "utf-8"
    else:
        enc = "utf-8"
    try:
        text = data.decode(enc)
    except UnicodeDecodeError as exc:
        line = _line_of(data, exc.start)
        if b"\x00" in data or _CONTROL.search(data.decode("latin-1")):
            raise InputError("file is not UTF-8 text (nor Windows-1252 or Latin-1 text: it "
                             "holds NUL or control bytes, a binary file?)", file=name,
                             line=line) from None
        try:
            text, enc = data.decode("cp1252"), "cp1252"
        except UnicodeDecodeError:
            text, enc = data.decode("latin-1"), "latin-1"
        shown = "Windows-1252 (cp1252)" if enc == "cp1252" else "Latin-1 (ISO 8859-1)"
        first = data[exc.start:exc.start + 1].decode(enc)
        note = (f"the file is not UTF-8: read as {shown}, the first such character on line "
                f"{line} read as {first!r}; save it as UTF-8 to be sure of its symbols")
        return text, enc, note
    bad = _CONTROL.search(text)
    if bad is not None:
        raise InputError("file is not UTF-8 text (it holds NUL or control characters: a "
                         "binary file?)", file=name, line=_line_of(text, bad.start()))
    return text, enc, None


def read_text_file(path: str | Path, *, max_bytes: int = MAX_FILE_BYTES) -> TextFile:
    """Read a run file's text: regular files only, at most ``max_bytes``, decoded.

    Parameters
    ----------
    path
        The file.
    max_bytes
        Size limit, checked before reading. [byte]

    Returns
    -------
    TextFile
        Bytes, lines (split at CR LF, CR or LF), encoding and any note.

    Raises
    ------
    InputError
        Not a regular file, over the limit, unreadable, or binary (naming the line of the
        first bad byte).
    """
    name = str(path)
    data = _read_bytes(path, max_bytes)
    text, enc, note = _decode(data, name)
    lines = _LINE_END.split(text)
    if lines and lines[-1] == "":
        lines.pop()
    return TextFile(name, data, lines, enc, note)


def read_text_lines(path: str | Path) -> tuple[bytes, list[str]]:
    """A text file's bytes and its lines (see :func:`read_text_file`).

    Parameters
    ----------
    path
        The file.

    Returns
    -------
    data, lines
        The file's bytes (for its fingerprint) and its decoded lines, without line ends.
    """
    text = read_text_file(path)
    return text.data, text.lines
