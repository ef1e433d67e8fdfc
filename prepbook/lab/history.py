"""The history of a batch: its trend, its chain of traceability, the impact of a bad one."""

from __future__ import annotations

from datetime import date
from typing import Any

from sqlalchemy import func, select
from sqlalchemy.orm import Session

from prepbook.errors import InvalidInput, Refused
from prepbook.inputs import parse_datetime, parse_text, utc_now
from prepbook.lab import specs as spec_view
from prepbook.lab.common import RECORDERS, acting, by_code, iso, not_future, signed, write
from prepbook.store import retry
from prepbook.store.engine import Database
from prepbook.store.models import Batch, Instrument, Lot, Run, Use


def _accepted(s: Session, batch: Batch) -> list[Run]:
    return list(s.scalars(select(Run).where(Run.batch_id == batch.id, Run.status == "accepted")
                          .order_by(Run.performed_at, Run.id)))


def trend(db: Database, code: str) -> dict[str, Any]:
    """Accepted history, change between standardizations, slope and forecast."""
    from prepbook.chem import trend as chem_trend

    with db.session(write=False) as s:
        b = by_code(s, Batch, code, "batch")
        view = spec_view.view(b.spec)
        runs = _accepted(s, b)
        history = []
        prev: Run | None = None
        for r in runs:
            change = (chem_trend.drift_percent(prev.normality_20c, r.normality_20c)
                      if prev is not None and prev.normality_20c and r.normality_20c else None)
            history.append({"run": r.code, "performed_at": iso(r.performed_at),
                            "normality": r.normality, "normality_20c": r.normality_20c,
                            "factor": r.factor, "change_percent": change,
                            "beyond_drift_limit": change is not None
                            and abs(change) > view.drift_limit_percent})
            prev = r
        result: dict[str, Any] = {
            "batch": b.code, "spec": b.spec.code, "nominal": view.nominal, "unit": view.unit,
            "window": [view.factor_low, view.factor_high],
            "drift_limit_percent": view.drift_limit_percent, "history": history,
            "slope_percent_per_30d": None, "slope_ci_percent_per_30d": None,
            "forecast_leaves_window": None, "note": None,
        }
        points = [(r.performed_at, r.factor) for r in runs if r.factor is not None]
        if len(points) < 3:
            result["note"] = (f"{len(points)} accepted standardization(s): a trend needs at "
                              "least 3")
            return result
        t = chem_trend.trend(points, (view.factor_low, view.factor_high))
        result["slope_percent_per_30d"] = t.slope_percent_per_30d
        result["slope_ci_percent_per_30d"] = [t.ci_low, t.ci_high]
        result["forecast_leaves_window"] = iso(t.forecast_leaves_window)
        if t.forecast_leaves_window is None:
            result["note"] = "at this slope the factor does not leave its window"
        return result


def _instrument(ins: Instrument | None, on: date) -> dict[str, Any] | None:
    if ins is None:
        return None
    return {"code": ins.code, "kind": ins.kind, "due": iso(ins.due),
            "overdue_now": ins.due < on, "capacity": ins.capacity_text,
            "tolerance": ins.tolerance_text}


def _lot(lot: Lot | None) -> dict[str, Any] | None:
    if lot is None:
        return None
    return {"code": lot.code, "material": lot.material_code, "purity_percent": lot.purity_text,
            "purity_u_percent": lot.purity_u_text, "certificate": lot.certificate,
            "expires": iso(lot.expires), "dried_on": iso(lot.dried_on)}


def impact(s: Session, b: Batch, drift_limit: float) -> list[dict[str, Any]]:
    from prepbook.rules.impact import RunPoint, UsePoint, uses_needing_review

    runs = [RunPoint(r.code, r.performed_at, r.status, r.normality_20c)
            for r in s.scalars(select(Run).where(Run.batch_id == b.id))]
    uses = list(s.scalars(select(Use).where(Use.batch_id == b.id).order_by(Use.used_at)))
    flags = uses_needing_review(runs, [UsePoint(u.id, u.used_at) for u in uses], drift_limit)
    by_id = {u.id: u for u in uses}
    return [{"used_at": iso(by_id[f.use].used_at), "used_by": by_id[f.use].used_by,
             "volume_ml": by_id[f.use].volume_ml_text, "purpose": by_id[f.use].purpose,
             "why": f.reason} for f in flags]


