"""The history of a batch: its trend, its chain of traceability, the impact of a bad one."""

from __future__ import annotations

from datetime import date
from typing import Any

import msgspec
from msgspec.structs import replace
from sqlalchemy import func, select
from sqlalchemy.orm import Session

from prepbook.errors import InvalidInput, Refused
from prepbook.inputs import parse_text, utc_now
from prepbook.lab import specs as spec_view
from prepbook.lab.assays import AssayRow, assay_rows
from prepbook.lab.batch_facts import UseNeedingReview, current_normality, impact, when
from prepbook.lab.common import (
    RECORDERS,
    acting,
    by_code,
    iso,
    lab_time,
    signed,
    work_time,
    write,
)
from prepbook.store import retry
from prepbook.store.engine import Database
from prepbook.store.models import Batch, Instrument, Lot, Run, Use


class TrendPoint(msgspec.Struct, frozen=True):
    """One accepted standardization and its change from the one before."""

    run: str
    performed_at: str
    normality: float | None
    normality_20c: float | None
    factor: float | None
    change_percent: float | None
    beyond_drift_limit: bool


class Trend(msgspec.Struct, frozen=True):
    """A batch's accepted history, the least-squares slope of its factor and forecast."""

    batch: str
    spec: str
    nominal: float
    unit: str
    window: tuple[float, float]
    drift_limit_percent: float
    history: tuple[TrendPoint, ...]
    slope_percent_per_30d: float | None
    slope_ci_percent_per_30d: tuple[float, float] | None
    forecast_leaves_window: str | None
    note: str | None


class InstrumentFacts(msgspec.Struct, frozen=True):
    code: str
    kind: str
    due: str
    overdue_now: bool
    capacity: str | None
    tolerance: str | None


class LotFacts(msgspec.Struct, frozen=True):
    code: str
    material: str
    purity_percent: str
    purity_u_percent: str | None
    certificate: str | None
    expires: str
    dried_on: str | None


class TracedPreparation(msgspec.Struct, frozen=True):
    method: str
    made_at: str
    made_by: str
    solute_lot: LotFacts | None
    flask: InstrumentFacts | None
    balance: InstrumentFacts | None


class StockBatch(msgspec.Struct, frozen=True):
    """A batch up the dilution chain and the run that gave its strength."""

    batch: str
    spec: str
    made_at: str
    expires: str
    standardized_by: str | None
    lot: LotFacts | None


class TracedRun(msgspec.Struct, frozen=True):
    run: str
    status: str
    performed_at: str
    analyst: str
    lot: LotFacts | None
    reference_batch: str | None
    balance: InstrumentFacts | None
    burette: InstrumentFacts | None
    reviewers: tuple[str, ...]


class Upward(msgspec.Struct, frozen=True):
    preparation: TracedPreparation
    stock_chain: tuple[StockBatch, ...]
    standardizations: tuple[TracedRun, ...]


class Dilution(msgspec.Struct, frozen=True):
    """A batch made from this one (``source`` is the batch it was diluted from)."""

    batch: str
    spec: str
    source: str | None
    made_at: str

    def to_json(self) -> dict[str, Any]:
        return {"batch": self.batch, "spec": self.spec, "from": self.source,
                "made_at": self.made_at}


class ReferenceUse(msgspec.Struct, frozen=True):
    """A run of another batch standardized against this one."""

    batch: str
    run: str
    status: str


class TracedUse(msgspec.Struct, frozen=True):
    used_at: str
    used_by: str
    volume_ml: str | None
    purpose: str | None


class Downward(msgspec.Struct, frozen=True):
    diluted_into: tuple[Dilution, ...]
    reference_for: tuple[ReferenceUse, ...]
    uses: tuple[TracedUse, ...]
    assays: tuple[AssayRow, ...]  # the sample results made with the batch


class Trace(msgspec.Struct, frozen=True):
    """The chain upward (standards, certificates, stock, instruments) and downward."""

    batch: str
    spec: str
    upward: Upward
    downward: Downward
    uses_needing_review: tuple[UseNeedingReview, ...]


class Retirement(msgspec.Struct, frozen=True):
    batch: str
    retired_at: str
    retired_by: str
    reason: str


def _accepted(s: Session, batch: Batch) -> list[Run]:
    return list(s.scalars(select(Run).where(Run.batch_id == batch.id, Run.status == "accepted")
                          .order_by(Run.performed_at, Run.id)))


def trend(db: Database, code: str) -> Trend:
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
            history.append(TrendPoint(
                run=r.code, performed_at=when(r.performed_at), normality=r.normality,
                normality_20c=r.normality_20c, factor=r.factor, change_percent=change,
                beyond_drift_limit=change is not None
                and abs(change) > view.drift_limit_percent))
            prev = r
        base = Trend(batch=b.code, spec=b.spec.code, nominal=view.nominal, unit=view.unit,
                     window=(view.factor_low, view.factor_high),
                     drift_limit_percent=view.drift_limit_percent, history=tuple(history),
                     slope_percent_per_30d=None, slope_ci_percent_per_30d=None,
                     forecast_leaves_window=None, note=None)
        points = [(r.performed_at, r.factor) for r in runs if r.factor is not None]
        if len(points) < 3:
            return replace(base, note=f"{len(points)} accepted standardization(s): a trend "
                                      "needs at least 3")
        t = chem_trend.trend(points, (view.factor_low, view.factor_high))
        return replace(
            base, slope_percent_per_30d=t.slope_percent_per_30d,
            slope_ci_percent_per_30d=(t.ci_low, t.ci_high),
            forecast_leaves_window=iso(t.forecast_leaves_window),
            note=("at this slope the factor does not leave its window"
                  if t.forecast_leaves_window is None else None))


