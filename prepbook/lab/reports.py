"""The batch traceability report's data: everything an auditor needs about one batch.

Reading only: a report writes no row. The data come from the same services the
command line uses (``batches.show_batch``, ``auditing.verify``) plus the audit
events that carry a reason (corrections, exclusions, rejections) and the label
prints of the batch. Drawing the PDF is the edge's work (``prepbook.render.report``).
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import TypedDict

import msgspec
from sqlalchemy import and_, or_, select

from prepbook.inputs import utc_now
from prepbook.lab import specs as spec_view
from prepbook.lab.assays import AssayRow, ImpactedAssay
from prepbook.lab.batch_facts import when
from prepbook.lab.batch_records import BatchRecord
from prepbook.lab.common import by_code
from prepbook.lab.labels import LabelPrintRow
from prepbook.lab.replicate_sources import RunReadings
from prepbook.store.engine import Database
from prepbook.store.models import AuditEvent, Batch, LabelPrint, Replicate, Review, Run, Use


class SpecWindow(msgspec.Struct, frozen=True):
    """What the batch's spec accepts: the factor window around the nominal strength."""

    factor_low: float
    factor_high: float
    nominal: float
    unit: str
    max_rsd_percent: float
    cautions: tuple[str, ...]


class ReasonedEvent(msgspec.Struct, frozen=True):
    """An audit event with a reason (a correction, exclusion, rejection ...)."""

    seq: int
    at: str
    actor: str
    action: str
    record: str
    reason: str | None


class ChartPoint(msgspec.Struct, frozen=True):
    """One run on the report's chart: concentration at 20 C and its U, in the spec's unit."""

    run: str
    at: str
    status: str
    concentration: float
    U: float | None


class AuditSummary(msgspec.Struct, frozen=True):
    ok: bool
    events: int
    head_hash: str | None
    problems: tuple[str, ...]
    checkpoint: str | None = None  # the trail's code when printed, for `audit verify`


class ReportData(msgspec.Struct, frozen=True):
    """Everything the traceability report shows."""

    batch: BatchRecord
    window: SpecWindow
    chart: tuple[ChartPoint, ...]
    corrections: tuple[ReasonedEvent, ...]
    labels: tuple[LabelPrintRow, ...]  # ``labels.label_prints``
    audit: AuditSummary
    printed_at: str
    readings: Mapping[str, RunReadings] = msgspec.field(default_factory=dict)  # by run code
    assays: tuple[AssayRow, ...] = ()  # the sample results made with the batch
    impact: tuple[ImpactedAssay, ...] = ()  # those a changed titrant value puts in question


def _reasoned_events(db: Database, code: str) -> tuple[SpecWindow, tuple[ReasonedEvent, ...]]:
    """The spec's window and every audit event with a reason on this batch's records."""
    with db.session(write=False) as s:
        batch = by_code(s, Batch, code, "batch")
        view = spec_view.view(batch.spec)
        run_ids = list(s.scalars(select(Run.id).where(Run.batch_id == batch.id)))
        targets: list[tuple[str, list[int]]] = [("batches", [batch.id]), ("runs", run_ids)]
        if run_ids:
            targets.append(("replicates", list(s.scalars(
                select(Replicate.id).where(Replicate.run_id.in_(run_ids))))))
            targets.append(("reviews", list(s.scalars(
                select(Review.id).where(Review.run_id.in_(run_ids))))))
        targets.append(("uses", list(s.scalars(select(Use.id).where(Use.batch_id == batch.id)))))
        targets.append(("label_prints", list(s.scalars(
            select(LabelPrint.id).where(LabelPrint.batch_id == batch.id)))))
        clauses = [and_(AuditEvent.record_type == t, AuditEvent.record_id.in_(ids))
                   for t, ids in targets if ids]
        events = s.scalars(select(AuditEvent).where(or_(*clauses),
                                                    AuditEvent.reason.is_not(None))
                           .order_by(AuditEvent.seq)).all()
        window = SpecWindow(factor_low=view.factor_low, factor_high=view.factor_high,
                            nominal=view.nominal, unit=view.unit,
                            max_rsd_percent=view.max_rsd_percent,
                            cautions=tuple(view.cautions))
        return window, tuple(ReasonedEvent(seq=e.seq, at=when(e.at), actor=e.actor,
                                           action=e.action,
                                           record=f"{e.record_type}#{e.record_id}",
                                           reason=e.reason) for e in events)


def gather(db: Database, code: str) -> ReportData:
    """Everything the report shows."""
    from prepbook.lab import auditing, batches, labels, replicate_sources

    shown = batches.show_batch(db, code)
    window, events = _reasoned_events(db, code)
    audit = auditing.verify(db)
    points = []
    for r in shown.runs:
        if r.factor is None or r.normality_20c is None:
            continue
        concentration = window.nominal * r.factor
        scale = concentration / r.normality_20c
        points.append(ChartPoint(run=r.run, at=r.performed_at, status=r.status,
                                 concentration=concentration,
                                 U=r.U * scale if r.U is not None else None))
    return ReportData(
        batch=shown, window=window, chart=tuple(points), corrections=events,
        labels=tuple(labels.label_prints(db, code)),
        audit=AuditSummary(ok=audit.ok, events=audit.events, head_hash=audit.head_hash,
                           problems=audit.problems, checkpoint=audit.checkpoint),
        printed_at=when(utc_now()), readings=replicate_sources.of_batch(db, code),
        **_assay_parts(db, code))


class _AssayParts(TypedDict):
    assays: tuple[AssayRow, ...]
    impact: tuple[ImpactedAssay, ...]


def _assay_parts(db: Database, code: str) -> _AssayParts:
    """The report's assays and their impact, read in one transaction."""
    from prepbook.lab.assays import assay_rows, impacted

    with db.session(write=False) as s:
        batch = by_code(s, Batch, code, "batch")
        return {"assays": assay_rows(s, batch), "impact": impacted(s, batch)}
