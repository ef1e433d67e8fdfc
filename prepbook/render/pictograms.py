"""GHS hazard pictograms drawn as vector shapes: a square set on a point with a red
border (black for printers without colour), white inside, and a black symbol.

The frame follows the UN GHS (an open standard): a diamond with a red border, a black
symbol on white. The symbols are prepbook's own simplified drawings of the nine GHS
symbols (exploding bomb, flame, flame over circle, gas cylinder, corrosion, skull and
crossbones, exclamation mark, health hazard, environment), drawn in a unit square so
they scale to any size.

``places`` groups a label's pictograms (in a row, or two staggered rows); the
label layout puts the group under the signal word and shrinks it, down to
``SIDES_MM[-1]``, only when a small stock must.

reportlab is imported only inside the functions that draw.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from typing import Any

# Side of the pictogram's square, tried in turn: 10 mm is the least the EU CLP (Annex I,
# 1.2.1, table 1.3) asks for packages up to 3 L; smaller only when a small stock must.
SIDES_MM = (10.0, 8.5, 7.0, 6.0, 5.0)
BORDER = 0.075  # border width / side: common practice, no source
RED = (1.0, 0.0, 0.0)


def code_of(pictogram: str) -> str:
    """"GHS05 corrosion" -> "GHS05"."""
    return pictogram.split(" ", 1)[0]


def _star(canvas: Any, cx: float, cy: float, outer: float, inner: float, points: int) -> Any:
    path = canvas.beginPath()
    for i in range(points * 2):
        r = outer if i % 2 == 0 else inner
        a = math.pi / 2 + i * math.pi / points
        x, y = cx + r * math.cos(a), cy + r * math.sin(a)
        if i == 0:
            path.moveTo(x, y)
        else:
            path.lineTo(x, y)
    path.close()
    return path


def _flame(canvas: Any, cx: float, base: float, scale: float) -> Any:
    def p(x: float, y: float) -> tuple[float, float]:
        return cx + x * scale, base + y * scale

    path = canvas.beginPath()
    path.moveTo(*p(-0.3, 0.0))
    path.curveTo(*p(-0.45, 0.3), *p(-0.2, 0.55), *p(-0.08, 0.9))
    path.curveTo(*p(0.02, 0.7), *p(0.12, 0.62), *p(0.12, 0.45))
    path.curveTo(*p(0.2, 0.52), *p(0.26, 0.6), *p(0.26, 0.72))
    path.curveTo(*p(0.45, 0.45), *p(0.42, 0.18), *p(0.3, 0.0))
    path.close()
    return path


def _bomb(c: Any) -> None:
    c.circle(-0.14, -0.2, 0.27, stroke=0, fill=1)
    c.drawPath(_star(c, 0.16, 0.2, 0.33, 0.13, 8), stroke=0, fill=1)
    for x, y in ((-0.32, 0.3), (0.45, -0.05), (0.2, -0.42)):
        c.circle(x, y, 0.045, stroke=0, fill=1)


def _flame_symbol(c: Any) -> None:
    c.drawPath(_flame(c, 0.0, -0.4, 0.95), stroke=0, fill=1)
    c.rect(-0.45, -0.52, 0.9, 0.08, stroke=0, fill=1)


def _flame_over_circle(c: Any) -> None:
    c.setLineWidth(0.1)
    c.circle(0.0, -0.2, 0.22, stroke=1, fill=0)
    c.drawPath(_flame(c, 0.0, -0.02, 0.62), stroke=0, fill=1)
    c.rect(-0.45, -0.52, 0.9, 0.08, stroke=0, fill=1)


def _gas_cylinder(c: Any) -> None:
    c.saveState()
    c.rotate(-20)
    c.scale(1.3, 1.3)
    c.roundRect(-0.45, -0.17, 0.7, 0.34, 0.15, stroke=0, fill=1)
    c.rect(0.24, -0.07, 0.1, 0.14, stroke=0, fill=1)
    c.rect(0.34, -0.13, 0.07, 0.26, stroke=0, fill=1)
    c.restoreState()


def _corrosion(c: Any) -> None:
    for x in (-0.26, 0.2):  # two test tubes pouring
        c.saveState()
        c.translate(x, 0.32)
        c.rotate(-60)
        c.roundRect(-0.09, -0.24, 0.18, 0.48, 0.08, stroke=0, fill=1)
        c.restoreState()
    for x in (-0.07, 0.39):  # the drops falling
        for y in (0.1, -0.04, -0.16):
            c.circle(x, y, 0.04, stroke=0, fill=1)
    c.rect(-0.5, -0.42, 0.42, 0.14, stroke=0, fill=1)  # the hand, bitten
    c.rect(0.06, -0.42, 0.42, 0.14, stroke=0, fill=1)  # the metal, bitten
    c.setFillColorRGB(1, 1, 1)
    for x in (-0.1, 0.38):
        c.circle(x, -0.27, 0.07, stroke=0, fill=1)
    c.setFillColorRGB(0, 0, 0)
    c.rect(-0.52, -0.52, 1.04, 0.06, stroke=0, fill=1)


def _skull(c: Any) -> None:
    c.setLineWidth(0.1)
    c.setLineCap(1)
    c.line(-0.42, -0.46, 0.42, -0.12)
    c.line(0.42, -0.46, -0.42, -0.12)
    for x, y in ((-0.42, -0.46), (0.42, -0.12), (0.42, -0.46), (-0.42, -0.12)):
        c.circle(x, y, 0.07, stroke=0, fill=1)
    c.circle(0.0, 0.2, 0.3, stroke=0, fill=1)
    c.roundRect(-0.16, -0.16, 0.32, 0.2, 0.05, stroke=0, fill=1)
    c.setFillColorRGB(1, 1, 1)
    for x in (-0.12, 0.12):
        c.circle(x, 0.2, 0.08, stroke=0, fill=1)
    nose = c.beginPath()
    nose.moveTo(0.0, 0.08)
    nose.lineTo(-0.04, 0.0)
    nose.lineTo(0.04, 0.0)
    nose.close()
    c.drawPath(nose, stroke=0, fill=1)
    c.setFillColorRGB(0, 0, 0)


def _exclamation(c: Any) -> None:
    bar = c.beginPath()
    bar.moveTo(-0.1, 0.52)
    bar.lineTo(0.1, 0.52)
    bar.lineTo(0.05, -0.2)
    bar.lineTo(-0.05, -0.2)
    bar.close()
    c.drawPath(bar, stroke=0, fill=1)
    c.circle(0.0, -0.38, 0.08, stroke=0, fill=1)


def _health(c: Any) -> None:
    c.circle(0.0, 0.38, 0.14, stroke=0, fill=1)
    body = c.beginPath()
    body.moveTo(-0.36, -0.5)
    body.lineTo(-0.36, 0.0)
    body.curveTo(-0.36, 0.18, -0.2, 0.2, 0.0, 0.2)
    body.curveTo(0.2, 0.2, 0.36, 0.18, 0.36, 0.0)
    body.lineTo(0.36, -0.5)
    body.close()
    c.drawPath(body, stroke=0, fill=1)
    c.setFillColorRGB(1, 1, 1)
    c.drawPath(_star(c, 0.0, -0.14, 0.24, 0.09, 8), stroke=0, fill=1)
    c.setFillColorRGB(0, 0, 0)


def _environment(c: Any) -> None:
    c.setLineCap(1)
    c.setLineWidth(0.05)
    c.line(-0.5, -0.44, 0.5, -0.44)
    c.setLineWidth(0.07)
    c.line(-0.24, -0.44, -0.24, 0.38)
    c.setLineWidth(0.045)
    for x0, y0, x1, y1 in ((-0.24, 0.12, -0.42, 0.3), (-0.24, 0.22, -0.06, 0.42),
                           (-0.24, -0.02, -0.04, 0.14), (-0.24, -0.14, -0.4, 0.0)):
        c.line(x0, y0, x1, y1)
    c.ellipse(-0.06, -0.41, 0.32, -0.19, stroke=0, fill=1)  # a fish, belly up
    tail = c.beginPath()
    tail.moveTo(0.3, -0.3)
    tail.lineTo(0.46, -0.18)
    tail.lineTo(0.46, -0.42)
    tail.close()
    c.drawPath(tail, stroke=0, fill=1)
    c.setFillColorRGB(1, 1, 1)
    c.circle(0.02, -0.32, 0.03, stroke=0, fill=1)
    c.setFillColorRGB(0, 0, 0)


SYMBOLS: dict[str, Callable[[Any], None]] = {
    "GHS01": _bomb, "GHS02": _flame_symbol, "GHS03": _flame_over_circle,
    "GHS04": _gas_cylinder, "GHS05": _corrosion, "GHS06": _skull,
    "GHS07": _exclamation, "GHS08": _health, "GHS09": _environment,
}


def draw(canvas: Any, code: str, x: float, y: float, side: float, *,
         colour: bool = True) -> None:
    """The pictogram ``code`` with its square of ``side`` points set on a point, its
    bounding box (``side`` x sqrt 2 across) with the lower left at ``x``, ``y``."""
    symbol = SYMBOLS[code]
    half = side / math.sqrt(2)
    cx, cy = x + half, y + half
    border = side * BORDER
    inner = half - border * math.sqrt(2)
    canvas.saveState()
    canvas.translate(cx, cy)
    for h, fill in ((half, RED if colour else (0.0, 0.0, 0.0)), (inner, (1.0, 1.0, 1.0))):
        canvas.setFillColorRGB(*fill)
        diamond = canvas.beginPath()
        diamond.moveTo(0, h)
        diamond.lineTo(h, 0)
        diamond.lineTo(0, -h)
        diamond.lineTo(-h, 0)
        diamond.close()
        canvas.drawPath(diamond, stroke=0, fill=1)
    canvas.setFillColorRGB(0, 0, 0)
    canvas.setStrokeColorRGB(0, 0, 0)
    canvas.scale(inner, inner)
    symbol(canvas)
    canvas.restoreState()


def places(count: int, side: float, *,
           one_row: bool = False) -> tuple[float, float, list[tuple[float, float]]]:
    """Width, height and the lower-left corners (from the group's top left, so y is
    negative) of ``count`` pictograms of square ``side``: in one row, or (from two on,
    unless ``one_row``) in two staggered rows, the second nested between the first's
    points."""
    if count == 0:
        return 0.0, 0.0, []
    d = side * math.sqrt(2)
    if count == 1 or one_row:
        return count * d, d, [(i * d, -d) for i in range(count)]
    top = math.ceil(count / 2)
    spots = [(i * d, -d) for i in range(top)]
    spots += [(d / 2 + i * d, -1.5 * d) for i in range(count - top)]
    return max(x for x, _ in spots) + d, 1.5 * d, spots
