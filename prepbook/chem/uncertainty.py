"""GUM uncertainty budgets (first-order propagation with the ``uncertainties`` library).

Why: a titrant's normality is reported with its expanded uncertainty so the results
calculated from it can carry it on (EURACHEM/CITAC CG4, 3rd ed., Example A2 for a
direct standardization, A3 for a secondary one).

:func:`propagate` evaluates any model of independent input quantities: each input with
a non-zero standard uncertainty becomes a ``uncertainties`` variable, the model is
evaluated once, and each budget line's contribution |dy/dx_i| u(x_i) is read from
``error_components()``. The combined standard uncertainty is their root sum of
squares; U = k u with k = 2 (about 95 % coverage, CG4 section 8). ``share_percent`` is
each line's share of the combined *variance*, so the shares add up to 100.

The helpers turn instrument specifications into standard uncertainties the way CG4
Example A2 does:

- balance linearity +/- a (rectangular, a/sqrt(3)), counted once per weighing, two for a
  mass by difference (tare and gross);
- burette tolerance +/- a (triangular, a/sqrt(6)) and a temperature range +/- dT with the
  volume expansion coefficient of dilute aqueous solutions 2.1e-4 /C (rectangular,
  V*gamma*dT/sqrt(3)), combined in quadrature.

With A2's inputs (+/- 0.15 mg; 20 mL burette +/- 0.03 mL; +/- 3 C at about 19 mL) the
helpers give 0.12 mg for the mass (the guide, rounding 0.087 mg to 0.09 mg before
combining, prints 0.13 mg), 0.012 mL for calibration and 0.0069 mL for temperature
(the guide prints 0.006 mL), hence 0.014 mL for the volume (the guide: 0.013 mL).
"""

from __future__ import annotations

import math
import statistics
from collections.abc import Callable, Sequence
from typing import Any

import msgspec

from prepbook.chem.corrections import EXPANSION_PER_C
from prepbook.errors import InvalidInput

COVERAGE_FACTOR = 2.0  # CG4: k = 2 for about 95 % coverage


class InputQuantity(msgspec.Struct, frozen=True):
    """One input of a measurement model with its standard uncertainty."""

    quantity: str  # words, e.g. "mass of primary standard"
    symbol: str  # e.g. "m"
    value: float
    unit: str
    u: float  # standard uncertainty, same unit as value


class BudgetLine(msgspec.Struct, frozen=True):
    """One row of an uncertainty budget."""

    quantity: str
    symbol: str
    value: float
    unit: str
    u: float
    u_relative: float | None  # u/|value|; None when the value is zero (e.g. a zero blank)
    contribution: float  # |dN/dx| * u, in the unit of the result (eq/L)
    share_percent: float  # share of the combined variance
    missing: str | None = None  # why a term that belongs here was not evaluated


class MissingTerm(msgspec.Struct, frozen=True):
    """A term the budget should hold but could not evaluate, and why. It is kept as a
    budget line (zero contribution, ``missing`` set) so a table or an export of the
    budget shows the gap instead of a smaller uncertainty that looks complete."""

    quantity: str
    symbol: str
    value: float  # its value in the model (1 for a factor such as f_rep)
    unit: str
    reason: str


REPEATABILITY_MISSING = MissingTerm(
    "repeatability", "f_rep", 1.0, "1",
    "one replicate and no validated repeatability given: the combined uncertainty "
    "lacks this term")


class UncertaintyResult(msgspec.Struct, frozen=True):
    """Combined and expanded uncertainty of a result, with its budget."""

    value: float
    u: float
    U: float
    k: float
    u_relative: float
    budget: tuple[BudgetLine, ...]
    notes: tuple[str, ...] = ()  # what the budget assumed or left out, in words

    @property
    def missing(self) -> tuple[str, ...]:
        """Symbols of the terms the budget lacks (lines with ``missing`` set)."""
        return tuple(line.symbol for line in self.budget if line.missing is not None)

    @property
    def complete(self) -> bool:
        """True when no term is missing."""
        return not self.missing


def _check_u(name: str, u: float) -> float:
    if isinstance(u, bool) or not isinstance(u, (int, float)) or not math.isfinite(u) or u < 0:
        raise InvalidInput(f"standard uncertainty of {name} ({u!r}) must be a number >= 0")
    return float(u)


