"""A secondary standardization inherits its reference's uncertainty, never less of it.

Oracle: EURACHEM/CITAC CG4, 3rd ed. (2012), section 8 rule 2 (the relative standard
uncertainties of a product or quotient add in quadrature), applied to
N = N_ref V_aliquot f_rep / (V - V_blank): the reference's relative uncertainty enters
with sensitivity one, so the result's can never be smaller. Checked through the one
evaluation a recorded run uses, at any temperature (the reference's normality at 20 C is
carried to the run's temperature; its relative uncertainty is unchanged).
"""

from __future__ import annotations

import math

import pytest
from hypothesis import given, settings
from hypothesis import strategies as hst

from prepbook.rules.evaluation import Reading, Reference, Standardization, evaluate


def _secondary(ref: Reference, readings: list[tuple[float, float]], **kw: object):  # type: ignore[no-untyped-def]
    return evaluate(Standardization(
        readings=tuple(Reading(a, v, f"{a}", f"{v}") for a, v in readings),
        titrant="HCl", reference=ref, **kw))  # type: ignore[arg-type]


@settings(max_examples=150, deadline=None)
@given(
    n20=hst.floats(min_value=0.005, max_value=2.0),
    rel_ref=hst.floats(min_value=0.0, max_value=0.02),
    aliquot=hst.floats(min_value=2.0, max_value=50.0),
    ratios=hst.lists(hst.floats(min_value=0.5, max_value=1.5), min_size=1, max_size=6),
    temperature=hst.floats(min_value=10.0, max_value=30.0),
    pipette=hst.floats(min_value=0.0, max_value=0.1),
    burette=hst.floats(min_value=0.0, max_value=0.1),
    repeatability=hst.one_of(hst.none(), hst.floats(min_value=0.0, max_value=0.01)),
)
def test_inherited_relative_uncertainty_is_never_below_the_references(  # type: ignore[no-untyped-def]
        n20, rel_ref, aliquot, ratios, temperature, pipette, burette, repeatability):
    ref = Reference(batch="REF", run="R1", normality_20c=n20, u=rel_ref * n20)
    e = _secondary(ref, [(aliquot, aliquot * r) for r in ratios],
                   temperature_c=temperature, pipette_tolerance_ml=pipette,
                   burette_tolerance_ml=burette, u_rel_repeatability=repeatability)
    assert e.u is not None and math.isfinite(e.u)
    assert e.u / e.normality >= rel_ref * (1 - 1e-9)
    n_ref = next(line for line in e.budget if line.symbol == "N_ref")
    assert n_ref.u_relative == pytest.approx(rel_ref, rel=1e-9, abs=1e-15)


def test_a_reference_without_a_recorded_uncertainty_is_named_missing_not_zero() -> None:
    """An older reference run kept no u: the budget says so instead of passing on
    nothing; with u on record the same readings give a larger, complete uncertainty."""
    readings = [(25.00, 24.90), (25.00, 24.95), (25.00, 24.92)]
    unknown = _secondary(Reference("REF", "R1", 0.1000, None), readings)
    missing = [line for line in unknown.budget if line.missing is not None]
    assert [line.symbol for line in missing] == ["N_ref"]
    assert "reference normality missing from the budget" in " ".join(unknown.uncertainty_notes)
    assert "no uncertainty on record" in " ".join(unknown.notes)
    known = _secondary(Reference("REF", "R1", 0.1000, 0.0001), readings)
    assert all(line.missing is None for line in known.budget)
    assert known.u is not None and unknown.u is not None and known.u > unknown.u


@pytest.mark.parametrize(("reps", "given_rsd", "source"), [
    ([(25.0, 24.9)], None, "missing"),
    ([(25.0, 24.9), (25.0, 24.95)], None, "estimated"),
    ([(25.0, 24.9)], 0.0005, "given"),
])
def test_the_repeatability_source_is_stated(reps: list[tuple[float, float]],
                                            given_rsd: float | None, source: str) -> None:
    """With one replicate and no validated value the term is missing (never dropped);
    two replicates estimate it; a validated value is used as given."""
    e = _secondary(Reference("REF", "R1", 0.1000, 0.0001), reps,
                   u_rel_repeatability=given_rsd)
    assert e.repeatability == source
    f_rep = [line for line in e.budget if line.symbol == "f_rep"]
    assert len(f_rep) == 1 and (f_rep[0].missing is not None) == (source == "missing")
