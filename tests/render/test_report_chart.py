"""The report's control chart: a time axis fitted to the runs (one result does not
stretch it to the expiry date a year on), and concentration labels that all carry the
same number of decimal places."""

from __future__ import annotations

import math
from types import SimpleNamespace
from typing import Any

import pytest

from prepbook.lab.reports import ChartPoint
from prepbook.render import report_chart


def _data(points: list[ChartPoint], made_at: str = "2026-12-02T08:40:00+00:00") -> Any:
    """The parts of ReportData the chart reads (invented values)."""
    window = SimpleNamespace(unit="N", nominal=0.1, factor_low=0.9, factor_high=1.1)
    batch = SimpleNamespace(preparation=SimpleNamespace(made_at=made_at),
                            expires="2027-12-02")  # a year after the only run
    return SimpleNamespace(window=window, chart=tuple(points), batch=batch)


def _plot(drawing: Any) -> Any:
    from reportlab.graphics.charts.lineplots import LinePlot

    return next(c for c in drawing.contents if isinstance(c, LinePlot))


ONE = [ChartPoint(run="R1", at="2026-12-03T10:15:00+00:00", status="accepted",
                  concentration=0.10025, U=0.00012)]


@pytest.mark.parametrize("detail", [False, True])
def test_one_result_keeps_the_time_axis_within_days_of_it(detail: bool) -> None:
    plot = _plot(report_chart.control_chart(_data(ONE), 480, detail=detail))
    span_days = plot.xValueAxis.valueMax - plot.xValueAxis.valueMin
    assert span_days <= 7  # made on the 2nd, run on the 3rd: a few days, not a year


@pytest.mark.parametrize("detail", [False, True])
def test_every_concentration_label_has_the_same_decimals(detail: bool) -> None:
    points = [*ONE, ChartPoint(run="R2", at="2026-12-20T09:00:00+00:00", status="rejected",
                               concentration=0.10311, U=None)]
    plot = _plot(report_chart.control_chart(_data(points), 480, detail=detail))
    axis = plot.yValueAxis
    step = axis.valueStep  # reportlab puts a tick at every multiple of it on the axis
    first, last = math.ceil(axis.valueMin / step), math.floor(axis.valueMax / step)
    labels = [axis.labelTextFormat(k * step) for k in range(first, last + 1)]
    assert len(labels) >= 3
    places = {len(t.split(".")[1]) if "." in t else 0 for t in labels}
    assert len(places) == 1, labels


@pytest.mark.parametrize(("span", "step", "places"), [
    (0.02, 0.005, 3), (0.0012, 0.0005, 4), (0.5, 0.1, 1), (13.0, 5.0, 0), (0.07, 0.02, 2)])
def test_tick_steps_are_1_2_5_and_their_decimals(span: float, step: float,
                                                 places: int) -> None:
    """common practice, no source: ticks at 1, 2 or 5 times a power of ten."""
    assert report_chart.nice_step(span) == pytest.approx(step)
    assert report_chart.decimals(report_chart.nice_step(span)) == places


def test_the_time_span_pads_a_tenth_or_two_days() -> None:
    assert report_chart.time_span([100.0]) == (98.0, 102.0)
    assert report_chart.time_span([100.0, 200.0]) == (90.0, 210.0)
    assert report_chart.time_span([1.5]) == (1.0, 3.5)  # never before the first day
