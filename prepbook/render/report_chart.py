"""The report's charts (reportlab.graphics), black on white: the control chart (every
run's concentration at 20 C over time, with its U bar and the spec's acceptance window)
and each stored titration curve with its endpoint marked."""

from __future__ import annotations

import math
from datetime import date, datetime
from typing import TYPE_CHECKING, Any

from prepbook.render import archival

if TYPE_CHECKING:
    from prepbook.devices.records import RecordedCurve
    from prepbook.lab.reports import ReportData


def control_chart(data: ReportData, width: float, *, detail: bool = False) -> Any:
    """Concentration at 20 C of every run over time, with U bars and the acceptance window.

    ``detail`` scales the axis to the results and their U bars (the window lines are
    drawn only where they fall inside), so drift and overlap can be seen."""
    from reportlab.graphics.charts.lineplots import LinePlot
    from reportlab.graphics.shapes import Drawing, String
    from reportlab.graphics.widgets.markers import makeMarker
    from reportlab.lib import colors

    win = data.window
    unit = "mol/L" if win.unit == "M" else "eq/L"
    low = win.nominal * win.factor_low
    high = win.nominal * win.factor_high
    points = data.chart
    values = [p.concentration + k * (p.U or 0) for p in points for k in (-1, 1)]
    if detail:
        span_low, span_high = min(values), max(values)
        if span_high - span_low < 1e-12:
            span_low, span_high = span_low * 0.999, span_high * 1.001
    else:
        span_low, span_high = min([low, *values]), max([high, *values])
    pad = (span_high - span_low) * 0.08
    y_min, y_max = span_low - pad, span_high + pad

    def shown(v: float) -> bool:
        return y_min <= v <= y_max

    height = 110.0 if detail else 150.0
    drawing = Drawing(width, height + 30)
    drawing.initialFontName = archival.REGULAR  # the embedded font from the start
    plot = LinePlot()
    plot.x, plot.y = 52, 28
    plot.width, plot.height = width - 150, height - 10

    def day(at: str) -> float:
        moment = datetime.fromisoformat(at)
        return moment.toordinal() + (moment.hour * 60 + moment.minute) / 1440

    made = day(data.batch.preparation.made_at)
    xs = [day(p.at) for p in points] or [made]
    x0, x1 = time_span([made, *xs])
    series: list[list[tuple[float, float]]] = []
    styles: list[dict[str, Any]] = []

    def add(line: list[tuple[float, float]], **style: Any) -> None:
        series.append(line)
        styles.append(style)

    for level, style in ((low, {"width": 0.8, "dash": (4, 2)}),
                         (high, {"width": 0.8, "dash": (4, 2)}),
                         (win.nominal, {"width": 0.4, "dash": (1, 2)})):
        if shown(level):
            add([(x0, level), (x1, level)], **style)
    for p, x in zip(points, xs, strict=True):
        if p.U is not None:
            add([(x, p.concentration - p.U), (x, p.concentration + p.U)], width=0.8)
    by_status = {"accepted": "FilledCircle", "rejected": "Cross", "awaiting-review": "Square"}
    for status, marker in by_status.items():
        pts = [(x, p.concentration) for p, x in zip(points, xs, strict=True)
               if p.status == status]
        if pts:
            add(pts, width=0, marker=marker, accepted=status == "accepted")
    accepted = [(x, p.concentration) for p, x in zip(points, xs, strict=True)
                if p.status == "accepted"]
    if len(accepted) > 1:
        add(accepted, width=0.6)
    plot.data = series
    plot.joinedLines = 1
    for i, style in enumerate(styles):
        line = plot.lines[i]
        line.strokeColor = colors.black
        line.strokeWidth = style.get("width", 0.6)
        if style.get("dash"):
            line.strokeDashArray = style["dash"]
        if style.get("marker"):
            marker = makeMarker(style["marker"])
            marker.size = 5
            marker.fillColor = colors.black if style.get("accepted") else colors.white
            marker.strokeColor = colors.black
            line.symbol = marker
            line.strokeWidth = 0
            line.strokeColor = None
    step = nice_step(y_max - y_min)
    places = decimals(step)
    plot.yValueAxis.valueMin = y_min
    plot.yValueAxis.valueMax = y_max
    plot.yValueAxis.valueStep = step
    plot.yValueAxis.labelTextFormat = lambda v: f"{v:.{places}f}"
    plot.yValueAxis.labels.fontName = archival.REGULAR
    plot.yValueAxis.labels.fontSize = 7
    plot.xValueAxis.valueMin = x0
    plot.xValueAxis.valueMax = x1
    plot.xValueAxis.labelTextFormat = lambda v: date.fromordinal(int(v)).isoformat()
    plot.xValueAxis.labels.fontName = archival.REGULAR
    plot.xValueAxis.labels.fontSize = 7
    plot.xValueAxis.labels.angle = 0
    plot.xValueAxis.maximumTicks = 5
    plot.xValueAxis.visibleGrid = 0
    drawing.add(plot)
    right = plot.x + plot.width + 6

    def y_of(v: float) -> float:
        lo, hi = plot.yValueAxis.valueMin, plot.yValueAxis.valueMax
        return plot.y + (v - lo) / (hi - lo) * plot.height

    for v, text in ((high, f"upper {high:.{places + 1}f} (factor {win.factor_high:g})"),
                    (win.nominal, f"nominal {win.nominal:g}"),
                    (low, f"lower {low:.{places + 1}f} (factor {win.factor_low:g})")):
        if shown(v):
            drawing.add(String(right, y_of(v) - 2.5, text, fontName=archival.REGULAR, fontSize=6.5))
    caption = (f"detail: the axis spans the results only; concentration at 20 °C ({unit})"
               if detail else
               f"concentration at 20 °C ({unit}); dashed: acceptance window; bars: U; "
               "filled: accepted, square: to review, cross: rejected")
    drawing.add(String(plot.x, plot.y + plot.height + 8, caption, fontName=archival.REGULAR,
                       fontSize=7))
    return drawing


