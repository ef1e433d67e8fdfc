"""Numbers as a label or a report prints them (the record keeps every digit)."""

from __future__ import annotations

import math


def significant(value: float, digits: int = 5) -> str:
    """A value with ``digits`` significant figures for reading (the record keeps all)."""
    if value == 0 or not math.isfinite(value):
        return str(value)
    magnitude = math.floor(math.log10(abs(value)))
    decimals = max(0, digits - 1 - magnitude)
    return f"{value:.{decimals}f}"
