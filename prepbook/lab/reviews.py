"""The review of standardization runs: a second person's signed decision.

The reviewer may not be the analyst who recorded the run, nor anyone who corrected
one of its replicates; the run must be awaiting review. ``runs_awaiting_review`` is the
review desk's queue.
"""

from __future__ import annotations

import functools
import json
from dataclasses import dataclass
from typing import Any, TypedDict

from sqlalchemy import bindparam, select
from sqlalchemy.orm import Session

from prepbook.errors import InvalidInput, Refused
from prepbook.inputs import parse_datetime, parse_text
from prepbook.lab.common import (
    REVIEWERS,
    acting,
    by_code,
    find_by_code,
    iso,
    not_future,
    signed,
    write,
)
from prepbook.store import retry
from prepbook.store.engine import Database
from prepbook.store.models import Batch, Replicate, Review, Run


class CheckRecord(TypedDict):
    """An acceptance check as stored with its run (read back as written)."""

    name: str
    passed: bool
    severity: str
    message: str


class BudgetRecord(TypedDict):
    """A line of a run's uncertainty budget as stored with it (read back as written)."""

    quantity: str
    symbol: str
    value: float
    unit: str
    u: float
    u_relative: float | None
    contribution: float
    share_percent: float


@dataclass(frozen=True)
class Signature:
    reviewer: str
    decision: str
    reason: str | None
    signed_at: str | None


@dataclass(frozen=True)
class RunRecord:
    """A recorded run as stored, with its reviews: what ``review`` returns and the review
    desk lists. The fields are the keys of ``review --json``."""

    run: str
    method: str
    status: str
    performed_at: str | None
    recorded_at: str | None
    analyst: str
    lot: str | None
    lot_certificate: str | None
    reference_batch: str | None
    balance: str | None
    burette: str | None
    temperature_c: str | None  # as typed
    blank_ml: str | None  # as typed
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
    checks: tuple[CheckRecord, ...]
    budget: tuple[BudgetRecord, ...]
    reviews: tuple[Signature, ...]
    batch: str



def _run_to_review(s: Session, code: str) -> Run:
    """The run with this code; or, given a batch code, that batch's one run awaiting review."""
    r = find_by_code(s, Run, code)
    if r is not None:
        return r
    b = find_by_code(s, Batch, code)
    if b is None:
        return by_code(s, Run, code, "run")  # raises NotFound with suggestions
    waiting = list(s.scalars(select(Run).where(Run.batch_id == b.id,
                                               Run.status == "awaiting-review")))
    if len(waiting) != 1:
        raise InvalidInput(f"batch {b.code} has {len(waiting)} runs awaiting review; "
                           "name the run" + (": " + ", ".join(w.code for w in waiting)
                                             if waiting else ""))
    return waiting[0]


@functools.cache
def _correctors_query() -> Any:
    """Who recorded a later version (a correction) of one of a run's replicates."""
    return select(Replicate.created_by).where(Replicate.run_id == bindparam("run_id"),
                                              Replicate.version > 1)


def _review_precheck(s: Session, actor: str, run: str) -> Run:
    reviewer = acting(s, actor, REVIEWERS, "review standardizations")
    r = _run_to_review(s, run)
    if r.analyst == reviewer.name:
        raise Refused(f"{reviewer.name} recorded run {r.code} and cannot review it; "
                      "a second person must")
    corrected_by = set(s.scalars(_correctors_query(), {"run_id": r.id}))
    if reviewer.name in corrected_by:
        raise Refused(f"{reviewer.name} corrected run {r.code} and cannot review it")
    if r.status != "awaiting-review":
        raise Refused(f"run {r.code} is already {r.status}")
    return r


@retry.on_conflict
def review(
    db: Database,
    *,
    actor: str,
    run: str,
    accept: bool,
    reason: str | None,
    passphrase: str | None,
    at: str | None = None,
) -> RunRecord:
    """A second person's signed accept or reject of a run awaiting review.

    ``at`` records when the review was actually done (transcribing a paper
    sign-off); the audit event keeps the time it was entered as well.
    """
    reason = parse_text(reason, "reason", max_len=1000)
    signed_at = not_future(parse_datetime(at, "--at") if at else None, "review time")
    if not accept and not (reason and reason.strip()):
        raise InvalidInput("a rejection needs a --reason")
    with db.session(write=False) as s:
        _review_precheck(s, actor, run)
    signed(db, actor, passphrase, REVIEWERS, "review standardizations")
    with db.session() as s:
        r = _review_precheck(s, actor, run)
        if signed_at < r.performed_at:
            raise InvalidInput(f"the review ({signed_at:%Y-%m-%d %H:%M}) cannot be before the "
                               f"run ({r.performed_at:%Y-%m-%d %H:%M})")
        decision = "accept" if accept else "reject"
        write(s, actor, f"review.{decision}",
              Review(run_id=r.id, reviewer=actor, decision=decision, reason=reason,
                     signed_at=signed_at), reason=reason, performed_at=signed_at)
        r.status = "accepted" if accept else "rejected"
        write(s, actor, "run.status", r, reason=reason, performed_at=signed_at)
        return _record(s, r)


def runs_awaiting_review(db: Database) -> tuple[RunRecord, ...]:
    with db.session(write=False) as s:
        rows = s.scalars(select(Run).where(Run.status == "awaiting-review")
                         .order_by(Run.performed_at)).all()
        return tuple(_record(s, r) for r in rows)


def _record(s: Session, r: Run) -> RunRecord:
    stored = json.loads(r.result_json) if r.result_json else {}
    reviews = s.scalars(select(Review).where(Review.run_id == r.id).order_by(Review.id))
    return RunRecord(
        run=r.code, method=r.method, status=r.status, performed_at=iso(r.performed_at),
        recorded_at=iso(r.recorded_at), analyst=r.analyst,
        lot=r.lot.code if r.lot else None, lot_certificate=r.lot.certificate if r.lot else None,
        reference_batch=r.reference_batch.code if r.reference_batch else None,
        balance=r.balance.code if r.balance else None,
        burette=r.burette.code if r.burette else None,
        temperature_c=r.temperature_c_text, blank_ml=r.blank_ml_text, indicator=r.indicator,
        normality=r.normality, normality_20c=r.normality_20c, factor=r.factor, sd=r.sd,
        rsd_percent=r.rsd_percent, u=r.u, U=r.U, k=r.k, verdict=stored.get("verdict"),
        checks=tuple(stored.get("checks", ())), budget=tuple(stored.get("budget", ())),
        reviews=tuple(Signature(reviewer=v.reviewer, decision=v.decision, reason=v.reason,
                                signed_at=iso(v.signed_at)) for v in reviews),
        batch=r.batch.code)