def mass_u_from_balance(linearity_g: float, weighings: int = 2) -> float:
    """Standard u of a net mass from the balance linearity half-width (rectangular),
    counted once per weighing (EURACHEM/CITAC CG4 Example A2: twice, tare and gross)."""
    a = _check_u("balance linearity", linearity_g)
    if isinstance(weighings, bool) or not isinstance(weighings, int) or weighings < 1:
        raise InvalidInput(f"number of weighings {weighings!r} must be a whole number >= 1")
    return math.sqrt(weighings) * a / math.sqrt(3.0)


def volume_u_from_burette(
    tolerance_ml: float,
    volume_ml: float,
    temperature_range_c: float = 3.0,
    expansion_per_c: float = EXPANSION_PER_C,
) -> float:
    """Standard u of a delivered volume: calibration tolerance as triangular (a/sqrt 6)
    and a temperature range as rectangular (V*gamma*dT/sqrt 3), CG4 Example A2."""
    tol = _check_u("burette tolerance", tolerance_ml)
    dt = _check_u("temperature range", temperature_range_c)
    gamma = _check_u("expansion coefficient", expansion_per_c)
    if isinstance(volume_ml, bool) or not isinstance(volume_ml, (int, float)) or not (
        math.isfinite(volume_ml) and volume_ml > 0
    ):
        raise InvalidInput(f"volume {volume_ml!r} mL must be a positive number")
    calibration = tol / math.sqrt(6.0)
    temperature = volume_ml * gamma * dt / math.sqrt(3.0)
    return math.hypot(calibration, temperature)


def _ufloat() -> Callable[..., Any]:
    """``uncertainties.ufloat``, imported without numpy when numpy is not loaded yet.

    Why: ``uncertainties`` imports numpy whenever it is installed (pandas brings it),
    only to count numpy's scalar types as constants and for its correlated-variables
    helpers. Neither is used here: every value handed to it is a Python float, and
    numpy's scalars are registered as ``numbers.Number``, which it already counts. The
    import of numpy alone costs more than the rest of ``prepbook calc`` together, so
    when numpy is not loaded yet (a short command) the library is imported with numpy
    marked absent, which its own optional-numpy support handles, and the mark is
    removed at once: numpy stays importable for anything later in the process. With
    another thread running, or numpy or the library already loaded, it is a plain
    import. The propagation is the same either way (tests/chem/test_uncertainty_import.py
    compares the two).
    """
    import sys

    if "uncertainties" in sys.modules or "numpy" in sys.modules:
        from uncertainties import ufloat

        return ufloat
    import threading

    if threading.active_count() > 1:  # another thread might import numpy meanwhile
        from uncertainties import ufloat

        return ufloat
    sys.modules["numpy"] = None  # type: ignore[assignment]  # "import numpy" raises ImportError
    try:
        from uncertainties import ufloat
    finally:
        if sys.modules.get("numpy", 0) is None:
            del sys.modules["numpy"]
    return ufloat


def load_library() -> None:
    """Import the propagation library now, the way ``propagate`` will: a service does it
    before it takes the lab's writer lock rather than in the middle of a write."""
    _ufloat()


