"""Every inflection of a recorded titration curve, each with its own uncertainty.

Why: a real curve is noisy and its volume steps are uneven (a meter doses finely where
the curve is steep); differences of successive readings magnify the noise, and a curve
with two endpoints (carbonate titrated with a strong acid) has two inflections, both
wanted.

How, in two passes:

1. **Detection.** The readings are put on an even volume grid (linear interpolation
   between recorded points, ``numpy.interp``, on a grid as fine as the lower quartile
   of the recorded steps) and differentiated by a Savitzky-Golay filter
   (``scipy.signal.savgol_filter``, quadratic, over ``smoothing_ml``: by default
   ``DEFAULT_SPAN_STEPS`` of the steps as recorded where the reading changes, the
   median of the steps weighted by the change of reading across each. A meter doses
   finely where the curve is steep: the plain median step of a curve logged every
   0.5 mL with 0.05 mL around its jump made the span wider than the jump's
   surroundings, and a curve stopped soon after its jump was refused). The peaks of
   |dE/dV| are found with ``scipy.signal.find_peaks``; a peak counts when its
   prominence stands clear of the noise of that derivative (``NOISE_FACTOR`` times its
   standard deviation, the reading noise being estimated from the second differences
   of the readings) and of the filter's own ripple (``MIN_RELATIVE_PROMINENCE`` of the
   steepest peak), and lies at least half a span from either end of the curve.
2. **Refinement** on the recorded points, not the grid: a cubic is fitted by weighted
   least squares (``numpy.polyfit``) around the peak, and the inflection is where its
   second derivative is zero, -c2 / (3 c3). The window is re-centred on the result and
   the fit repeated (``REFINE_PASSES`` times). Its standard uncertainty combines the
   fit's (the covariance of c2 and c3 carried through -c2/(3 c3) to first order) with
   the resolution of the recorded steps there (the local step / sqrt(12)).

   The window follows the jump, not the filter. Its half-width is the jump's own width:
   the peak's full width at half height with the filter's share taken out (a quadratic
   Savitzky-Golay slope over a span L answers a sharp step with a peak L / sqrt(2)
   wide; the widths are subtracted in quadrature, an approximation), and at least the
   distance that brings ``FIT_POINTS`` recorded points in. The points are weighted by
   the tricube of locally weighted regression (LOESS), 1 at the centre falling smoothly
   to 0 at the edges, so a point entering or leaving the window as it is re-centred
   moves the result by little rather than by a step. Why: at 0.5 mL steps a sharp jump
   lies between two readings and the smoothed peak is as wide as the span; a window of
   that width with hard edges put the result wherever the edges happened to fall among
   the readings (0.1-0.2 mL off on modelled curves; tests/benchmarks/endpoint_bench.py).
   The span therefore decides which peaks are found, hardly where they lie.

The inflection is the equivalence point for symmetric jumps (strong-strong) and lies
close to it for the usual weak acid and base standards; the benchmark in
tests/benchmarks/endpoint_bench.py measures how close on modelled curves.

Gran's method (``prepbook.chem.curves.gran``) is applied to the last inflection where
its chemistry holds and compared: when the two differ by more than the tolerance the
result says so in ``gran_agrees`` and a note.

Pure computation: numpy and scipy are imported inside the functions.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from typing import Any

import msgspec

from prepbook.chem.curves import gran, validated_curve
from prepbook.errors import InvalidInput

MIN_CURVE_POINTS = 9
"""Fewest points ``find_endpoints`` accepts: a cubic through at least seven around the
inflection, and one on each side beyond it."""

DEFAULT_SPAN_STEPS = 7
"""Default span of the derivative filter, in recorded volume steps where the reading
changes (for even steps, the step): it sets which peaks stand clear of the noise, not
the width of the fit that places them (a choice of this program)."""

FIT_POINTS = 8
"""Fewest recorded points with weight in the cubic's window: a cubic and four degrees
of freedom for its residual, about four readings on each side of the inflection (a
choice of this program, from the benchmark's modelled curves)."""

FILTER_PEAK_WIDTH = 1.0 / math.sqrt(2.0)
"""Full width at half height of the smoothed slope of a sharp step, per span: the
quadratic Savitzky-Golay slope is the least-squares line's, whose response to a unit
step at c within the span L is (L^2/4 - c^2)/2, half its top at c = L/(2 sqrt 2)
(worked by hand)."""

NOISE_FACTOR = 12.0
"""A peak of |dE/dV| counts when its prominence is at least this many standard
deviations of the smoothed derivative's noise: among a few hundred points noise alone
makes peaks of five or more (a choice of this program, no source)."""

MIN_RELATIVE_PROMINENCE = 0.05
"""...and at least this share of the steepest peak, so the ripple that interpolation and
filtering leave on a noise-free curve is not an endpoint (a choice of this program)."""

REFINE_PASSES = 3
"""Times the cubic's window is re-centred on the inflection it found."""

GRAN_TOLERANCE_FRACTION = 0.005
"""Gran's estimate and the inflection are said to disagree beyond 0.5 % of the
equivalence volume, or twice the inflection's standard uncertainty if that is larger
(a choice of this program; common practice, no source)."""

_MAX_GRID = 20000  # grid points at most, whatever the steps


class Inflection(msgspec.Struct, frozen=True):
    """One inflection: the volume (mL), its standard uncertainty (mL), the reading
    interpolated there, the slope there (reading units per mL, signed), and the number
    of recorded points the cubic was fitted to."""

    volume_ml: float
    u_ml: float
    reading: float
    slope: float
    points_fitted: int


class EndpointReport(msgspec.Struct, frozen=True):
    """Every inflection found (in order of volume) and how they were found.

    ``noise``: the reading noise estimated from the curve (standard deviation, reading
    units). ``gran_ml``: Gran's estimate for the last inflection (None when it does not
    apply; ``notes`` say why); ``gran_agrees``: whether it matches that inflection
    within ``gran_tolerance_ml`` (None without a Gran estimate).
    """

    inflections: tuple[Inflection, ...]
    kind: str
    points: int
    window_ml: tuple[float, float] | None
    smoothing_ml: float
    noise: float
    gran_ml: float | None
    gran_agrees: bool | None
    gran_tolerance_ml: float | None
    notes: tuple[str, ...]
    gran_points: int = 0  # points Gran's line was fitted through (0: not applied)


def _window(v: Any, e: Any, window_ml: tuple[float, float] | None) -> tuple[Any, Any]:
    if window_ml is None:
        return v, e
    low, high = (float(x) for x in window_ml)
    if not (math.isfinite(low) and math.isfinite(high)) or low >= high:
        raise InvalidInput(f"volume window {window_ml!r} is not a range of volumes from low "
                           "to high")
    keep = (v >= low) & (v <= high)
    if int(keep.sum()) < MIN_CURVE_POINTS:
        raise InvalidInput(f"{int(keep.sum())} points lie in the window {low:g}-{high:g} mL; "
                           f"at least {MIN_CURVE_POINTS} are needed: widen it")
    return v[keep], e[keep]


def reading_noise(readings: Sequence[float]) -> float:
    """Standard deviation of the noise on a smooth series, from its second differences:
    for independent noise of SD s they have SD s sqrt(6); the median absolute value
    (times 1.4826 for a normal distribution) keeps the few points of a jump from
    counting as noise."""
    import numpy as np

    d2 = np.diff(np.asarray(readings, dtype=float), 2)
    if len(d2) == 0:
        return 0.0
    return float(1.4826 * np.median(np.abs(d2)) / math.sqrt(6.0))


def _cubic_inflection(v: Any, e: Any, centre: float, half_width: float
                      ) -> tuple[float, float, int] | None:
    """(inflection, its fit uncertainty, points with weight) of a cubic fitted within
    centre +/- half_width with tricube weights, or None when the cubic has none inside
    its window."""
    import numpy as np

    for _ in range(REFINE_PASSES):
        keep = np.abs(v - centre) < half_width
        x, y = v[keep] - centre, e[keep]
        if len(x) < 7:
            return None
        weight = (1.0 - (np.abs(x) / half_width) ** 3) ** 3
        # polyfit's w multiplies the residuals: the square root of the weight.
        coeffs, cov = np.polyfit(x, y, 3, w=np.sqrt(weight), cov="unscaled")
        c3, c2 = float(coeffs[0]), float(coeffs[1])
        if c3 == 0.0:
            return None
        at = -c2 / (3.0 * c3)
        if abs(at) > half_width:
            return None
        residual = y - np.polyval(coeffs, x)
        dof = len(x) - 4
        s2 = float(weight @ residual ** 2) / dof if dof > 0 else 0.0
        grad = np.array([c2 / (3.0 * c3 * c3), -1.0 / (3.0 * c3)])
        var = float(grad @ (np.asarray(cov)[:2, :2] * s2) @ grad)
        centre = centre + at
    return centre, math.sqrt(max(var, 0.0)), int(len(x))


def _step_where_it_changes(steps: Any, changes: Any, fallback: float) -> float:
    """The recorded volume step typical of where the reading changes: the median of the
    steps weighted by the change of reading across each (``fallback`` on a flat curve).
    A meter doses finely where the curve is steep, and a hand-logged curve is even."""
    import numpy as np

    order = np.argsort(steps, kind="stable")
    cumulative = np.cumsum(changes[order])
    if not cumulative[-1] > 0:
        return fallback
    return float(steps[order][int(np.searchsorted(cumulative, cumulative[-1] / 2.0))])


def find_endpoints(
    volumes_ml: Sequence[float],
    readings: Sequence[float],
    *,
    kind: str = "pH",
    window_ml: tuple[float, float] | None = None,
    smoothing_ml: float | None = None,
    sample_ml: float | None = None,
    gran_tolerance_fraction: float = GRAN_TOLERANCE_FRACTION,
) -> EndpointReport:
    """Every inflection of a titration curve (volume against pH or mV), in order.

    ``window_ml`` (low, high) limits the search to those volumes. ``smoothing_ml``
    sets the span of the derivative filter that finds the inflections (default
    ``DEFAULT_SPAN_STEPS`` volume steps as recorded where the reading changes): wider
    for noisier curves, narrower to separate close endpoints; the fit that places each
    one follows the jump's own width whatever the span. ``sample_ml`` (the volume in
    the vessel before titrant) lets Gran's method be applied after the last endpoint.
    Rising and falling curves, pH or mV, are handled alike.

    Refused (InvalidInput): fewer than ``MIN_CURVE_POINTS`` points (in the window),
    volumes not strictly increasing, non-finite values, and a curve with no inflection.
    """
    import numpy as np
    from scipy.signal import find_peaks, peak_widths, savgol_filter

    volumes, values = validated_curve(volumes_ml, readings, kind, MIN_CURVE_POINTS)
    v, e = _window(np.asarray(volumes), np.asarray(values), window_ml)
    steps = np.diff(v)
    median_step = float(np.median(steps))
    jump_step = _step_where_it_changes(steps, np.abs(np.diff(e)), median_step)
    span = DEFAULT_SPAN_STEPS * jump_step if smoothing_ml is None else float(smoothing_ml)
    if not math.isfinite(span) or span <= 0:
        raise InvalidInput(f"smoothing span {smoothing_ml!r} mL must be a positive number")
    grid_step = max(min(float(np.percentile(steps, 25)), jump_step),
                    (v[-1] - v[0]) / _MAX_GRID)
    grid = np.arange(v[0], v[-1] + grid_step / 2, grid_step)
    on_grid = np.interp(grid, v, e)
    length = max(5, int(round(span / grid_step)) | 1)
    if length > len(grid):
        raise InvalidInput(f"the smoothing span {span:g} mL is wider than the curve "
                           f"({v[-1] - v[0]:g} mL)")
    slope = savgol_filter(on_grid, length, 2, deriv=1, delta=grid_step)
    steepness = np.abs(slope)

    noise = reading_noise(e)
    raw_in_span = max(3.0, span / median_step)
    slope_noise = noise / (math.sqrt(raw_in_span / 12.0) * span)
    prominence = max(NOISE_FACTOR * slope_noise,
                     MIN_RELATIVE_PROMINENCE * float(steepness.max()))
    # Within half a span of either end the filter extrapolates: peaks are sought, and
    # their prominence judged, only inside.
    margin = length // 2
    inner = steepness[margin:len(steepness) - margin]
    peaks, _ = find_peaks(inner, prominence=prominence if prominence > 0 else None)
    peaks = peaks + margin
    where = ("the recorded range" if window_ml is None
             else f"the window {float(window_ml[0]):g}-{float(window_ml[1]):g} mL")
    if len(peaks) == 0 or float(steepness.max()) == 0.0:
        raise InvalidInput(f"no inflection over {where}: the curve has no step that stands "
                           f"clear of its noise ({noise:.3g} {kind})")
    widths = peak_widths(steepness, peaks, rel_height=0.5)[0] * grid_step
    filter_width = FILTER_PEAK_WIDTH * length * grid_step

    found: list[Inflection] = []
    notes: list[str] = []
    for peak, width in zip(peaks, widths, strict=True):
        centre = float(grid[peak])
        own_width = math.sqrt(max(float(width) ** 2 - filter_width ** 2, 0.0))
        # Strictly inside the window carry weight: out to the next point beyond them.
        nearby = np.sort(np.abs(v - centre))
        half_width = max(own_width, float(nearby[min(FIT_POINTS, len(nearby) - 1)]))
        fitted = _cubic_inflection(v, e, centre, half_width)
        local_step = float(steps[min(int(np.searchsorted(v, centre)), len(steps) - 1)])
        if fitted is None:
            at, u_fit, count = centre, span / 2.0, 0
            notes.append(f"the inflection near {centre:.3f} mL is the derivative peak: no "
                         "cubic fitted its points; its uncertainty is half the smoothing span")
        else:
            at, u_fit, count = fitted
        if not v[0] < at < v[-1]:
            continue
        found.append(Inflection(
            volume_ml=at,
            u_ml=math.hypot(u_fit, local_step / math.sqrt(12.0)),
            reading=float(np.interp(at, v, e)),
            slope=float(np.interp(at, grid, slope)),
            points_fitted=count,
        ))
    if not found:
        raise InvalidInput(f"no inflection inside {where}: record further past the endpoint")
    found.sort(key=lambda item: item.volume_ml)
    notes.insert(0, f"{len(found)} inflection(s); derivative smoothed over {span:.3g} mL; "
                    f"reading noise {noise:.3g} {kind}")

    gran_ml, agrees, tolerance, gran_points = _gran_check(
        volumes, values, kind, found, window_ml, sample_ml, gran_tolerance_fraction, notes)
    return EndpointReport(
        inflections=tuple(found), kind=kind, points=len(v),
        window_ml=None if window_ml is None else (float(window_ml[0]), float(window_ml[1])),
        smoothing_ml=span, noise=noise, gran_ml=gran_ml, gran_agrees=agrees,
        gran_tolerance_ml=tolerance, notes=tuple(notes), gran_points=gran_points,
    )


def _gran_check(
    volumes: list[float], values: list[float], kind: str, found: list[Inflection],
    window_ml: tuple[float, float] | None, sample_ml: float | None,
    tolerance_fraction: float, notes: list[str],
) -> tuple[float | None, bool | None, float | None, int]:
    """Gran's estimate for the last inflection, whether it agrees with it, the tolerance
    and the points fitted."""
    if kind != "pH":
        notes.append("Gran's method not applied: it needs pH readings")
        return None, None, None, 0
    if window_ml is not None:
        notes.append("Gran's method not applied within a volume window: its functions "
                      "hold over the whole curve")
        return None, None, None, 0
    last = found[-1]
    rising = last.slope > 0
    if rising and len(found) == 1:
        region = "weak-acid-before"
    else:
        region = "excess-base-after" if rising else "excess-acid-after"
    fit = gran(volumes, values, region=region, equivalence_ml_estimate=last.volume_ml,
               sample_ml=sample_ml)
    notes.extend(note for note in fit.notes if "differ by" not in note)
    if fit.equivalence_ml is None:
        return None, None, None, 0
    tolerance = compare_tolerance_ml(last.volume_ml, last.u_ml, tolerance_fraction)
    difference = abs(fit.equivalence_ml - last.volume_ml)
    agrees = difference <= tolerance
    if not agrees:
        notes.append(f"Gran ({fit.equivalence_ml:.3f} mL) and the inflection "
                     f"({last.volume_ml:.3f} mL) disagree by {difference:.3f} mL, more than "
                     f"{tolerance:.3f} mL: check the curve and the sample volume")
    return fit.equivalence_ml, agrees, tolerance, fit.points


def compare_tolerance_ml(volume_ml: float, u_ml: float,
                         fraction: float = GRAN_TOLERANCE_FRACTION) -> float:
    """How far apart two estimates of one endpoint may lie and still agree: ``fraction``
    of the volume, or twice the standard uncertainty ``u_ml`` if that is larger."""
    share = float(fraction)
    if not math.isfinite(share) or share < 0:
        raise InvalidInput(f"tolerance {fraction!r} must be a fraction >= 0")
    return max(share * abs(float(volume_ml)), 2.0 * float(u_ml))
