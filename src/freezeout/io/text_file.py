"""Reading a UTF-8 text file for the line-based readers, with errors as InputError."""

from __future__ import annotations

from pathlib import Path

from freezeout.errors import InputError

__all__ = ["read_text_lines"]


def read_text_lines(path: str | Path) -> tuple[bytes, list[str]]:
    """A text file's bytes and its lines (a UTF-8 byte-order mark is dropped).

    Parameters
    ----------
    path
        The file.

    Returns
    -------
    data, lines
        The file's bytes (for its fingerprint) and its decoded lines, without line ends.

    Raises
    ------
    InputError
        If the file cannot be read, or is not UTF-8 text (naming the line of the first bad
        byte).
    """
    p = Path(path)
    try:
        data = p.read_bytes()
    except OSError as exc:
        raise InputError(f"cannot read file: {exc.strerror or exc}", file=str(p)) from None
    try:
        text = data.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        line = data[: exc.start].count(b"\n") + 1
        raise InputError("file is not UTF-8 text", file=str(p), line=line) from None
    return data, text.splitlines()
