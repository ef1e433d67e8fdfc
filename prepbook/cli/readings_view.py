"""Readings from instruments in ``batch show``: where each reading came from, and each
stored titration curve as a plain-text chart with its endpoint marked.

The chart is drawn with ordinary characters so it reads in black and white and when
pasted: points are "*", the endpoint's column "|" with "E" on the curve.
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

if TYPE_CHECKING:
    from prepbook.devices.records import RecordedCurve
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


def render_readings(out: Any, readings: RunReadings | None) -> None:
    """The lines ``batch show`` prints under a run's replicates."""
    if readings is None or not readings.from_instruments:
        return
    for r in readings.sources:
        said = []
        if r.amount_source == "balance":
            said.append(f"mass read from balance {r.balance} at {r.read_at} UTC, printed as "
                        f"{r.raw!r}")
        else:
            said.append("mass typed")
        said.append("volume from its curve's endpoint" if r.volume_source == "curve"
                     else "volume typed")
        out.print(f"  {r.position}.{r.version}: " + "; ".join(said), highlight=False)
    for c in readings.curves:
        ends = ", ".join(f"{x:.3f}" for x in c.curve.endpoints_ml)
        out.print(f"  curve of replicate {c.position}: {c.file_name} ({c.size_bytes} bytes, "
                  f"sha256 {c.sha256[:16]}...), {c.curve.kind} against mL, endpoint(s) "
                  f"{ends} mL (E)", highlight=False)
        for line in curve_chart(c.curve):
            out.print("    " + line, highlight=False, markup=False)


BALANCE_WORDS = ("b", "@balance")


def amount_or_reading(db: Any, out: Any, typed: str, balance: str | None, position: int,
                      secondary: bool) -> Any:
    """What the prompt's amount answer stands for: the text as typed, or (for "b" or
    "@balance") the mass read now from the run's balance; None when the balance gave no
    reading (its one-line reason is shown, nothing is kept)."""
    from prepbook.errors import PrepbookError
    from prepbook.lab.replicate_sources import weighed

    if secondary or typed.lower() not in BALANCE_WORDS:
        return typed
    try:
        entry = weighed(db, balance, position)
    except PrepbookError as exc:
        out.print(f"[bold]not taken:[/bold] {exc}")
        return None
    w = entry.weighing
    assert w is not None, "weighed() returns a mass read from the balance"
    out.print(f"  read {w.mass_text} g from balance {w.balance} (printed as {w.raw!r})",
              highlight=False)
    return entry


def replicate_of(amount: Any, volume: str, position: int) -> Any:
    """The replicate for ``runs.standardize``: ``AMOUNT:VOLUME`` text, or the entry read
    from the balance with its volume (typed, ``@FILE`` or ``VOL@FILE``)."""
    from prepbook.lab.replicate_sources import with_volume

    return f"{amount}:{volume}" if isinstance(amount, str) else with_volume(amount, volume,
                                                                            position)
