"""Which assays a changed titrant value impacts (``lab.impact.findings``, pure).

The rules are the trade's own (common practice, no source): a result stands or falls
with the titrant value it was computed with; a corrected value replaces it exactly; a
withdrawn one, or a drift beyond the spec's limit to the next standardization, leaves
the titrant's value at the time of use unknown between the bracketing values.
"""

from __future__ import annotations

from datetime import datetime

from prepbook.lab.impact import AssayFact, RunFact, findings

LIMIT = 0.5  # % drift


def day(d: int) -> datetime:
    return datetime(2026, 11, d, 10, 0)


def runs(*status_n: tuple[str, float | None]) -> list[RunFact]:
    """Runs 1, 2, ... on days 1, 11, 21, ... with these statuses and normalities."""
    return [RunFact(i, f"R{i}", day(1 + 10 * (i - 1)), st, n)
            for i, (st, n) in enumerate(status_n, start=1)]


def test_nothing_changed_nothing_impacted() -> None:
    rs = runs(("accepted", 0.1000), ("accepted", 0.1002))
    uses = [AssayFact(1, day(5), 1, 0.1000), AssayFact(2, day(15), 2, 0.1002)]
    assert findings(rs, uses, LIMIT) == ()


def test_a_corrected_run_impacts_exactly_its_own_assays() -> None:
    rs = runs(("accepted", 0.1000), ("accepted", 0.1003), ("accepted", 0.1004))
    uses = [AssayFact(1, day(5), 1, 0.1000), AssayFact(2, day(15), 2, 0.1002),
            AssayFact(3, day(18), 2, 0.1002), AssayFact(4, day(25), 3, 0.1004)]
    found = findings(rs, uses, LIMIT)
    assert [(f.assay, f.kind, [r.code for r in f.runs]) for f in found] == [
        (2, "corrected", ["R2"]), (3, "corrected", ["R2"])]


def test_a_drift_brackets_only_the_results_since_the_previous_standardization() -> None:
    rs = runs(("accepted", 0.1000), ("accepted", 0.1001), ("accepted", 0.0990))
    uses = [AssayFact(1, day(5), 1, 0.1000), AssayFact(2, day(15), 2, 0.1001)]
    found = findings(rs, uses, LIMIT)
    assert [(f.assay, f.kind, [r.code for r in f.runs]) for f in found] == [
        (2, "drift", ["R2", "R3"])]
    assert "unknown" in found[0].reason and "-1.10 %" in found[0].reason


def test_a_withdrawn_run_is_bracketed_by_what_stands_on_either_side() -> None:
    rs = runs(("accepted", 0.1000), ("revoked", 0.1010), ("accepted", 0.1004))
    found = findings(rs, [AssayFact(7, day(15), 2, 0.1010)], LIMIT)
    assert [(f.kind, [r.code for r in f.runs]) for f in found] == [
        ("withdrawn", ["R1", "R3"])]
    assert "R2 was revoked after use" in found[0].reason


def test_a_rejected_next_run_puts_earlier_results_in_doubt_until_one_is_accepted() -> None:
    rs = runs(("accepted", 0.1000), ("rejected", 0.0950))
    found = findings(rs, [AssayFact(1, day(5), 1, 0.1000)], LIMIT)
    assert [(f.kind, f.runs) for f in found] == [("in-doubt", ())]
    accepted_since = [*rs, RunFact(3, "R3", day(25), "accepted", 0.1001)]
    assert findings(accepted_since, [AssayFact(1, day(5), 1, 0.1000)], LIMIT) == ()