def time_span(days: list[float]) -> tuple[float, float]:
    """The time axis (in days) fitted to ``days``: their span and a margin of a tenth of
    it each side, at least two days; never before day 1, the calendar's first."""
    low, high = min(days), max(days)
    pad = max(2.0, (high - low) * 0.1)
    return max(1.0, low - pad), high + pad


def nice_step(span: float, ticks: int = 5) -> float:
    """A tick step of 1, 2 or 5 times a power of ten giving about ``ticks`` ticks."""
    raw = span / ticks if span > 0 else 1.0
    power = 10.0 ** math.floor(math.log10(raw))
    return next(m * power for m in (1, 2, 5, 10) if m * power >= raw)


def decimals(step: float) -> int:
    """Decimal places that show every multiple of ``step`` (1, 2 or 5 x 10^k) exactly."""
    return max(0, -math.floor(math.log10(step) + 1e-9))


def curve_chart(curve: RecordedCurve, width: float, caption: str,
                entered_ml: float | None = None) -> Any:
    """A replicate's recorded titration curve (reading against volume), each endpoint
    found marked by a dashed vertical line and its volume, and a typed volume
    (``entered_ml``) by a dotted one, black on white."""
    from reportlab.graphics.charts.lineplots import LinePlot
    from reportlab.graphics.shapes import Drawing, Line, String
    from reportlab.lib import colors

    height = 95.0
    drawing = Drawing(width, height + 30)
    drawing.initialFontName = archival.REGULAR  # the embedded font from the start
    plot = LinePlot()
    plot.x, plot.y = 30, 28
    plot.width, plot.height = width - 40, height - 12
    plot.data = [list(zip(curve.volumes_ml, curve.readings, strict=True))]
    line = plot.lines[0]
    line.strokeColor = colors.black
    line.strokeWidth = 0.7
    low, high = min(curve.readings), max(curve.readings)
    pad = (high - low) * 0.05 or 1.0
    plot.yValueAxis.valueMin, plot.yValueAxis.valueMax = low - pad, high + pad
    plot.xValueAxis.valueMin = curve.volumes_ml[0]
    plot.xValueAxis.valueMax = curve.volumes_ml[-1]
    for axis in (plot.xValueAxis, plot.yValueAxis):
        axis.labels.fontName = archival.REGULAR
        axis.labels.fontSize = 7
    plot.xValueAxis.labelTextFormat = lambda v: f"{v:g}"
    plot.yValueAxis.labelTextFormat = lambda v: f"{v:.1f}" if curve.kind == "pH" else f"{v:.0f}"
    drawing.add(plot)
    x_span = plot.xValueAxis.valueMax - plot.xValueAxis.valueMin
    marks: list[tuple[float, str, tuple[float, float], float]] = [
        (at, f"endpoint {at:.3f} mL", (3, 2), 0.18) for at in curve.endpoints_ml]
    if entered_ml is not None:
        marks.append((entered_ml, f"entered {entered_ml:g} mL", (1, 1.5), 0.34))
    for at, text, dash, height_share in marks:
        x = plot.x + (at - plot.xValueAxis.valueMin) / x_span * plot.width
        drawing.add(Line(x, plot.y, x, plot.y + plot.height, strokeColor=colors.black,
                         strokeWidth=0.6, strokeDashArray=dash))
        drawing.add(String(x - 3, plot.y + plot.height * height_share, text,
                           fontName=archival.REGULAR, fontSize=6.5, textAnchor="end"))
    drawing.add(String(4, plot.y + plot.height + 8, caption, fontName=archival.REGULAR,
                       fontSize=6.5))
    drawing.add(String(plot.x + plot.width, plot.y - 18, "titrant (mL)",
                       fontName=archival.REGULAR, fontSize=6.5, textAnchor="end"))
    drawing.add(String(plot.x - 4, plot.y + plot.height - 2, curve.kind,
                       fontName=archival.REGULAR, fontSize=6.5, textAnchor="end"))
    return drawing
