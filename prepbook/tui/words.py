"""How the app tells states and numbers: in words and marks, never by colour alone.

Shown values are rounded for reading only; the record keeps every digit and the
readings exactly as typed (``prepbook batch show --json`` gives them in full).
"""

from __future__ import annotations

import math
from typing import Any

# state -> (mark, words). Marks keep states apart with NO_COLOR and on paper.
STATES: dict[str, tuple[str, str]] = {
    "expired": ("✖", "EXPIRED"),
    "due": ("!", "DUE"),
    "awaiting-review": ("?", "to review"),
    "new": ("+", "new"),
    "in-service": ("✓", "in service"),
    "retired": ("-", "retired"),
}

# state -> theme colour name (a Textual theme variable), used beside the words.
STATE_COLOUR = {
    "expired": "error",
    "due": "warning",
    "awaiting-review": "accent",
    "new": "secondary",
    "in-service": "success",
    "retired": "foreground-muted",
}

RUN_STATUS = {
    "accepted": ("✓", "accepted"),
    "rejected": ("✖", "rejected"),
    "awaiting-review": ("?", "awaiting review"),
}


def state_words(state: str | None) -> str:
    if state is None:
        return "-"
    mark, words = STATES.get(state, ("·", state))
    return f"{mark} {words}"


def run_words(status: str | None) -> str:
    if status is None:
        return "-"
    mark, words = RUN_STATUS.get(status, ("·", status))
    return f"{mark} {words}"


def check_words(check: dict[str, Any]) -> str:
    """A check's outcome in words: passed, FAILED (blocks) or warning (does not)."""
    if check.get("passed"):
        return "✓ passed"
    return "✖ FAILED" if check.get("severity") == "fail" else "! warning"


def sig(value: float | None, digits: int = 5) -> str:
    """A value to ``digits`` significant figures, for reading (the record keeps all)."""
    if value is None or (isinstance(value, float) and not math.isfinite(value)):
        return "-"
    if value == 0:
        return "0"
    return f"{value:.{digits}g}" if abs(value) < 1e-4 or abs(value) >= 1e6 \
        else f"{value:.{max(digits - 1 - int(math.floor(math.log10(abs(value)))), 0)}f}"


def fixed(value: float | None, places: int = 4) -> str:
    if value is None or (isinstance(value, float) and not math.isfinite(value)):
        return "-"
    return f"{value:.{places}f}"


def when(iso: str | None) -> str:
    """An ISO time as 'YYYY-MM-DD HH:MM' (UTC)."""
    if not iso:
        return "-"
    return iso.replace("T", " ")[:16]
