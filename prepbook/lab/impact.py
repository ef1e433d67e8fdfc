"""Impact, quantified: what a changed titrant value did to the sample results made with it.

Computed on reading, from the record: a recorded assay is never rewritten. For each
assay of a batch, the standardization whose normality it used is looked at as it
stands now:

- **corrected** (its normality at 20 C is no longer the one the assay took): the
  result is recomputed exactly with the corrected value;
- **withdrawn** (rejected after a correction, or revoked): the titrant's true value at
  the time of use is unknown; the result is given as the range between the standing
  accepted standardizations that bracket the use;
- **drift** (it stands, but the next accepted standardization differs from it by more
  than the spec's drift limit): the titrant's true value at the time of use is
  unknown; the result lies between the results with the two bracketing normalities;
- **in doubt** (the next standardization after the use was rejected and none has been
  accepted since): no value to recompute with yet.

This module finds the impacted assays (``findings``, pure; ``impacted_counts`` for the
board); ``prepbook.lab.assays.impact`` recomputes them with the same chemistry as the
assay itself.
"""

from __future__ import annotations

from collections.abc import Sequence
from datetime import datetime

import msgspec
from sqlalchemy import select
from sqlalchemy.orm import Session

from prepbook.lab import specs as spec_view
from prepbook.store.models import Assay, Run, Spec

WITHDRAWN = ("rejected", "revoked")
_DOUBT = "the titrant's true value at the time of use is unknown"


class RunFact(msgspec.Struct, frozen=True):
    """A standardization as the impact reads it: id, time, status, normality at 20 C."""

    key: int
    code: str
    at: datetime
    status: str
    normality_20c: float | None


class AssayFact(msgspec.Struct, frozen=True):
    """An assay as the impact reads it: when, with which run, at which normality."""

    key: int
    at: datetime
    run: int
    normality_20c: float  # as taken from the run when the assay was made


class Finding(msgspec.Struct, frozen=True):
    """Why an assay is impacted and the normalities (at 20 C) to recompute it with:
    one (``kind`` corrected: exact), two (a range) or none (in doubt)."""

    assay: int
    kind: str  # corrected | withdrawn | drift | in-doubt
    runs: tuple[RunFact, ...]
    reason: str


def findings(runs: Sequence[RunFact], assays: Sequence[AssayFact],
             drift_limit_percent: float) -> tuple[Finding, ...]:
    """The impacted assays among ``assays`` (pure: no database, no recomputation)."""
    from prepbook.rules.life import drift_between

    ordered = sorted(runs, key=lambda r: (r.at, r.key))
    by_key = {r.key: r for r in ordered}
    standing = [r for r in ordered if r.status == "accepted" and r.normality_20c]
    out: list[Finding] = []
    for a in assays:
        used = by_key[a.run]
        after = [r for r in standing if r.at > a.at and r.key != used.key]
        if used.status in WITHDRAWN:
            before = [r for r in standing if r.at <= a.at and r.key != used.key]
            bracket = tuple(x for x in (before[-1] if before else None,
                                        after[0] if after else None) if x is not None)
            named = " and ".join(r.code for r in bracket)
            out.append(Finding(a.key, "withdrawn", bracket,
                               f"{used.code} was {used.status} after use; {_DOUBT}"
                               + (f": between {named}" if len(bracket) == 2 else
                                  f"; only {named} stands beside it" if bracket else
                                  "; no standing standardization to recompute with")))
        elif used.normality_20c is not None and used.normality_20c != a.normality_20c:
            note = " (the correction awaits review)" if used.status != "accepted" else ""
            out.append(Finding(a.key, "corrected", (used,),
                               f"{used.code} was corrected after use{note}"))
        elif after:
            nxt = after[0]
            assert nxt.normality_20c is not None
            drift = drift_between(a.normality_20c, nxt.normality_20c)
            if abs(drift) > drift_limit_percent:
                out.append(Finding(a.key, "drift", (used, nxt),
                                   f"{nxt.code} differs from {used.code} by {drift:+.2f} % "
                                   f"(limit {drift_limit_percent:g} %); {_DOUBT}: the "
                                   "result lies between the two"))
        else:
            later = [r for r in ordered if r.at > a.at and r.key != used.key]
            if later and later[0].status in WITHDRAWN:
                out.append(Finding(a.key, "in-doubt", (),
                                   f"the next standardization, {later[0].code}, was "
                                   f"{later[0].status} and none has been accepted since; "
                                   f"{_DOUBT}"))
    return tuple(out)


def facts(s: Session, batch_ids: Sequence[int]
           ) -> tuple[dict[int, list[RunFact]], dict[int, list[AssayFact]]]:
    """The runs and assays of these batches, as the impact reads them (columns only)."""
    runs: dict[int, list[RunFact]] = {}
    for r in s.execute(select(Run.id, Run.batch_id, Run.code, Run.performed_at, Run.status,
                              Run.normality_20c).where(Run.batch_id.in_(batch_ids))):
        runs.setdefault(r.batch_id, []).append(
            RunFact(r.id, r.code, r.performed_at, r.status, r.normality_20c))
    assays: dict[int, list[AssayFact]] = {}
    for a in s.execute(select(Assay.id, Assay.batch_id, Assay.performed_at, Assay.run_id,
                              Assay.titrant_normality_20c).where(Assay.batch_id.in_(batch_ids))
                       .order_by(Assay.performed_at, Assay.id)):
        assays.setdefault(a.batch_id, []).append(
            AssayFact(a.id, a.performed_at, a.run_id, a.titrant_normality_20c))
    return runs, assays


def impacted_counts(s: Session, batches: Sequence[tuple[int, str, Spec]]) -> dict[str, int]:
    """How many assays of each batch (id, code, spec) are impacted (code -> count; the
    board). Detection only, no recomputation, in two queries whatever the number of
    batches."""
    runs, assays = facts(s, [bid for bid, _, _ in batches])
    counts = {}
    for bid, code, spec in batches:
        mine = assays.get(bid)
        if not mine:
            continue
        found = findings(runs.get(bid, []), mine, spec_view.view(spec).drift_limit_percent)
        if found:
            counts[code] = len(found)
    return counts
