"""Small helpers on plain numbers shared by the layers (no physics, no files)."""

from __future__ import annotations

import math
from typing import Any


def finite_or_none(x: Any) -> float | None:
    """``float(x)`` when it is a finite number, else None (for JSON and database columns).

    Booleans, None, non-numbers, NaN and infinities all give None.
    """
    if x is None or isinstance(x, bool):
        return None
    try:
        v = float(x)
    except (TypeError, ValueError):
        return None
    return v if math.isfinite(v) else None
