"""The fingerprint of a lot's whole input: the lot file and every file it names."""

from __future__ import annotations

from pathlib import Path

from freezeout.numbers import sha256_bytes, sha256_file
from freezeout.records.lot import LotFile


def lot_input_sha256(lot: LotFile) -> str:
    """SHA-256 identifying a lot's whole input: the lot file and every file it refers to.

    The digest covers, in order, the lot file and each wafer's run and material file, each
    as its path relative to the lot file's directory and the SHA-256 of its bytes; so editing
    any run changes it, and moving the whole lot directory does not.

    Parameters
    ----------
    lot
        A parsed lot file.

    Returns
    -------
    str
        Hex digest.
    """
    base = lot.path.parent
    files: list[Path] = [lot.path]
    for w in lot.wafers:
        files.append(w.run)
        if w.material_file is not None:
            files.append(w.material_file)
    lines = []
    for f in files:
        try:
            name = f.relative_to(base).as_posix()
        except ValueError:
            name = f.as_posix()
        lines.append(name.encode("utf-8") + b"\0" + sha256_file(f).encode("ascii") + b"\n")
    return sha256_bytes(b"".join(lines))