def trace(db: Database, code: str) -> dict[str, Any]:
    """The chain upward (standards, certificates, stock, instruments) and downward (uses)."""
    today = utc_now().date()
    with db.session(write=False) as s:
        b = by_code(s, Batch, code, "batch")
        view = spec_view.view(b.spec)
        runs = list(s.scalars(select(Run).where(Run.batch_id == b.id)
                              .order_by(Run.performed_at, Run.id)))
        ancestors = []
        parent = b.parent_batch
        while parent is not None:
            _, last = _last_accepted(s, parent)
            ancestors.append({"batch": parent.code, "spec": parent.spec.code,
                              "made_at": iso(parent.made_at), "expires": iso(parent.expires),
                              "standardized_by": last.code if last else None,
                              "lot": _lot(last.lot) if last else None})
            parent = parent.parent_batch
        up = {
            "preparation": {"method": b.method, "made_at": iso(b.made_at), "made_by": b.made_by,
                            "solute_lot": _lot(b.solute_lot), "flask": _instrument(b.flask, today),
                            "balance": _instrument(b.balance, today)},
            "stock_chain": ancestors,
            "standardizations": [
                {"run": r.code, "status": r.status, "performed_at": iso(r.performed_at),
                 "analyst": r.analyst, "lot": _lot(r.lot),
                 "reference_batch": r.reference_batch.code if r.reference_batch else None,
                 "balance": _instrument(r.balance, today),
                 "burette": _instrument(r.burette, today),
                 "reviewers": [rv.reviewer + ": " + rv.decision for rv in r.reviews]}
                for r in runs],
        }
        children = []
        stack = list(s.scalars(select(Batch).where(Batch.parent_batch_id == b.id)))
        while stack:
            child = stack.pop(0)
            children.append({"batch": child.code, "spec": child.spec.code,
                             "from": child.parent_batch.code if child.parent_batch else None,
                             "made_at": iso(child.made_at)})
            stack.extend(s.scalars(select(Batch).where(Batch.parent_batch_id == child.id)))
        standardized_against = [
            {"batch": r.batch.code, "run": r.code, "status": r.status}
            for r in s.scalars(select(Run).where(Run.reference_batch_id == b.id))]
        uses = [{"used_at": iso(u.used_at), "used_by": u.used_by, "volume_ml": u.volume_ml_text,
                 "purpose": u.purpose}
                for u in s.scalars(select(Use).where(Use.batch_id == b.id).order_by(Use.used_at))]
        return {
            "batch": b.code, "spec": b.spec.code, "upward": up,
            "downward": {"diluted_into": children, "reference_for": standardized_against,
                         "uses": uses},
            "uses_needing_review": impact(s, b, view.drift_limit_percent),
        }


def _last_accepted(s: Session, b: Batch) -> tuple[float | None, Run | None]:
    from prepbook.lab.batches import current_normality

    return current_normality(s, b)


@retry.on_conflict
def retire(db: Database, *, actor: str, code: str, reason: str | None,
           passphrase: str | None, at: str | None = None) -> dict[str, Any]:
    """Retire a batch (discarded, used up, spoiled): signed, with a reason. It can then be
    neither standardized nor used; its record stays.

    ``at`` records when it was really discarded (entered later from the bench log); it
    cannot be in the future, before the batch was made, or before its last use or
    standardization. The audit event keeps the time it was entered as well.
    """
    reason = parse_text(reason, "reason", max_len=1000)
    if not (reason and reason.strip()):
        raise InvalidInput("retiring a batch needs a --reason")
    retired_at = not_future(parse_datetime(at, "--at") if at else None, "retirement time")
    signed(db, actor, passphrase, RECORDERS, "retire batches")
    with db.session() as s:
        user = acting(s, actor, RECORDERS, "retire batches")
        b = by_code(s, Batch, code, "batch")
        if b.retired_at is not None:
            raise Refused(f"batch {b.code} was already retired on {b.retired_at:%Y-%m-%d}")
        if retired_at < b.made_at:
            raise InvalidInput(f"the retirement ({retired_at:%Y-%m-%d %H:%M}) cannot be before "
                               f"the batch was made ({b.made_at:%Y-%m-%d %H:%M})")
        last_run = s.scalar(select(func.max(Run.performed_at)).where(Run.batch_id == b.id))
        last_use = s.scalar(select(func.max(Use.used_at)).where(Use.batch_id == b.id))
        for last, what in ((last_run, "standardized"), (last_use, "used")):
            if last is not None and retired_at < last:
                raise InvalidInput(f"batch {b.code} was {what} on {last:%Y-%m-%d %H:%M}, "
                                   "after that retirement time")
        b.retired_at, b.retired_by, b.retired_reason = retired_at, user.name, reason
        write(s, user.name, "batch.retire", b, reason=reason, performed_at=retired_at)
        return {"batch": b.code, "retired_at": iso(b.retired_at), "retired_by": user.name,
                "reason": reason}
