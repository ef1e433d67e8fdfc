"""The review of standardization runs: a second person's signed decision.

The reviewer may not be the analyst who recorded the run, nor anyone who corrected
one of its replicates; the run must be awaiting review. ``runs_awaiting_review`` is the
review desk's queue.
"""

from __future__ import annotations

import functools
import json
from typing import Any

import msgspec
from sqlalchemy import bindparam, select
from sqlalchemy.orm import Session, joinedload

from prepbook.errors import InvalidInput, Refused
from prepbook.inputs import parse_text
from prepbook.lab.batch_records import RunRecord
from prepbook.lab.batches import reviews_of_runs, run_dict
from prepbook.lab.common import (
    REVIEWERS,
    acting,
    by_code,
    find_by_code,
    lab_time,
    signed,
    work_time,
    write,
)
from prepbook.store import retry
from prepbook.store.engine import Database
from prepbook.store.models import Batch, Replicate, Review, Run


class QueuedRun(RunRecord, frozen=True):
    """A run with its batch's code: what ``review`` returns and the review desk lists.
    The fields are the keys of ``review --json``."""

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


def failed_checks(r: Run) -> list[str]:
    """The failed checks of a run's stored result (a run with no verdict fails)."""
    result = json.loads(r.result_json) if r.result_json else {}
    failed = [f"{c['name']}: {c['message']}" for c in result.get("checks", [])
              if not c.get("passed") and c.get("severity") == "fail"]
    if result.get("verdict") != "pass" and not failed:
        failed = ["no passing verdict is recorded for it"]
    return failed


def _review_precheck(s: Session, actor: str, run: str, accept: bool) -> Run:
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
    failed = failed_checks(r)
    if accept and failed:
        more = f" (and {len(failed) - 1} more)" if len(failed) > 1 else ""
        raise Refused(f"run {r.code} failed a check and cannot be accepted: {failed[0]}{more}; "
                      "reject it, or correct it and review it again")
    return r


def to_sign(db: Database, *, actor: str, run: str, accept: bool,
            reason: str | None) -> QueuedRun:
    """What a reviewer is about to sign (the run, its result and checks), after every
    check that can refuse the review; nothing is written. Show it, then ask the
    passphrase and call ``review``."""
    _check_reason(accept, reason)
    with db.session(write=False) as s:
        return _record(s, _review_precheck(s, actor, run, accept))


def _check_reason(accept: bool, reason: str | None) -> str | None:
    reason = parse_text(reason, "reason", max_len=1000)
    if not accept and not (reason and reason.strip()):
        raise InvalidInput("a rejection needs a --reason")
    return reason


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
    late_reason: str | None = None,
) -> QueuedRun:
    """A second person's signed accept or reject of a run awaiting review.

    ``at`` records when the review was actually done (transcribing a paper
    sign-off); the audit event keeps the time it was entered as well.
    """
    reason = _check_reason(accept, reason)
    late_reason = parse_text(late_reason, "reason", max_len=500) or reason
    signed_at = work_time(db, at, "review time", reason=late_reason)
    # Every refusal comes before the signature (whose check is itself written down).
    with db.session(write=False) as s:
        _review_precheck(s, actor, run, accept)
    signed(db, actor, passphrase, REVIEWERS, "review standardizations", what=f"run {run}",
           meaning="reviewed and accepted" if accept else "reviewed and rejected")
    with db.session() as s:
        r = _review_precheck(s, actor, run, accept)
        if signed_at < r.performed_at:
            raise InvalidInput(f"the review ({lab_time(s, signed_at)}) cannot be before the "
                               f"run ({lab_time(s, r.performed_at)})")
        decision = "accept" if accept else "reject"
        write(s, actor, f"review.{decision}",
              Review(run_id=r.id, reviewer=actor, decision=decision, reason=reason,
                     signed_at=signed_at), reason=reason or late_reason,
              performed_at=signed_at)
        r.status = "accepted" if accept else "rejected"
        write(s, actor, "run.status", r, reason=reason or late_reason, performed_at=signed_at)
        return _record(s, r)


def runs_awaiting_review(db: Database) -> tuple[QueuedRun, ...]:
    awaiting = Run.status == "awaiting-review"
    with db.session(write=False) as s:
        # With what each shows (its batch, lot and instruments) joined: not one query
        # more a batch, nor a lazy load on every run.
        rows = s.scalars(select(Run).where(awaiting).order_by(Run.performed_at).options(
            joinedload(Run.batch), joinedload(Run.lot), joinedload(Run.reference_batch),
            joinedload(Run.balance), joinedload(Run.burette))).all()
        # Their reviews (a run rejected and corrected has some) in one query, not one a run.
        reviews = reviews_of_runs(s, select(Run.id).where(awaiting).scalar_subquery())
        return tuple(_record(s, r, reviews[r.id]) for r in rows)


def _record(s: Session, r: Run, reviews: list[Review] | None = None) -> QueuedRun:
    shown = run_dict(s, r, with_replicates=False, reviews=reviews)
    return QueuedRun(**msgspec.structs.asdict(shown),
                     batch=r.batch.code)
