"""A stored titration curve as a plain-text chart, and where a run's readings came from,
for the terminal (``batch show`` and the terminal app's batch screen).

The chart is drawn with ordinary characters so it reads in black and white and when
pasted: points are "*", the endpoint's column "|" with "E" on the curve.
"""

from __future__ import annotations

from collections.abc import Callable
from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from prepbook.devices.records import RecordedCurve
    from prepbook.lab.replicate_curves import StoredCurve
    from prepbook.lab.replicate_sources import RunReadings


def curve_chart(curve: RecordedCurve, *, width: int = 60, height: int = 12) -> list[str]:
    """The curve (volume across, reading up), its endpoint(s) as a column of "|"."""
    v, e = curve.volumes_ml, curve.readings
    v0, v1 = v[0], v[-1]
    e0, e1 = min(e), max(e)
    span_v = (v1 - v0) or 1.0
    span_e = (e1 - e0) or 1.0
    grid = [[" "] * width for _ in range(height)]

    def col(x: float) -> int:
        return min(width - 1, max(0, round((x - v0) / span_v * (width - 1))))

    def row(y: float) -> int:
        return min(height - 1, max(0, round((e1 - y) / span_e * (height - 1))))

    for x in curve.endpoints_ml:
        for r in range(height):
            grid[r][col(x)] = "|"
    for x, y in zip(v, e, strict=True):
        grid[row(y)][col(x)] = "*"
    for x in curve.endpoints_ml:
        nearest = min(range(len(v)), key=lambda i: abs(v[i] - x))
        grid[row(e[nearest])][col(x)] = "E"
    label = 7
    lines = []
    for r, cells in enumerate(grid):
        tick = f"{e1 - r * span_e / (height - 1):.{1 if curve.kind == 'pH' else 0}f}"
        lines.append(f"{tick if r in (0, height - 1) else '':>{label}} |" + "".join(cells))
    lines.append(" " * label + " +" + "-" * width)
    left, right = f"{v0:g}", f"{v1:g} mL"
    lines.append(" " * (label + 2) + left + " " * max(1, width - len(left) - len(right)) + right)
    return lines


def source_lines(readings: RunReadings, shown: Callable[[str | None], str]) -> list[str]:
    """One line per replicate version: where its mass and its volume came from.
    ``shown`` writes a stored time as the lab reads it (its wall-clock time and offset)."""
    lines = []
    for r in readings.sources:
        mass = (f"mass read from balance {r.balance} at {shown(r.read_at)}, printed as {r.raw!r}"
                if r.amount_source == "balance" else "mass typed")
        volume = ("volume from its curve's endpoint" if r.volume_source == "curve"
                  else "volume typed")
        lines.append(f"{r.position}.{r.version}: {mass}; {volume}")
    return lines


def curve_heading(c: StoredCurve) -> str:
    ends = ", ".join(f"{x:.3f}" for x in c.curve.endpoints_ml)
    return (f"curve of replicate {c.position}: {c.file_name} ({c.size_bytes} bytes, sha256 "
            f"{c.sha256[:16]}...), {c.curve.kind} against mL, endpoint(s) {ends} mL (E)")