def _instrument(ins: Instrument | None, on: date) -> InstrumentFacts | None:
    if ins is None:
        return None
    return InstrumentFacts(code=ins.code, kind=ins.kind, due=when(ins.due),
                           overdue_now=ins.due < on, capacity=ins.capacity_text,
                           tolerance=ins.tolerance_text)


def _lot(lot: Lot | None) -> LotFacts | None:
    if lot is None:
        return None
    return LotFacts(code=lot.code, material=lot.material_code, purity_percent=lot.purity_text,
                    purity_u_percent=lot.purity_u_text, certificate=lot.certificate,
                    expires=when(lot.expires), dried_on=iso(lot.dried_on))


def trace(db: Database, code: str) -> Trace:
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
            _, last = current_normality(s, parent)
            ancestors.append(StockBatch(batch=parent.code, spec=parent.spec.code,
                                        made_at=when(parent.made_at),
                                        expires=when(parent.expires),
                                        standardized_by=last.code if last else None,
                                        lot=_lot(last.lot) if last else None))
            parent = parent.parent_batch
        up = Upward(
            preparation=TracedPreparation(
                method=b.method, made_at=when(b.made_at), made_by=b.made_by,
                solute_lot=_lot(b.solute_lot), flask=_instrument(b.flask, today),
                balance=_instrument(b.balance, today)),
            stock_chain=tuple(ancestors),
            standardizations=tuple(
                TracedRun(run=r.code, status=r.status, performed_at=when(r.performed_at),
                          analyst=r.analyst, lot=_lot(r.lot),
                          reference_batch=r.reference_batch.code if r.reference_batch else None,
                          balance=_instrument(r.balance, today),
                          burette=_instrument(r.burette, today),
                          reviewers=tuple(rv.reviewer + ": " + rv.decision for rv in r.reviews))
                for r in runs),
        )
        children = []
        stack = list(s.scalars(select(Batch).where(Batch.parent_batch_id == b.id)))
        while stack:
            child = stack.pop(0)
            children.append(Dilution(batch=child.code, spec=child.spec.code,
                                     source=child.parent_batch.code if child.parent_batch
                                     else None, made_at=when(child.made_at)))
            stack.extend(s.scalars(select(Batch).where(Batch.parent_batch_id == child.id)))
        standardized_against = tuple(
            ReferenceUse(batch=r.batch.code, run=r.code, status=r.status)
            for r in s.scalars(select(Run).where(Run.reference_batch_id == b.id)))
        uses = tuple(TracedUse(used_at=when(u.used_at), used_by=u.used_by,
                               volume_ml=u.volume_ml_text, purpose=u.purpose)
                     for u in s.scalars(select(Use).where(Use.batch_id == b.id)
                                        .order_by(Use.used_at)))
        return Trace(batch=b.code, spec=b.spec.code, upward=up,
                     downward=Downward(diluted_into=tuple(children),
                                       reference_for=standardized_against, uses=uses,
                                       assays=assay_rows(s, b)),
                     uses_needing_review=impact(s, b, view.drift_limit_percent))


@retry.on_conflict
def retire(db: Database, *, actor: str, code: str, reason: str | None,
           passphrase: str | None, at: str | None = None) -> Retirement:
    """Retire a batch (discarded, used up, spoiled): signed, with a reason. It can then be
    neither standardized nor used; its record stays.

    ``at`` records when it was really discarded (entered later from the bench log); it
    cannot be in the future, before the batch was made, or before its last use or
    standardization. The audit event keeps the time it was entered as well.
    """
    reason = parse_text(reason, "reason", max_len=1000)
    if not (reason and reason.strip()):
        raise InvalidInput("retiring a batch needs a --reason")
    retired_at = work_time(db, at, "retirement time", reason=reason)
    signed(db, actor, passphrase, RECORDERS, "retire batches", meaning="retired",
           what=f"batch {code}")
    with db.session() as s:
        user = acting(s, actor, RECORDERS, "retire batches")
        b = by_code(s, Batch, code, "batch")
        if b.retired_at is not None:
            raise Refused(f"batch {b.code} was already retired on {lab_time(s, b.retired_at)}")
        if retired_at < b.made_at:
            raise InvalidInput(f"the retirement ({lab_time(s, retired_at)}) cannot be before "
                               f"the batch was made ({lab_time(s, b.made_at)})")
        last_run = s.scalar(select(func.max(Run.performed_at)).where(Run.batch_id == b.id))
        last_use = s.scalar(select(func.max(Use.used_at)).where(Use.batch_id == b.id))
        for last, what in ((last_run, "standardized"), (last_use, "used")):
            if last is not None and retired_at < last:
                raise InvalidInput(f"batch {b.code} was {what} on {lab_time(s, last)}, "
                                   "after that retirement time")
        b.retired_at, b.retired_by, b.retired_reason = retired_at, user.name, reason
        write(s, user.name, "batch.retire", b, reason=reason, performed_at=retired_at)
        return Retirement(batch=b.code, retired_at=when(retired_at), retired_by=user.name,
                          reason=reason)
