"""The equivalence volume from a recorded titration curve (volume against pH or mV).

Two independent estimates are made from the derivatives of the curve, and a third by
Gran's method where the chemistry allows it:

* the **second-derivative zero crossing** (the reported value): first differences
  dE/dV at the midpoints of successive volumes, second differences at the midpoints
  of those; the equivalence volume is where the second derivative changes sign
  around the steepest step, by linear interpolation between the two second-derivative
  points that bracket it;
* the **first-derivative maximum**, the vertex of the parabola through |dE/dV| at the
  steepest step and its two neighbours, kept as a cross-check;
* **Gran's method**, a straight-line extrapolation of a function of volume and pH that
  is linear in volume on one side of the equivalence point (see ``gran``).

Both derivative estimates find the inflection point of the curve, which for the
titrations of primary standards lies at the equivalence point within the resolution
of the volume increments. Rising curves (acid titrated with base) and falling curves
(base titrated with acid, or mV readings of a rising pH) are handled alike.

Pure computation: numpy is imported inside the functions that need it.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from typing import Any

import msgspec

from prepbook.chem.curve_files import PH_READING_RANGE, read_curve
from prepbook.errors import InvalidInput

MIN_POINTS = 5
"""Fewest points ``endpoint`` accepts: the second derivative around an interior maximum of
the first needs at least two first differences on each side of the steepest one's centre."""

MIN_GRAN_POINTS = 4
"""Fewest points a Gran line is fitted through, so that its straightness can be judged
(a choice of this program; common practice, no source)."""

GRAN_MIN_R_SQUARED = 0.99
"""Below this the Gran function is taken as not linear and no Gran estimate is given
(a choice of this program; common practice, no source)."""

# Share of the derivative estimate used by each Gran function (choices of this program,
# no source): before the endpoint, the buffer region where the weak-acid approximation
# holds to better than 0.1 % in a 0.1 mol/L titration; after it, far enough past the
# equivalence point that the excess titrant sets the pH.
_GRAN_BEFORE_WINDOW = (0.50, 0.95)
_GRAN_AFTER_START = 1.05

GRAN_REGIONS = ("weak-acid-before", "excess-acid-after", "excess-base-after")
"""``weak-acid-before``: weak acid titrated with strong base, V * 10^-pH before the
endpoint (Ka (Ve - V)); ``excess-acid-after``: any base titrated with strong acid,
(V0 + V) * 10^-pH after it (C_acid (V - Ve)); ``excess-base-after``: any acid titrated
with strong base, (V0 + V) * 10^(pH - pKw) after it (C_base (V - Ve))."""

_PKW_25C = 14.00


class Endpoint(msgspec.Struct, frozen=True):
    """The equivalence point found on a curve.

    ``equivalence_ml``: the second-derivative zero crossing, mL of titrant.
    ``reading_at_endpoint``: the reading (pH or mV) interpolated at that volume.
    ``gran_ml`` / ``gran_points``: Gran's estimate and the points fitted (None / 0 when it
    does not apply; ``notes`` says why). ``points``: points on the curve.
    ``first_derivative_ml``: the first-derivative maximum, the cross-check.
    """

    equivalence_ml: float
    method: str
    reading_at_endpoint: float | None
    gran_ml: float | None
    gran_points: int
    points: int
    notes: tuple[str, ...]
    first_derivative_ml: float | None = None


class GranFit(msgspec.Struct, frozen=True):
    """A Gran line: its x-intercept (``equivalence_ml``, None when the method does not fit),
    the function plotted, the points fitted, the straightness and the reasons."""

    equivalence_ml: float | None
    region: str
    function: str
    points: int
    r_squared: float | None
    notes: tuple[str, ...]


# ----------------------------------------------------------------------------- validation


def _as_floats(values: Sequence[float], what: str) -> list[float]:
    out = []
    for position, value in enumerate(values, start=1):
        try:
            number = float(value)
        except (TypeError, ValueError):
            raise InvalidInput(f"point {position}: {what} {value!r} is not a number") from None
        if not math.isfinite(number):
            raise InvalidInput(f"point {position}: {what} {value!r} is not a finite number")
        out.append(number)
    return out


def _check_kind(kind: str) -> str:
    if kind not in ("pH", "mV"):
        raise InvalidInput(f"reading kind must be 'pH' or 'mV', got {kind!r}")
    return kind


