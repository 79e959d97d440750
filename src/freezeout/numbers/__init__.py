"""Plain numbers, units, cells and fingerprints shared by every layer.

No physics here, and no files beyond hashing one.
"""

from freezeout.numbers.cells import MISSING_CELLS, is_missing, parse_number_cell
from freezeout.numbers.digest import sha256_bytes, sha256_file, slug
from freezeout.numbers.values import finite_or_none

__all__ = ["MISSING_CELLS", "finite_or_none", "is_missing", "parse_number_cell",
           "sha256_bytes", "sha256_file", "slug"]
