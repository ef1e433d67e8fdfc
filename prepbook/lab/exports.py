"""Exports: one tidy table per kind of record, for spreadsheets and other tools.

One row per record, one column per field, units in the column names. The rows hold
typed values for the writer (``prepbook.render.exports``): times as naive UTC
``datetime`` (written ``...Z`` in CSV; date-time cells in XLSX), dates as ``date``,
readings as a ``Reading`` (the text exactly as typed, and its number: the text in CSV,
a number cell shown with the typed decimals in XLSX); computed values are the
unrounded floats of the record.
No export holds a credential: the audit export shows a passphrase hash only as its
fingerprint, as the trail itself keeps it.
"""

from __future__ import annotations

import math
from datetime import datetime, time
from decimal import Decimal, InvalidOperation
from typing import Any

import msgspec
from sqlalchemy import select
from sqlalchemy.orm import aliased

from prepbook.errors import InvalidInput
from prepbook.inputs import Reading, parse_date
from prepbook.store.audit import canonical_json
from prepbook.store.engine import Database
from prepbook.store.models import (
    AUDITED_TABLES,
    AuditEvent,
    Batch,
    Instrument,
    Lot,
    Replicate,
    Review,
    Run,
    Spec,
    Use,
)
from prepbook.store.snapshot import decoded_snapshot, secret_columns, without_secrets

KINDS = ("batches", "runs", "replicates", "uses", "assays", "audit")


def typed(text: str | None) -> Reading | str | None:
    """A reading as stored: its text, with the number it reads as (text that is not a
    plain number, from an older record, stays text)."""
    if text is None:
        return None
    try:
        value = float(Decimal(text))
    except (InvalidOperation, ValueError):
        return text
    return Reading(text=text, value=value) if math.isfinite(value) else text


def _batches(s: Any, since: datetime | None) -> tuple[list[str], list[list[Any]]]:
    parent = aliased(Batch)
    flask = aliased(Instrument)
    bal = aliased(Instrument)
    q = (select(Batch, Spec.code, Spec.name, Lot.code, parent.code, flask.code, bal.code)
         .join(Spec, Batch.spec_id == Spec.id)
         .outerjoin(Lot, Batch.solute_lot_id == Lot.id)
         .outerjoin(parent, Batch.parent_batch_id == parent.id)
         .outerjoin(flask, Batch.flask_id == flask.id)
         .outerjoin(bal, Batch.balance_id == bal.id)
         .order_by(Batch.id))
    if since is not None:
        q = q.where(Batch.made_at >= since)
    cols = ["batch", "spec", "spec_name", "method", "volume_ml", "solute_mass_g", "solute_lot",
            "concentrate_volume_ml", "from_batch", "aliquot_ml", "flask", "balance",
            "theoretical_normality_eq_per_l", "made_at_utc", "recorded_at_utc", "made_by",
            "notes", "expires_date", "retired_at_utc", "retired_by", "retired_reason"]
    rows = [[b.code, sc, sn, b.method, typed(b.volume_ml_text), typed(b.solute_mass_g_text),
             lc, typed(b.stock_volume_ml_text), pc, typed(b.aliquot_ml_text), fc, bc,
             b.theoretical_normality, b.made_at, b.recorded_at, b.made_by, b.notes, b.expires,
             b.retired_at, b.retired_by, b.retired_reason]
            for b, sc, sn, lc, pc, fc, bc in s.execute(q)]
    return cols, rows


def _runs(s: Any, since: datetime | None) -> tuple[list[str], list[list[Any]]]:
    """One row per run; the reviewer, decision and signing time of its latest review
    (blank while it has none)."""
    ref = aliased(Batch)
    bal = aliased(Instrument)
    bur = aliased(Instrument)
    q = (select(Run, Batch.code, Lot.code, ref.code, bal.code, bur.code)
         .join(Batch, Run.batch_id == Batch.id)
         .outerjoin(Lot, Run.lot_id == Lot.id)
         .outerjoin(ref, Run.reference_batch_id == ref.id)
         .outerjoin(bal, Run.balance_id == bal.id)
         .outerjoin(bur, Run.burette_id == bur.id)
         .order_by(Run.id))
    reviews = select(Review).join(Run, Review.run_id == Run.id).order_by(Review.signed_at,
                                                                           Review.id)
    if since is not None:
        q = q.where(Run.performed_at >= since)
        reviews = reviews.where(Run.performed_at >= since)
    latest = {r.run_id: r for r in s.scalars(reviews)}
    cols = ["run", "batch", "method", "status", "lot", "reference_batch", "balance", "burette",
            "temperature_c", "blank_ml", "indicator", "performed_at_utc", "recorded_at_utc",
            "analyst", "normality_eq_per_l", "normality_20c_eq_per_l", "factor",
            "sd_eq_per_l", "rsd_percent", "u_eq_per_l", "expanded_u_eq_per_l", "k",
            "reviewer", "review_decision", "reviewed_at_utc"]
    rows = []
    for r, bc, lc, rc, balc, burc in s.execute(q):
        review = latest.get(r.id)
        rows.append([r.code, bc, r.method, r.status, lc, rc, balc, burc,
                     typed(r.temperature_c_text), typed(r.blank_ml_text), r.indicator,
                     r.performed_at, r.recorded_at, r.analyst, r.normality, r.normality_20c,
                     r.factor, r.sd, r.rsd_percent, r.u, r.U, r.k,
                     review and review.reviewer, review and review.decision,
                     review and review.signed_at])
    return cols, rows