def validated_curve(
    volumes_ml: Sequence[float], readings: Sequence[float], kind: str, minimum: int
) -> tuple[list[float], list[float]]:
    """Both series as floats, or InvalidInput naming the first bad point (1-based).

    ``kind`` is "pH" or "mV"; ``minimum`` the fewest points accepted."""
    _check_kind(kind)
    volumes = _as_floats(volumes_ml, "volume")
    values = _as_floats(readings, kind)
    if len(volumes) != len(values):
        raise InvalidInput(f"{len(volumes)} volumes but {len(values)} readings; "
                           "give one reading per volume")
    if len(volumes) < minimum:
        raise InvalidInput(f"a curve needs at least {minimum} points, got {len(volumes)}")
    for position, volume in enumerate(volumes, start=1):
        if volume < 0:
            raise InvalidInput(f"point {position}: volume {volume:g} mL is negative")
        if position > 1 and volume <= volumes[position - 2]:
            raise InvalidInput(f"point {position}: volume {volume:g} mL does not exceed the "
                               f"previous {volumes[position - 2]:g} mL; volumes must "
                               "strictly increase")
    if kind == "pH":
        low, high = PH_READING_RANGE
        for position, value in enumerate(values, start=1):
            if not low <= value <= high:
                raise InvalidInput(f"point {position}: pH {value:g} is outside "
                                   f"{low:g}..{high:g}; are these readings mV?")
    return volumes, values


# ----------------------------------------------------------------------------- endpoint


def endpoint(
    volumes_ml: Sequence[float],
    readings: Sequence[float],
    *,
    kind: str = "pH",
    sample_ml: float | None = None,
    search_ml: tuple[float, float] | None = None,
) -> Endpoint:
    """The equivalence volume of a titration curve, by the derivative method.

    One inflection, from differences of successive readings: for noisy curves, uneven
    steps or several endpoints, ``prepbook.chem.inflections.find_endpoints`` is the
    robust finder (every inflection, each with its uncertainty).

    ``readings`` are pH or mV (``kind``) at each titrant volume; volumes strictly
    increase from zero or more. The steepest step is sought over the whole curve, or
    only between the volumes of ``search_ml`` (to pick the first endpoint of a
    carbonate curve rather than the steeper second). ``sample_ml`` (the volume in the
    vessel before titrant) lets Gran's method be applied after the endpoint of a
    falling pH curve; a rising pH curve is treated as a weak acid titrated with strong
    base (V * 10^-pH before the endpoint), which assumes one proton step before the
    endpoint (KHP, acetic acid). Gran is not applied to mV readings, nor within a
    search window; ``gran`` can be called directly for those.

    Refused (InvalidInput): fewer than ``MIN_POINTS`` points, volumes not strictly
    increasing or negative, non-finite values, and a curve with no inflection (flat,
    straight, or steepest at the end of the recorded range).
    """
    import numpy as np

    volumes, values = validated_curve(volumes_ml, readings, kind, MIN_POINTS)
    v = np.asarray(volumes)
    e = np.asarray(values)
    mid = (v[:-1] + v[1:]) / 2
    d1 = np.diff(e) / np.diff(v)
    mid2 = (mid[:-1] + mid[1:]) / 2
    d2 = np.diff(d1) / np.diff(mid)

    candidates = np.arange(len(d1))
    where = "the recorded range"
    if search_ml is not None:
        low_ml, high_ml = (float(x) for x in search_ml)
        if not (math.isfinite(low_ml) and math.isfinite(high_ml)) or low_ml >= high_ml:
            raise InvalidInput(f"search window {search_ml!r} is not a range of volumes from "
                               "low to high")
        candidates = candidates[(mid >= low_ml) & (mid <= high_ml)]
        where = f"the search window {low_ml:g}-{high_ml:g} mL"
        if len(candidates) < 3:
            raise InvalidInput(f"fewer than 4 points lie in {where}; widen it")
    slopes = np.abs(d1[candidates])
    peak = float(slopes.max())
    if peak == 0.0:
        raise InvalidInput(f"the readings do not change over {where}; no inflection")
    # First index of the maximum, so a straight line (all slopes equal) lands on an end.
    at = int(candidates[int(np.argmax(slopes))])
    if at in (int(candidates[0]), int(candidates[-1])):
        raise InvalidInput(f"the curve is steepest at the end of {where}: no inflection "
                           "inside it (record further past the endpoint, or widen the window)")
    # A real jump is much steeper than the curve at its ends; a straight or gently curved
    # line is not (factor 2: a heuristic of this program, no source).
    ends = max(float(slopes[0]), float(slopes[-1]))
    if peak < 2.0 * ends:
        raise InvalidInput(f"no inflection over {where}: the steepest step "
                           f"({peak:.3g} {kind}/mL) is less than twice as steep as the ends "
                           f"of the curve ({ends:.3g} {kind}/mL)")

    # Second-derivative zero crossing between the two second differences around the peak.
    a, b = at - 1, at
    da, db = float(d2[a]), float(d2[b])
    if da == db:
        second_ml = float(mid[at])
    else:
        second_ml = float(mid2[a] + (mid2[b] - mid2[a]) * da / (da - db))
    first_ml, first_how = _first_derivative_maximum(
        mid, np.abs(d1), at, int(candidates[0]), int(candidates[-1])
    )

    notes = [
        f"second-derivative zero crossing {second_ml:.3f} mL; first-derivative maximum "
        f"{first_ml:.3f} mL ({first_how})"
    ]
    step_ml = float(v[at + 1] - v[at])
    if abs(first_ml - second_ml) > step_ml / 2:
        notes.append(f"the two derivative estimates differ by {abs(first_ml - second_ml):.3f} "
                     f"mL, more than half the local increment ({step_ml:g} mL): record "
                     "smaller increments near the endpoint")
    if step_ml > 0.01 * second_ml:
        # 1 % of Ve: a threshold of this program (common practice, no source).
        notes.append(f"the increment across the steepest step is {step_ml:g} mL (over 1 % of "
                     "the equivalence volume); the derivative estimate is only as fine as "
                     "the increments: add smaller ones near the endpoint")
    rising_ph = (float(d1[at]) > 0) == (kind == "pH")

    gran_ml: float | None = None
    gran_points = 0
    if kind != "pH":
        notes.append("Gran's method not applied: it needs pH readings")
    elif search_ml is not None:
        notes.append("Gran's method not applied within a search window: its functions hold "
                     "for a single endpoint; call gran() with the region that applies")
    else:
        region = "weak-acid-before" if rising_ph else "excess-acid-after"
        fit = gran(volumes, values, region=region, equivalence_ml_estimate=second_ml,
                   sample_ml=sample_ml)
        gran_ml, gran_points = fit.equivalence_ml, fit.points
        notes.extend(fit.notes)

    return Endpoint(
        equivalence_ml=second_ml,
        method="second derivative",
        reading_at_endpoint=float(np.interp(second_ml, v, e)),
        gran_ml=gran_ml,
        gran_points=gran_points,
        points=len(volumes),
        notes=tuple(notes),
        first_derivative_ml=first_ml,
    )


