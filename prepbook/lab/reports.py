"""The batch traceability report: gather everything an auditor needs, then write the PDF.

Reading only: a report writes no row. The data come from the same services the
command line uses (``batches.show_batch``, ``auditing.verify``) plus the audit
events that carry a reason (corrections, exclusions, rejections) and the label
prints of the batch.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

from sqlalchemy import and_, or_, select

from prepbook.errors import InvalidInput
from prepbook.inputs import utc_now
from prepbook.lab import specs as spec_view
from prepbook.lab.common import by_code, iso
from prepbook.store.engine import Database
from prepbook.store.models import AuditEvent, Batch, LabelPrint, Replicate, Review, Run, Use


def _reasoned_events(db: Database, code: str) -> tuple[dict[str, Any], list[dict[str, Any]]]:
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
        window = {"factor_low": view.factor_low, "factor_high": view.factor_high,
                  "nominal": view.nominal, "unit": view.unit,
                  "max_rsd_percent": view.max_rsd_percent,
                  "cautions": list(view.cautions)}
        return window, [{"seq": e.seq, "at": iso(e.at), "actor": e.actor, "action": e.action,
                         "record": f"{e.record_type}#{e.record_id}", "reason": e.reason}
                        for e in events]


def gather(db: Database, code: str) -> dict[str, Any]:
    """Everything the report shows, as plain data."""
    from prepbook.lab import auditing, batches, labels

    shown = batches.show_batch(db, code)
    window, events = _reasoned_events(db, code)
    audit = auditing.verify(db)
    points = []
    for r in shown["runs"]:
        if r["factor"] is None or r["normality_20c"] is None:
            continue
        concentration = window["nominal"] * r["factor"]
        scale = concentration / r["normality_20c"]
        points.append({"run": r["run"], "at": r["performed_at"], "status": r["status"],
                       "concentration": concentration,
                       "U": r["U"] * scale if r["U"] is not None else None})
    return {
        "batch": shown,
        "window": window,
        "chart": points,
        "corrections": events,
        "labels": labels.label_prints(db, code),
        "audit": {"ok": audit["ok"], "events": audit["events"], "head_hash": audit["head_hash"],
                  "problems": audit["problems"]},
        "printed_at": iso(utc_now()),
    }


def write_report(db: Database, *, code: str, output: str, replace: bool = False,
                 paper: str = "a4") -> dict[str, Any]:
    """Write the batch's traceability report as PDF; returns where, and the head hash shown."""
    from prepbook.render import files, report

    target = Path(output)
    if target.suffix.lower() != ".pdf":
        raise InvalidInput(f"{target} should end in .pdf")
    if paper not in report.PAPERS:
        raise InvalidInput(f"unknown paper {paper!r}; one of {', '.join(report.PAPERS)}")
    files.check_target(target, replace=replace)
    data = gather(db, code)
    pdf, pages = report.report_pdf(data, paper=paper)
    path = files.write_bytes(target, pdf, replace=replace)
    return {"batch": data["batch"]["batch"], "file": str(path), "pages": pages,
            "runs": len(data["batch"]["runs"]), "head_hash": data["audit"]["head_hash"],
            "audit_ok": data["audit"]["ok"], "printed_at": data["printed_at"]}
