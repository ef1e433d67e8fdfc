"""Revoking an accepted standardization: a signed withdrawal of its result.

The run is not changed or deleted: its status becomes "revoked" and a signed review
row (decision "revoke", with the reason) records who withdrew it and why. The batch
falls back to its previous accepted standardization, or out of service when it has
none; the uses made while the revoked result stood are flagged (``batch show``,
``trace`` and the board's warnings).
"""

from __future__ import annotations

import msgspec
from sqlalchemy.orm import Session

from prepbook.errors import InvalidInput, Refused
from prepbook.inputs import parse_text, utc_now
from prepbook.lab.batch_facts import current_normality, when
from prepbook.lab.common import REVIEWERS, acting, by_code, lab_time, signed, work_time, write
from prepbook.store import retry
from prepbook.store.engine import Database
from prepbook.store.models import Review, Run


class Revoked(msgspec.Struct, frozen=True):
    """A revoked run and what its batch stands on now: its fields are the keys of
    ``revoke --json``."""

    run: str
    batch: str
    status: str
    revoked_by: str
    revoked_at: str
    reason: str
    falls_back_to: str | None  # the previous accepted run now in force, or None
    normality: float | None  # at 20 C, of that run
    factor: float | None
    state: str  # the batch's state now
    uses_flagged: int  # uses made while the revoked result stood


def _precheck(s: Session, actor: str, run: str) -> Run:
    acting(s, actor, REVIEWERS, "revoke standardizations")
    r = by_code(s, Run, run, "run")
    if r.status != "accepted":
        raise Refused(f"run {r.code} is {r.status}; only an accepted result can be revoked "
                      "(reject a run awaiting review instead)")
    return r


@retry.on_conflict
def revoke(db: Database, *, actor: str, run: str, reason: str | None,
           passphrase: str | None, at: str | None = None) -> Revoked:
    """Withdraw an accepted result (signed by a reviewer or an admin, with a reason)."""
    from prepbook.lab import board
    from prepbook.lab import specs as spec_view
    from prepbook.lab.batch_facts import impact

    reason = parse_text(reason, "reason", max_len=1000)
    if not (reason and reason.strip()):
        raise InvalidInput("a revocation needs a --reason")
    revoked_at = work_time(db, at, "revocation time", reason=reason)
    # Every refusal comes before the signature (whose check is itself written down).
    with db.session(write=False) as s:
        _precheck(s, actor, run)
    signed(db, actor, passphrase, REVIEWERS, "revoke standardizations",
           meaning="revoked an accepted result", what=f"run {run}")
    with db.session() as s:
        r = _precheck(s, actor, run)
        if revoked_at < r.performed_at:
            raise InvalidInput(f"the revocation ({lab_time(s, revoked_at)}) cannot be "
                               f"before the run ({lab_time(s, r.performed_at)})")
        write(s, actor, "review.revoke",
              Review(run_id=r.id, reviewer=actor, decision="revoke", reason=reason,
                     signed_at=revoked_at), reason=reason, performed_at=revoked_at)
        r.status = "revoked"
        write(s, actor, "run.status", r, reason=reason, performed_at=revoked_at)
        b = r.batch
        n20, fallback = current_normality(s, b)
        life = board.batch_life(s, b, utc_now().date())
        flagged = [u for u in impact(s, b, spec_view.view(b.spec).drift_limit_percent)
                   if r.code in u.why]
        return Revoked(run=r.code, batch=b.code, status=r.status, revoked_by=actor,
                       revoked_at=when(revoked_at), reason=reason,
                       falls_back_to=fallback.code if fallback else None, normality=n20,
                       factor=fallback.factor if fallback else None, state=life.state,
                       uses_flagged=len(flagged))