def propagate(
    model: Callable[..., Any],
    inputs: Sequence[InputQuantity],
    *,
    k: float = COVERAGE_FACTOR,
    report_value: float | None = None,
    notes: Sequence[str] = (),
    missing: Sequence[MissingTerm] = (),
) -> UncertaintyResult:
    """Evaluate ``model(*values)`` with first-order GUM propagation.

    ``report_value`` lets the caller report a value computed otherwise (the mean of
    replicate results) with the *relative* uncertainty found at the model's point;
    contributions are scaled the same way. ``missing`` terms are appended to the budget
    as lines with ``missing`` set and nothing contributed, and named in the notes.
    """
    ufloat = _ufloat()

    args: list[Any] = []
    variables: list[Any] = []
    for q in inputs:
        u = _check_u(q.quantity, q.u)
        if u > 0:
            var = ufloat(q.value, u, tag=q.symbol)
            args.append(var)
            variables.append(var)
        else:  # a zero-u ufloat warns and adds nothing: pass the plain value
            args.append(float(q.value))
            variables.append(None)
    y = model(*args)
    y_value = float(getattr(y, "nominal_value", y))
    if y_value == 0 or not math.isfinite(y_value):
        raise InvalidInput("the measurement model gives no usable value")
    components = y.error_components() if hasattr(y, "error_components") else {}
    scale = 1.0 if report_value is None else float(report_value) / y_value
    contributions = [
        abs(float(components.get(var, 0.0))) * abs(scale) if var is not None else 0.0
        for var in variables
    ]
    u_c = math.sqrt(sum(c * c for c in contributions))
    value = y_value * scale
    budget = tuple(
        BudgetLine(
            quantity=q.quantity,
            symbol=q.symbol,
            value=float(q.value),
            unit=q.unit,
            u=float(q.u),
            u_relative=(float(q.u) / abs(q.value)) if q.value != 0 else None,
            contribution=c,
            share_percent=(100.0 * c * c / (u_c * u_c)) if u_c > 0 else 0.0,
        )
        for q, c in zip(inputs, contributions, strict=True)
    ) + tuple(
        BudgetLine(quantity=term.quantity, symbol=term.symbol, value=term.value,
                   unit=term.unit, u=0.0, u_relative=None, contribution=0.0,
                   share_percent=0.0, missing=term.reason)
        for term in missing
    )
    notes = tuple(notes) + tuple(f"{term.quantity} missing from the budget: {term.reason}"
                                 for term in missing)
    return UncertaintyResult(
        value=value,
        u=u_c,
        U=k * u_c,
        k=k,
        u_relative=u_c / abs(value),
        budget=budget,
        notes=tuple(notes),
    )


# ----------------------------------------------------------------------------- repeatability


class RepeatabilityTerm(msgspec.Struct, frozen=True):
    """The repeatability line of a budget: the input (None when it cannot be
    evaluated), the note saying where it came from, and the missing term otherwise."""

    line: InputQuantity | None
    notes: tuple[str, ...]
    missing: tuple[MissingTerm, ...]


def repeatability_term(u_rel_validated: float | None,
                       replicate_results: Sequence[float]) -> RepeatabilityTerm:
    """The repeatability factor f_rep = 1 of a budget, with its relative standard
    uncertainty.

    A validated repeatability (relative SD of one result, from a method validation or
    the spec) is used when given, whatever the number of replicates: CG4 Example A2
    takes 0.0005 from its validation. Otherwise the included replicate results give
    s / (mean sqrt(n)), the standard uncertainty of their mean; from one result that
    cannot be estimated and the term is reported missing (``REPEATABILITY_MISSING``).
    """
    if u_rel_validated is not None:
        u = _check_u("relative repeatability", u_rel_validated)
        return RepeatabilityTerm(InputQuantity("repeatability", "f_rep", 1.0, "1", u),
                                 (f"repeatability: the validated relative SD {u:g}",), ())
    values = [float(v) for v in replicate_results]
    if len(values) < 2:
        return RepeatabilityTerm(None, (), (REPEATABILITY_MISSING,))
    u = statistics.stdev(values) / (statistics.fmean(values) * math.sqrt(len(values)))
    return RepeatabilityTerm(
        InputQuantity("repeatability", "f_rep", 1.0, "1", u),
        (f"repeatability from the {len(values)} included replicates: s/(mean sqrt(n))",), ())


# ----------------------------------------------------------------------------- secondary


REFERENCE_U_MISSING_REASON = (
    "no uncertainty of the reference's normality is on record or given: what it passes "
    "on is unknown")


def secondary_budget(
    reference_normality: float,
    u_reference_normality: float | None,
    aliquot_ml: float,
    volume_ml: float,
    *,
    pipette_tolerance_ml: float,
    burette_tolerance_ml: float,
    temperature_range_c: float = 3.0,
    **rest: Any,
) -> UncertaintyResult:
    """Budget of a secondary standardization from the glassware's tolerances: the
    pipette that delivers the aliquot and the burette that measures the titrant each
    count their tolerance (triangular) and the temperature range (rectangular, dilute
    aqueous expansion), as ``volume_u_from_burette`` does after CG4 Example A2; the
    rest (``rest``: its keyword arguments) is ``secondary_budget_from_u``'s."""
    for name, number in (("aliquot (mL)", aliquot_ml), ("titrant volume (mL)", volume_ml)):
        _check_positive(name, number)
    return secondary_budget_from_u(
        reference_normality, u_reference_normality, aliquot_ml,
        volume_u_from_burette(pipette_tolerance_ml, aliquot_ml, temperature_range_c),
        volume_ml, volume_u_from_burette(burette_tolerance_ml, volume_ml, temperature_range_c),
        **rest)