def _replicates(s: Any, since: datetime | None) -> tuple[list[str], list[list[Any]]]:
    q = (select(Replicate, Run.code, Run.method, Batch.code)
         .join(Run, Replicate.run_id == Run.id)
         .join(Batch, Run.batch_id == Batch.id)
         .order_by(Replicate.run_id, Replicate.position, Replicate.version))
    if since is not None:
        q = q.where(Replicate.created_at >= since)
    found = list(s.execute(q))
    latest: dict[tuple[int, int], int] = {}
    for r, *_ in found:
        key = (r.run_id, r.position)
        latest[key] = max(latest.get(key, 0), r.version)
    cols = ["replicate_id", "run", "batch", "position", "version", "current",
            "standard_mass_g", "aliquot_ml", "titrant_volume_ml", "excluded", "reason",
            "supersedes_id", "recorded_at_utc", "recorded_by"]
    rows = [[r.id, rc, bc, r.position, r.version, latest[(r.run_id, r.position)] == r.version,
             typed(r.amount_text) if method == "direct" else None,
             typed(r.amount_text) if method == "secondary" else None,
             typed(r.volume_ml_text), r.excluded, r.reason, r.supersedes_id, r.created_at,
             r.created_by]
            for r, rc, method, bc in found]
    return cols, rows


def _uses(s: Any, since: datetime | None) -> tuple[list[str], list[list[Any]]]:
    q = select(Use, Batch.code).join(Batch, Use.batch_id == Batch.id).order_by(Use.id)
    if since is not None:
        q = q.where(Use.used_at >= since)
    cols = ["use_id", "batch", "used_at_utc", "used_by", "volume_ml", "purpose"]
    rows = [[u.id, bc, u.used_at, u.used_by, typed(u.volume_ml_text), u.purpose]
            for u, bc in s.execute(q)]
    return cols, rows


def _audit(s: Any, since: datetime | None) -> tuple[list[str], list[list[Any]]]:
    q = select(AuditEvent).order_by(AuditEvent.seq)
    if since is not None:
        q = q.where(AuditEvent.at >= since)
    cols = ["seq", "at_utc", "actor", "action", "record_type", "record_id", "values_json",
            "reason", "performed_at_utc", "prev_hash", "hash"]
    rows = [[e.seq, e.at, e.actor, e.action, e.record_type, e.record_id,
             _shown_values(e.record_type, e.values), e.reason, e.performed_at,
             e.prev_hash, e.hash] for e in s.scalars(q)]
    return cols, rows


def _assays(s: Any, since: datetime | None) -> tuple[list[str], list[list[Any]]]:
    """One row per assay; the titrant volumes as typed, joined with ';' in their order."""
    from sqlalchemy.orm import selectinload

    from prepbook.store.models import Assay

    q = (select(Assay, Batch.code, Run.code).join(Batch, Assay.batch_id == Batch.id)
         .join(Run, Assay.run_id == Run.id).options(selectinload(Assay.replicates))
         .order_by(Assay.id))
    if since is not None:
        q = q.where(Assay.performed_at >= since)
    cols = ["assay", "batch", "run", "sample", "analyte", "reaction", "aliquot_ml",
            "sample_mass_g", "titrant_volumes_ml", "blank_ml", "temperature_c",
            "titrant_normality_20c_eq_per_l", "titrant_normality_eq_per_l",
            "titrant_u_eq_per_l", "result", "result_unit", "sd", "rsd_percent", "u",
            "expanded_u", "k", "limit_low", "limit_high", "performed_at_utc",
            "recorded_at_utc", "analyst", "use_id"]
    rows = [[a.code, bc, rc, a.sample, a.analyte, a.reaction, typed(a.aliquot_ml_text),
             typed(a.mass_g_text), ";".join(r.volume_ml_text for r in a.replicates),
             typed(a.blank_ml_text), typed(a.temperature_c_text), a.titrant_normality_20c,
             a.titrant_normality, a.titrant_u, a.result, a.result_unit, a.sd, a.rsd_percent,
             a.u, a.U, a.k, typed(a.limit_low_text), typed(a.limit_high_text), a.performed_at,
             a.recorded_at, a.analyst, a.use_id]
            for a, bc, rc in s.execute(q)]
    return cols, rows


def _shown_values(record_type: str, values: str) -> str:
    """An event's snapshot with no credential in it: an event written before passphrase
    hashes were digested shows the hash's fingerprint (so its own hash cannot be
    recomputed from the export; `prepbook audit verify` checks it in the database)."""
    table = AUDITED_TABLES.get(record_type)
    if table is None or not secret_columns(table):
        return values
    audited = decoded_snapshot(values)
    shown = without_secrets(table, audited)
    return values if shown == audited else canonical_json(shown)


_QUERIES = {"batches": _batches, "runs": _runs, "replicates": _replicates, "uses": _uses,
            "assays": _assays, "audit": _audit}


class Table(msgspec.Struct, frozen=True):
    """One export: its columns and rows, read in one transaction."""

    kind: str
    columns: list[str]
    rows: list[list[Any]]
    since: str | None


class Exported(msgspec.Struct, frozen=True):
    """What `prepbook export` wrote (the fields are the JSON keys)."""

    export: str
    format: str
    file: str
    rows: int
    columns: list[str]
    neutralised_cells: int
    since: str | None


def table(db: Database, kind: str, *, since: str | None = None) -> Table:
    """The columns and rows of one export, read in one transaction."""
    if kind not in KINDS:
        raise InvalidInput(f"unknown export {kind!r}; one of {', '.join(KINDS)}")
    since_at = datetime.combine(parse_date(since, "--since"), time()) if since else None
    with db.session(write=False) as s:
        cols, rows = _QUERIES[kind](s, since_at)
    return Table(kind=kind, columns=cols, rows=rows, since=since)
