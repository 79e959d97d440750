"""Reading a user material from a TOML file."""

from __future__ import annotations

import re
import tomllib
from pathlib import Path

from freezeout.errors import InputError
from freezeout.physics.materials import Material, material_from_mapping


def read_material_file(path: str | Path) -> Material:
    """Read a material description (flat TOML table, keys of ``MATERIAL_KEYS``).

    Raises
    ------
    InputError
        Missing or unreadable file, TOML syntax error (with its line and column), unknown or
        missing keys, values out of range.
    """
    p = Path(path)
    try:
        text = p.read_text(encoding="utf-8")
    except OSError as exc:
        raise InputError(f"cannot read material file: {exc.strerror}", file=str(p)) from None
    except UnicodeDecodeError:
        raise InputError("material file is not UTF-8 text", file=str(p)) from None
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        m = re.search(r"line (\d+), column (\d+)", str(exc))
        line, col = (int(m.group(1)), int(m.group(2))) if m else (None, None)
        raise InputError(f"not valid TOML: {exc}", file=str(p), line=line, column=col) from None
    return material_from_mapping(data, file=str(p))