def _check_positive(name: str, number: float) -> float:
    if isinstance(number, bool) or not isinstance(number, (int, float)) or not (
            math.isfinite(number) and number > 0):
        raise InvalidInput(f"{name} {number!r} must be a positive number")
    return float(number)


def secondary_budget_from_u(
    reference_normality: float,
    u_reference_normality: float | None,
    aliquot_ml: float,
    u_aliquot_ml: float,
    volume_ml: float,
    u_volume_ml: float,
    *,
    u_rel_repeatability: float | None = None,
    replicate_normalities: Sequence[float] = (),
    blank_ml: float = 0.0,
    u_blank_ml: float = 0.0,
    k: float = COVERAGE_FACTOR,
    report_value: float | None = None,
    notes: Sequence[str] = (),
) -> UncertaintyResult:
    """Budget of a secondary standardization, N = N_ref V_aliquot f_rep / (V - V_blank),
    from the standard uncertainty of each input.

    The reference solution's normality carries its own standard uncertainty
    ``u_reference_normality`` (from its record) into the result; None (a record without
    one) keeps it as a missing line instead of a zero. Repeatability is
    ``repeatability_term``'s (missing with one replicate and no validated value).
    ``aliquot_ml`` and ``volume_ml`` are the (mean) aliquot and titrant volumes;
    ``report_value`` and ``notes`` are ``propagate``'s.

    Because the model is a product, the reference's relative uncertainty enters the
    result's in quadrature with sensitivity one: the inherited relative uncertainty is
    never below the reference's.
    """
    n_ref = _check_positive("reference normality", reference_normality)
    aliquot = _check_positive("aliquot (mL)", aliquot_ml)
    volume = _check_positive("titrant volume (mL)", volume_ml)
    blank = _check_u("blank (mL)", blank_ml)
    u_blank = _check_u("blank", u_blank_ml)
    if volume <= blank:
        raise InvalidInput(f"titrant volume {volume:g} mL is not greater than the blank "
                           f"{blank:g} mL")
    missing: list[MissingTerm] = []
    u_ref = 0.0
    if u_reference_normality is None:
        missing.append(MissingTerm("reference normality", "N_ref", n_ref, "eq/L",
                                   REFERENCE_U_MISSING_REASON))
    else:
        u_ref = _check_u("reference normality", u_reference_normality)
    inputs = [
        InputQuantity("reference normality", "N_ref", n_ref, "eq/L", u_ref),
        InputQuantity("aliquot (pipette)", "V_aliquot", aliquot, "mL",
                      _check_u("aliquot (mL)", u_aliquot_ml)),
        InputQuantity("titrant volume (burette)", "V", volume, "mL",
                      _check_u("titrant volume (mL)", u_volume_ml)),
    ]
    with_blank = bool(blank or u_blank)
    if with_blank:
        inputs.append(InputQuantity("blank", "V_blank", blank, "mL", u_blank))
    term = repeatability_term(u_rel_repeatability, replicate_normalities)
    if term.line is not None:
        inputs.append(term.line)

    def model(n: Any, v_aliquot: Any, v: Any, *rest: Any) -> Any:
        extra = list(rest)
        v_blank = extra.pop(0) if with_blank else 0.0
        factor = extra.pop(0) if extra else 1.0
        return n * v_aliquot * factor / (v - v_blank)

    result = propagate(model, inputs, k=k, report_value=report_value,
                       notes=(*notes, *term.notes), missing=(*missing, *term.missing))
    if u_reference_normality is None:  # N_ref shows once: as its missing line
        result = msgspec.structs.replace(
            result, budget=tuple(line for line in result.budget
                                 if not (line.symbol == "N_ref" and line.missing is None)))
    return result