def _first_derivative_maximum(
    mid: Any, slopes: Any, at: int, first: int, last: int
) -> tuple[float, str]:
    """The first-derivative maximum, as (mL, how it was found); ``slopes`` are |dE/dV| at
    the volumes ``mid``, steepest at index ``at``, searchable from ``first`` to ``last``.

    The parabola through the three steepest |dE/dV| has its vertex exactly where the
    second-derivative crossing is (the secant slope of a parabola equals its derivative
    at the midpoint), so it is no cross-check. The cross-check is a least-squares
    parabola through five |dE/dV| around the steepest; when five are not available, or
    that parabola does not peak among them, the three-point vertex is given and said.
    """
    import numpy as np

    if at - 2 >= first and at + 2 <= last:
        xs, ys = mid[at - 2:at + 3], slopes[at - 2:at + 3]
        curvature, linear, _ = (float(c) for c in np.polyfit(xs, ys, 2))
        if curvature < 0:
            vertex = -linear / (2 * curvature)
            if float(xs[0]) <= vertex <= float(xs[-1]):
                return vertex, "least-squares parabola through the five steepest differences"
    x0, x1, x2 = (float(x) for x in mid[at - 1:at + 2])
    y0, y1, y2 = (float(y) for y in slopes[at - 1:at + 2])
    numerator = (x1 - x0) ** 2 * (y1 - y2) - (x1 - x2) ** 2 * (y1 - y0)
    denominator = (x1 - x0) * (y1 - y2) - (x1 - x2) * (y1 - y0)
    vertex = x1 if denominator == 0 else x1 - 0.5 * numerator / denominator
    return vertex, ("parabola through the three steepest differences, the same as the "
                    "second-derivative result by construction")


# ----------------------------------------------------------------------------- Gran


