"""Facts about one batch that both its record (``batches``) and its history
(``history``) need: its current normality and the uses a later result puts in doubt.

Kept apart so that neither of those modules imports the other.
"""

from __future__ import annotations

from datetime import date, datetime

import msgspec
from sqlalchemy import func, select
from sqlalchemy.orm import Session

from prepbook.lab.common import iso
from prepbook.store.models import Batch, Review, Run, Use


def when(value: date | datetime) -> str:
    """``common.iso`` of a time that is always there (a column that cannot be null)."""
    text = iso(value)
    assert text is not None
    return text


class UseNeedingReview(msgspec.Struct, frozen=True):
    """A use of a batch that a later standardization puts in doubt, and why."""

    used_at: str
    used_by: str
    volume_ml: str | None
    purpose: str | None
    why: str


def current_normality(session: Session, batch: Batch) -> tuple[float | None, Run | None]:
    """The normality at 20 C of the batch's latest accepted run (None if none)."""
    run = session.scalars(
        select(Run)
        .where(Run.batch_id == batch.id, Run.status == "accepted")
        .order_by(Run.performed_at.desc(), Run.id.desc())
        .limit(1)
    ).first()
    return (run.normality_20c if run else None), run


def impact(s: Session, b: Batch, drift_limit: float) -> tuple[UseNeedingReview, ...]:
    """The uses of ``b`` that need review: made while it was off, or before a drift."""
    from prepbook.rules.impact import RunPoint, UsePoint, uses_needing_review

    revoked = {run_id: at for run_id, at in s.execute(
        select(Review.run_id, func.max(Review.signed_at)).join(Run)
        .where(Run.batch_id == b.id, Review.decision == "revoke").group_by(Review.run_id))}
    runs = [RunPoint(r.code, r.performed_at, r.status, r.normality_20c, revoked.get(r.id))
            for r in s.scalars(select(Run).where(Run.batch_id == b.id))]
    uses = list(s.scalars(select(Use).where(Use.batch_id == b.id).order_by(Use.used_at)))
    flags = uses_needing_review(runs, [UsePoint(u.id, u.used_at) for u in uses], drift_limit)
    by_id = {u.id: u for u in uses}
    return tuple(UseNeedingReview(used_at=when(by_id[f.use].used_at),
                                  used_by=by_id[f.use].used_by,
                                  volume_ml=by_id[f.use].volume_ml_text,
                                  purpose=by_id[f.use].purpose, why=f.reason)
                 for f in flags)
