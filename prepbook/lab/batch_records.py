"""The typed records of a batch: made, shown whole (``batch show``), drawn from.

``batches`` builds them; the command line, the terminal app and the report read them.
"""

from __future__ import annotations

from typing import Any, NotRequired, TypedDict

import msgspec

from prepbook.lab.batch_facts import UseNeedingReview
from prepbook.records import as_data


class MadeBatch(msgspec.Struct, frozen=True):
    """A batch just recorded: its code and the strength expected from how it was made."""

    batch: str
    spec: str
    method: str
    theoretical_normality: float
    theoretical_factor: float
    unit: str
    made_at: str
    expires: str
    cautions: tuple[str, ...]
    warnings: tuple[str, ...]


class Check(TypedDict):
    """An acceptance check of a run, as the run's stored result keeps it."""

    name: str
    passed: bool
    severity: str
    message: str


class BudgetRow(TypedDict):
    """One row of a run's uncertainty budget, as the run's stored result keeps it."""

    quantity: str
    symbol: str
    value: float
    unit: str
    u: float
    u_relative: float
    contribution: float
    share_percent: float
    missing: NotRequired[str | None]  # why the term could not be evaluated (newer runs)


class ReplicateRow(msgspec.Struct, frozen=True):
    """One version of one replicate; ``normality`` and ``outlier`` of current ones only."""

    position: int
    version: int
    current: bool
    amount: str
    volume_ml: str
    excluded: bool
    reason: str | None
    normality: float | None
    outlier: bool
    recorded_by: str
    recorded_at: str


class ReviewRow(msgspec.Struct, frozen=True):
    reviewer: str
    decision: str
    reason: str | None
    signed_at: str


class RunRecord(msgspec.Struct, frozen=True):
    """A standardization as plain data (``replicates`` None when not asked for)."""

    run: str
    method: str
    status: str
    performed_at: str
    recorded_at: str
    analyst: str
    lot: str | None
    lot_certificate: str | None
    reference_batch: str | None
    balance: str | None
    burette: str | None
    temperature_c: str | None
    blank_ml: str | None
    indicator: str | None
    normality: float | None
    normality_20c: float | None
    factor: float | None
    sd: float | None
    rsd_percent: float | None
    u: float | None
    U: float | None
    k: float | None
    verdict: str | None
    checks: tuple[Check, ...]
    budget: tuple[BudgetRow, ...]
    reviews: tuple[ReviewRow, ...]
    replicates: tuple[ReplicateRow, ...] | None
    # what the budget rests on (``chain_facts``); None for runs recorded before they were kept
    reference: dict[str, Any] | None  # secondary: batch, run, normality_20c, u (at 20 C)
    repeatability: str | None  # given, spec, estimated or missing
    repeatability_rsd_percent: float | None  # the validated value used, if any
    reaction: str | None  # direct: the standard's reaction

    def budget_basis(self) -> str:
        """What its budget rests on, in words (``budget_basis``)."""
        return budget_basis(self.reference, self.repeatability, self.repeatability_rsd_percent)

    def to_json(self) -> dict[str, Any]:
        """The run as plain data for JSON; without replicates when they were not read."""
        out = as_data(self)
        if self.replicates is None:
            del out["replicates"]
        return out


REPEATABILITY_WORDS = {
    "given": "the validated {rsd:g} % given for this run",
    "spec": "the spec's validated {rsd:g} %",
    "estimated": "estimated from the replicates",
    "missing": "cannot be estimated from one replicate (none given, none in the spec)",
}


def budget_basis(reference: Any, repeatability: str | None,
                 rsd_percent: float | None) -> str:
    """In words, what a run's budget rests on: where its repeatability came from and,
    for a secondary run, the reference and the uncertainty it passes on (``reference``:
    an ``evaluation.Reference`` or its stored mapping)."""
    text = "repeatability: " + REPEATABILITY_WORDS.get(repeatability or "", "not recorded") \
        .format(rsd=rsd_percent or 0.0)
    if reference is None:
        return text
    ref = reference if isinstance(reference, dict) else as_data(reference)
    u, n20 = ref.get("u"), ref["normality_20c"]
    inherited = ("no uncertainty on record" if u is None
                 else f"u = {u:.6f} eq/L ({100 * u / n20:.3f} %)")
    return (text + f"; inherits from {ref['batch']} (run {ref['run']}, {n20:.5f} eq/L at "
            f"20 C, {inherited})")


def chain_facts(result: dict[str, Any]) -> dict[str, Any]:
    """The ``RunRecord`` fields a run's stored result keeps about what its budget rests
    on: the reference it inherits from, the repeatability's source, the reaction."""
    return {"reference": result.get("reference"), "repeatability": result.get("repeatability"),
            "repeatability_rsd_percent": result.get("repeatability_rsd_percent"),
            "reaction": result.get("reaction")}


class Preparation(msgspec.Struct, frozen=True):
    method: str
    volume_ml: str
    solute_mass_g: str | None
    solute_lot: str | None
    concentrate_volume_ml: str | None
    from_batch: str | None
    aliquot_ml: str | None
    flask: str | None
    balance: str | None
    theoretical_normality: float | None
    made_at: str
    recorded_at: str
    made_by: str
    notes: str | None


class Retired(msgspec.Struct, frozen=True):
    at: str
    by: str | None
    reason: str | None


class UseRow(msgspec.Struct, frozen=True):
    at: str
    by: str
    volume_ml: str | None
    purpose: str | None


class BatchRecord(msgspec.Struct, frozen=True):
    """Everything about one batch (``batch show``): its life now, how it was made, every
    run with its replicates and reviews, its uses and the uses in doubt."""

    batch: str
    spec: str
    spec_name: str
    nominal: float
    unit: str
    state: str
    normality: float | None
    factor: float | None
    restandardize_by: str | None
    expires: str
    warnings: tuple[str, ...]
    preparation: Preparation
    retired: Retired | None
    runs: tuple[RunRecord, ...]
    uses: tuple[UseRow, ...]
    diluted_into: tuple[str, ...]
    uses_needing_review: tuple[UseNeedingReview, ...]
    storage: str | None
    hazard: dict[str, Any]
    remaining_ml: float | None = None  # made less every recorded draw (``lab.volumes``)


class UseRecorded(msgspec.Struct, frozen=True):
    """A draw from a batch just recorded, with the strength it was used at."""

    batch: str
    used_at: str
    used_by: str
    volume_ml: str | None
    purpose: str | None
    normality: float | None
    factor: float | None
