"""A plain-text chart of a batch's strength over time, for terminals without graphics.

Drawn with ordinary characters so it reads in black and white, with NO_COLOR, and
when pasted into a report: points are "o", the least-squares line ".", the
acceptance window "=" (or named above/below the chart when it lies far outside).
"""

from __future__ import annotations

from datetime import datetime
from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from prepbook.lab.history import Trend


def trend_chart(trend: Trend, *, width: int = 60, height: int = 12) -> list[str]:
    hist = [h for h in trend.history if h.factor is not None]
    if not hist:
        return ["(no accepted standardization to chart)"]
    nominal = trend.nominal
    times = [datetime.fromisoformat(h.performed_at) for h in hist]
    values = [h.factor * nominal for h in hist if h.factor is not None]
    lo_w, hi_w = (f * nominal for f in trend.window)
    t0, t1 = min(times), max(times)
    span_t = max((t1 - t0).total_seconds(), 1.0)
    v_lo, v_hi = min(values), max(values)
    pad = max((v_hi - v_lo) * 0.25, abs(v_hi) * 0.002)
    y_lo, y_hi = v_lo - pad, v_hi + pad
    # Draw a window edge inside the chart when it is near the data, else name it.
    reach = 3 * (y_hi - y_lo)
    if lo_w >= y_lo - reach:
        y_lo = min(y_lo, lo_w - pad / 2)
    if hi_w <= y_hi + reach:
        y_hi = max(y_hi, hi_w + pad / 2)
    grid = [[" "] * width for _ in range(height)]

    def row_of(v: float) -> int:
        return round((y_hi - v) / (y_hi - y_lo) * (height - 1))

    def col_of(t: datetime) -> int:
        return round((t - t0).total_seconds() / span_t * (width - 1))

    for edge in (lo_w, hi_w):
        if y_lo <= edge <= y_hi:
            grid[row_of(edge)] = ["="] * width
    slope = trend.slope_percent_per_30d
    if slope is not None and len(hist) >= 3:
        # Refit in display units so the drawn line is the one the slope describes.
        xs = [(t - t0).total_seconds() for t in times]
        mx, my = sum(xs) / len(xs), sum(values) / len(values)
        sxx = sum((x - mx) ** 2 for x in xs)
        b = sum((x - mx) * (y - my) for x, y in zip(xs, values, strict=True)) / sxx if sxx else 0
        for c in range(width):
            y = my + b * (c / (width - 1) * span_t - mx)
            if y_lo <= y <= y_hi and grid[row_of(y)][c] == " ":
                grid[row_of(y)][c] = "."
    for t, v in zip(times, values, strict=True):
        grid[row_of(v)][col_of(t)] = "o"
    unit = trend.unit
    label_w = 9
    lines = []
    if hi_w > y_hi:
        lines.append(f"{'':>{label_w}}  upper limit {hi_w:.5g} {unit} is above the chart")
    for r, cells in enumerate(grid):
        v = y_hi - r * (y_hi - y_lo) / (height - 1)
        label = f"{v:.5g}" if r in (0, height - 1) or r == height // 2 else ""
        lines.append(f"{label:>{label_w}} |" + "".join(cells))
    lines.append(f"{'':>{label_w}} +" + "-" * width)
    left, right = t0.date().isoformat(), t1.date().isoformat()
    lines.append(f"{'':>{label_w}}  {left}{right:>{width - len(left)}}")
    if lo_w < y_lo:
        lines.append(f"{'':>{label_w}}  lower limit {lo_w:.5g} {unit} is below the chart")
    lines.append(f"{'':>{label_w}}  o accepted ({unit} at 20 C)   . least-squares line   "
                 "= acceptance limit")
    return lines