def gran(
    volumes_ml: Sequence[float],
    ph: Sequence[float],
    *,
    region: str,
    equivalence_ml_estimate: float,
    sample_ml: float | None = None,
    pkw: float = _PKW_25C,
) -> GranFit:
    """Gran's method: a function of V and pH that is linear in V on one side of the
    equivalence point, fitted by least squares and extrapolated to zero.

    ``region`` is one of ``GRAN_REGIONS``; the points used are chosen from
    ``equivalence_ml_estimate`` (the derivative result). ``sample_ml`` (V0) is needed
    by the two "after" regions. Activities are ignored (10^-pH stands for [H+]), as in
    the textbook form of the method.

    The weak-acid function does not straighten a strong acid's curve; use
    ``excess-base-after`` for that. When the method does not fit (too few points, the
    wrong slope, not straight, an intercept inside the points used) the result has
    ``equivalence_ml`` None and a note saying why; a fitted value far from the
    derivative estimate is kept, with a note.
    """
    import numpy as np

    functions = {
        "weak-acid-before": "V * 10^-pH",
        "excess-acid-after": "(V0 + V) * 10^-pH",
        "excess-base-after": "(V0 + V) * 10^(pH - pKw)",
    }
    if region not in functions:
        raise InvalidInput(f"Gran region must be one of {', '.join(GRAN_REGIONS)}; "
                           f"got {region!r}")
    function = functions[region]
    volumes, values = validated_curve(volumes_ml, ph, "pH", 2)
    estimate = float(equivalence_ml_estimate)
    if not math.isfinite(estimate) or estimate <= 0:
        raise InvalidInput(f"equivalence volume estimate must be positive, got "
                           f"{equivalence_ml_estimate!r}")

    def refused(reason: str, points: int = 0) -> GranFit:
        return GranFit(None, region, function, points, None, (f"Gran's method not applied: "
                                                              f"{reason}",))

    v = np.asarray(volumes)
    p = np.asarray(values)
    v0 = 0.0
    if region != "weak-acid-before":
        if sample_ml is None:
            return refused(f"{function} needs the sample volume before titration (V0)")
        v0 = float(sample_ml)
        if not math.isfinite(v0) or v0 <= 0:
            raise InvalidInput(f"sample volume must be a positive number of mL, got "
                               f"{sample_ml!r}")
    if region == "weak-acid-before":
        low, high = (f * estimate for f in _GRAN_BEFORE_WINDOW)
        mask = (v >= low) & (v <= high)
        span = f"{low:.2f}-{high:.2f} mL"
    else:
        low = _GRAN_AFTER_START * estimate
        mask = v >= low
        span = f"beyond {low:.2f} mL"
    x, y_ph = v[mask], p[mask]
    count = int(mask.sum())
    if count < MIN_GRAN_POINTS:
        return refused(f"{count} points lie {span}; at least {MIN_GRAN_POINTS} are needed",
                       count)
    if region == "weak-acid-before":
        y = x * 10.0 ** (-y_ph)
    elif region == "excess-acid-after":
        y = (v0 + x) * 10.0 ** (-y_ph)
    else:
        y = (v0 + x) * 10.0 ** (y_ph - float(pkw))
    # Scale to order one so the fit and its straightness are judged on well-sized numbers.
    scale = float(np.max(np.abs(y)))
    if scale == 0.0:
        return refused(f"{function} is zero at every point {span}", count)
    y = y / scale
    slope, intercept = (float(c) for c in np.polyfit(x, y, 1))
    ss_tot = float(np.sum((y - y.mean()) ** 2))
    expected_sign = -1.0 if region == "weak-acid-before" else 1.0
    if ss_tot == 0.0 or slope * expected_sign <= 0:
        return refused(f"{function} does not {'fall' if expected_sign < 0 else 'rise'} "
                       f"with volume {span}", count)
    ss_res = float(np.sum((y - (slope * x + intercept)) ** 2))
    r_squared = 1.0 - ss_res / ss_tot
    if r_squared < GRAN_MIN_R_SQUARED:
        return GranFit(None, region, function, count, r_squared,
                       (f"Gran's method not applied: {function} is not straight {span} "
                        f"(r^2 {r_squared:.4f} < {GRAN_MIN_R_SQUARED})",))
    crossing = -intercept / slope
    inside = crossing < float(x.max()) if expected_sign < 0 else crossing > float(x.min())
    if inside:
        return GranFit(None, region, function, count, r_squared,
                       (f"Gran's method not applied: the line meets zero at {crossing:.3f} "
                        f"mL, inside the points it was fitted to ({span})",))
    notes = [f"Gran ({function}, {count} points {span}, r^2 {r_squared:.5f}): "
             f"{crossing:.3f} mL"]
    if abs(crossing - estimate) > 0.02 * estimate:
        notes.append(f"Gran and derivative estimates differ by {abs(crossing - estimate):.3f} "
                     "mL (more than 2 %): check the curve")
    return GranFit(crossing, region, function, count, r_squared, tuple(notes))


# ----------------------------------------------------------------------------- CSV


def read_curve_csv(text: str) -> tuple[list[float], list[float], str]:
    """Volumes (mL), readings and their kind from CSV text exported by a meter.

    ``prepbook.chem.curve_files.read_curve`` does the reading (a preamble before the
    header, either column order named by the headers, tab / ";" / "," separators,
    decimal commas); this keeps the older tuple shape. Errors name the line (1-based).
    """
    curve = read_curve(text)
    return list(curve.volumes_ml), list(curve.readings), curve.kind
