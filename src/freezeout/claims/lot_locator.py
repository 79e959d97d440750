"""Where a key of a lot file is: its line, and errors that name file, line and key path.

``tomllib`` gives no positions, so the text is scanned once for table headers
(``[decision]``, ``[[claim]]``) and ``key =`` lines; a key is then found by its table, the
table's occurrence (1-based, for arrays of tables) and its name. Key paths are written as
``claim[2].max`` (claims and wafers numbered from 1 in file order).
"""

from __future__ import annotations

import re
from pathlib import Path

from freezeout.errors import InputError


def key_path(table: str, index: int | None, key: str | None = None) -> str:
    """The key path ``table[index].key`` (``table.key`` without index; ``key`` at the top)."""
    base = table if index is None else f"{table}[{index}]"
    if not base:
        return key or ""
    return base if key is None else f"{base}.{key}"


def key_index(key: str) -> int:
    """The 1-based index in a key path ``"claim[3]"`` -> 3."""
    return int(key[key.index("[") + 1 : key.index("]")])


class KeyLocator:
    """Line numbers of the table headers and keys of a TOML text.

    Parameters
    ----------
    text
        The TOML text.
    """

    _ARRAY = re.compile(r"^\s*\[\[\s*([A-Za-z0-9_.\-]+)\s*\]\]")
    _TABLE = re.compile(r"^\s*\[\s*([A-Za-z0-9_.\-]+)\s*\]")
    _KEY = re.compile(r"""^\s*["']?([A-Za-z0-9_\-]+)["']?\s*=""")

    def __init__(self, text: str) -> None:
        # (table name, occurrence index or None, key) -> line, and the same for each header
        self.keys: dict[tuple[str, int | None, str], int] = {}
        self.headers: dict[tuple[str, int | None], int] = {}
        counts: dict[str, int] = {}
        current: tuple[str, int | None] = ("", None)
        for lineno, line in enumerate(text.splitlines(), start=1):
            m = self._ARRAY.match(line)
            if m:
                name = m.group(1)
                counts[name] = counts.get(name, 0) + 1
                current = (name, counts[name])
                self.headers.setdefault(current, lineno)
                continue
            m = self._TABLE.match(line)
            if m:
                current = (m.group(1), None)
                self.headers.setdefault(current, lineno)
                continue
            m = self._KEY.match(line)
            if m:
                self.keys.setdefault((current[0], current[1], m.group(1)), lineno)

    def line(self, table: str, index: int | None = None, key: str | None = None) -> int | None:
        """The key's line; else its table header's line; else None (1-based)."""
        if key is not None and (table, index, key) in self.keys:
            return self.keys[(table, index, key)]
        return self.headers.get((table, index))


class LotContext:
    """A lot file being read: its name and locator, to build located errors.

    Parameters
    ----------
    path
        The lot file's path (named in errors).
    text
        Its text.
    """

    def __init__(self, path: Path, text: str) -> None:
        self.file = str(path)
        self.loc = KeyLocator(text)

    def error(
        self, message: str, column: str, table: str = "", index: int | None = None,
        key: str | None = None,
    ) -> InputError:
        """An :class:`InputError` naming the file, the line of ``table[index].key``, ``column``.

        ``column`` is the key path to show; the line is the key's, else its table's.
        """
        return InputError(message, file=self.file, line=self.loc.line(table, index, key),
                          column=column)
