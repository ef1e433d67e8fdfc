"""Which validated repeatability a run's budget uses: the run's, else its spec's, else
none (the replicates' scatter, or a missing term with one replicate). The rule is the
project's (the issue's), checked on the function the recorded runs call."""

from __future__ import annotations

from datetime import UTC, datetime
from typing import Any

import pytest

from prepbook.catalog import loader
from prepbook.inputs import parse_number
from prepbook.lab import specs as spec_view
from prepbook.lab.run_conditions import Conditions, validated_repeatability


def _conditions(spec_data: dict[str, Any], given: str | None) -> Conditions:
    view = spec_view.SpecView(
        code="NaOH-0.1N", name="sodium hydroxide 0.1 N", solute="NaOH", reaction="acid-base",
        nominal=0.1, unit="N", standard="KHP", indicator=None, min_replicates=3,
        max_rsd_percent=0.2, factor_low=0.9, factor_high=1.1, drift_limit_percent=0.5,
        restandardize_days=30, shelf_life_days=180, storage=None, hazard={}, cautions=[],
        data=spec_data)
    return Conditions(
        batch=None,  # type: ignore[arg-type]  # not read by the rule
        view=view, performed_at=datetime(2026, 12, 1, tzinfo=UTC),
        temperature=parse_number("20", "t"), blank=parse_number("0", "b"), indicator=None,
        repeatability=parse_number(given, "rsd") if given is not None else None)


@pytest.mark.parametrize(("spec_data", "given", "expected"), [
    ({}, None, (None, "given")),  # nothing validated: the evaluation estimates or flags it
    ({"repeatability_rsd_percent": 0.08}, None, (0.08, "spec")),
    ({"repeatability_rsd_percent": 0.08}, "0.05", (0.05, "given")),
    ({"repeatability_rsd_percent": None}, "0.05", (0.05, "given")),
    ({"repeatability_rsd_percent": "0.08"}, None, (None, "given")),  # not a number: unused
])
def test_the_run_wins_over_the_spec(spec_data: dict[str, Any], given: str | None,
                                    expected: tuple[float | None, str]) -> None:
    assert validated_repeatability(_conditions(spec_data, given)) == expected


def test_every_catalog_spec_has_the_field_and_none_claims_a_value_without_a_source() -> None:
    for spec in loader.specs():
        value = spec.repeatability_rsd_percent
        assert value is None or (value > 0 and spec.source_of("repeatability_rsd_percent"))
