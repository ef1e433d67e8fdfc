"""The tables of the prepbook record, as SQLAlchemy 2 declarative models.

Readings are kept exactly as entered in ``*_text`` columns and never reparsed or
rewritten; computed values sit beside them. Times are naive UTC ``DateTime``.
No row is ever deleted. The only columns that may change after a row is written
are listed in each class's ``__updatable__`` (the session refuses anything else,
see ``prepbook.store.engine``), and every write carries an audit event
(``prepbook.store.audit``).

``snapshot(row)`` turns a row into the canonical, JSON-safe dict the audit trail
stores, the same on SQLite and PostgreSQL. A column marked
``info={"audit": "digest"}`` (a large text derived from the rest of the record,
such as a run's computed result) enters the snapshot as its fingerprint
``sha256:<hex>`` instead of in full; see ``fingerprint``.
"""

from __future__ import annotations

import hashlib
import math
import re
from collections.abc import Callable, Mapping
from datetime import UTC, date, datetime
from decimal import Decimal
from functools import cache
from typing import Any, ClassVar

from sqlalchemy import (
    Boolean,
    CheckConstraint,
    Date,
    DateTime,
    Float,
    ForeignKey,
    Index,
    Integer,
    MetaData,
    String,
    Table,
    Text,
    UniqueConstraint,
    inspect,
)
from sqlalchemy.orm import DeclarativeBase, Mapped, mapped_column, relationship

# Stable constraint names, so Alembic batch mode on SQLite and PostgreSQL agree.
NAMING_CONVENTION: dict[str, str] = {
    "ix": "ix_%(table_name)s_%(column_0_N_name)s",
    "uq": "uq_%(table_name)s_%(column_0_N_name)s",
    "ck": "ck_%(table_name)s_%(constraint_name)s",
    "fk": "fk_%(table_name)s_%(column_0_name)s_%(referred_table_name)s",
    "pk": "pk_%(table_name)s",
}

ROLES = ("technician", "reviewer", "admin")
UNITS = ("N", "M")
INSTRUMENT_KINDS = ("balance", "burette", "flask", "pipette", "thermometer", "meter")
BATCH_METHODS = ("solid", "concentrate", "dilution")
RUN_METHODS = ("direct", "secondary")
RUN_STATUSES = ("awaiting-review", "accepted", "rejected")
DECISIONS = ("accept", "reject")


def _one_of(column: str, values: tuple[str, ...]) -> str:
    """SQL for a CHECK that keeps an enumerated text column inside its allowed values."""
    quoted = ", ".join(f"'{v}'" for v in values)
    return f"{column} IN ({quoted})"


class Base(DeclarativeBase):
    """Declarative root carrying the shared metadata and its naming convention."""

    metadata = MetaData(naming_convention=NAMING_CONVENTION)
    type_annotation_map: ClassVar[dict[Any, Any]] = {
        str: String(),
        int: Integer(),
        float: Float(),
        bool: Boolean(),
        datetime: DateTime(),
        date: Date(),
    }

    # Columns that may change after insert (each change with an audit event).
    __updatable__: ClassVar[frozenset[str]] = frozenset()


class User(Base):
    """A person who records, standardizes or reviews; passphrase kept only as a slow hash."""

    __tablename__ = "users"
    __table_args__ = (CheckConstraint(_one_of("role", ROLES), name="role"),)
    __updatable__ = frozenset({"active", "failed_attempts", "passphrase_hash"})

    id: Mapped[int] = mapped_column(primary_key=True)
    name: Mapped[str] = mapped_column(unique=True)
    role: Mapped[str]
    passphrase_hash: Mapped[str | None]
    active: Mapped[bool] = mapped_column(default=True)
    failed_attempts: Mapped[int] = mapped_column(default=0)
    created_at: Mapped[datetime]
    created_by: Mapped[str]


class Material(Base):
    """A primary standard or solute; ``data`` is the JSON of its catalog entry."""

    __tablename__ = "materials"

    id: Mapped[int] = mapped_column(primary_key=True)
    code: Mapped[str] = mapped_column(unique=True)
    name: Mapped[str]
    formula: Mapped[str]
    data: Mapped[str] = mapped_column(Text)
    builtin: Mapped[bool] = mapped_column(default=False)
    created_at: Mapped[datetime]


class Spec(Base):
    """A solution the lab keeps (solute, nominal, rules, intervals) as JSON in ``data``."""

    __tablename__ = "specs"
    __table_args__ = (CheckConstraint(_one_of("unit", UNITS), name="unit"),)

    id: Mapped[int] = mapped_column(primary_key=True)
    code: Mapped[str] = mapped_column(unique=True)
    name: Mapped[str]
    solute_code: Mapped[str]
    nominal: Mapped[float]
    unit: Mapped[str]
    data: Mapped[str] = mapped_column(Text)
    builtin: Mapped[bool] = mapped_column(default=False)
    created_at: Mapped[datetime]
    created_by: Mapped[str]


class Lot(Base):
    """A primary-standard lot with its certificate purity as entered."""

    __tablename__ = "lots"

    id: Mapped[int] = mapped_column(primary_key=True)
    code: Mapped[str] = mapped_column(unique=True)
    material_code: Mapped[str]
    purity_text: Mapped[str]
    purity_u_text: Mapped[str | None]
    expires: Mapped[date]
    certificate: Mapped[str | None]
    dried_on: Mapped[date | None]
    opened_on: Mapped[date | None]
    created_at: Mapped[datetime]
    created_by: Mapped[str]


class Instrument(Base):
    """A balance, burette, flask, pipette, thermometer or meter and its calibration due date."""

    __tablename__ = "instruments"
    __table_args__ = (CheckConstraint(_one_of("kind", INSTRUMENT_KINDS), name="kind"),)
    # A recalibration moves the due date; the audit trail keeps every earlier one.
    __updatable__ = frozenset({"due"})

    id: Mapped[int] = mapped_column(primary_key=True)
    code: Mapped[str] = mapped_column(unique=True)
    kind: Mapped[str]
    due: Mapped[date]
    capacity_text: Mapped[str | None]
    tolerance_text: Mapped[str | None]
    readability_text: Mapped[str | None]
    created_at: Mapped[datetime]
    created_by: Mapped[str]


class Batch(Base):
    """One prepared bottle of titrant: how it was made, from what, with which instruments."""

    __tablename__ = "batches"
    __table_args__ = (CheckConstraint(_one_of("method", BATCH_METHODS), name="method"),)
    __updatable__ = frozenset({"retired_at", "retired_by", "retired_reason"})

    id: Mapped[int] = mapped_column(primary_key=True)
    code: Mapped[str] = mapped_column(unique=True)
    spec_id: Mapped[int] = mapped_column(ForeignKey("specs.id"), index=True)
    method: Mapped[str]
    volume_ml_text: Mapped[str]
    solute_mass_g_text: Mapped[str | None]
    solute_lot_id: Mapped[int | None] = mapped_column(ForeignKey("lots.id"))
    stock_volume_ml_text: Mapped[str | None]
    parent_batch_id: Mapped[int | None] = mapped_column(ForeignKey("batches.id"), index=True)
    aliquot_ml_text: Mapped[str | None]
    flask_id: Mapped[int | None] = mapped_column(ForeignKey("instruments.id"))
    balance_id: Mapped[int | None] = mapped_column(ForeignKey("instruments.id"))
    theoretical_normality: Mapped[float | None]
    made_at: Mapped[datetime]
    recorded_at: Mapped[datetime]
    made_by: Mapped[str]
    notes: Mapped[str | None] = mapped_column(Text)
    expires: Mapped[date]
    # Indexed: the board reads only the batches not retired (ix_batches_retired_at).
    retired_at: Mapped[datetime | None] = mapped_column(index=True)
    retired_by: Mapped[str | None]
    retired_reason: Mapped[str | None] = mapped_column(Text)

    spec: Mapped[Spec] = relationship()
    solute_lot: Mapped[Lot | None] = relationship()
    parent_batch: Mapped[Batch | None] = relationship(remote_side=[id])
    flask: Mapped[Instrument | None] = relationship(foreign_keys=[flask_id])
    balance: Mapped[Instrument | None] = relationship(foreign_keys=[balance_id])
    runs: Mapped[list[Run]] = relationship(
        back_populates="batch", foreign_keys="Run.batch_id", order_by="Run.id"
    )


class Run(Base):
    """One standardization of a batch: conditions as entered, computed result, verdict."""

    __tablename__ = "runs"
    __table_args__ = (
        CheckConstraint(_one_of("method", RUN_METHODS), name="method"),
        CheckConstraint(_one_of("status", RUN_STATUSES), name="status"),
        Index("ix_runs_batch_id_status", "batch_id", "status"),
    )
    __updatable__ = frozenset(
        {
            "status",
            "normality",
            "normality_20c",
            "factor",
            "sd",
            "rsd_percent",
            "u",
            "U",
            "k",
            "result_json",
        }
    )

    id: Mapped[int] = mapped_column(primary_key=True)
    code: Mapped[str] = mapped_column(unique=True)
    # Looked up through ix_runs_batch_id_status (batch_id leads it).
    batch_id: Mapped[int] = mapped_column(ForeignKey("batches.id"))
    method: Mapped[str]
    lot_id: Mapped[int | None] = mapped_column(ForeignKey("lots.id"))
    reference_batch_id: Mapped[int | None] = mapped_column(ForeignKey("batches.id"), index=True)
    balance_id: Mapped[int | None] = mapped_column(ForeignKey("instruments.id"))
    burette_id: Mapped[int | None] = mapped_column(ForeignKey("instruments.id"))
    temperature_c_text: Mapped[str | None]
    blank_ml_text: Mapped[str | None]
    indicator: Mapped[str | None]
    performed_at: Mapped[datetime]
    recorded_at: Mapped[datetime]
    analyst: Mapped[str]
    status: Mapped[str] = mapped_column(index=True)
    normality: Mapped[float | None]
    normality_20c: Mapped[float | None]
    factor: Mapped[float | None]
    sd: Mapped[float | None]
    rsd_percent: Mapped[float | None]
    u: Mapped[float | None]
    U: Mapped[float | None] = mapped_column("expanded_u")  # noqa: N815 (the trade's symbol)
    k: Mapped[float | None]
    # Derived from the inputs above (verdict, checks, budget; ~3.5 KB of JSON): the
    # audit trail keeps its fingerprint, the masses, volumes and result in full.
    result_json: Mapped[str | None] = mapped_column(Text, info={"audit": "digest"})

    batch: Mapped[Batch] = relationship(back_populates="runs", foreign_keys=[batch_id])
    lot: Mapped[Lot | None] = relationship()
    reference_batch: Mapped[Batch | None] = relationship(foreign_keys=[reference_batch_id])
    balance: Mapped[Instrument | None] = relationship(foreign_keys=[balance_id])
    burette: Mapped[Instrument | None] = relationship(foreign_keys=[burette_id])
    replicates: Mapped[list[Replicate]] = relationship(
        back_populates="run", order_by=lambda: (Replicate.position, Replicate.version)
    )
    reviews: Mapped[list[Review]] = relationship(back_populates="run", order_by="Review.id")


class Replicate(Base):
    """One weighing/aliquot and endpoint reading; a correction is a new version, never an edit."""

    __tablename__ = "replicates"
    __table_args__ = (
        UniqueConstraint("run_id", "position", "version"),
        CheckConstraint("position >= 1", name="position"),
        CheckConstraint("version >= 1", name="version"),
    )

    id: Mapped[int] = mapped_column(primary_key=True)
    run_id: Mapped[int] = mapped_column(ForeignKey("runs.id"), index=True)
    position: Mapped[int]
    version: Mapped[int] = mapped_column(default=1)
    amount_text: Mapped[str]
    volume_ml_text: Mapped[str]
    excluded: Mapped[bool] = mapped_column(default=False)
    reason: Mapped[str | None] = mapped_column(Text)
    supersedes_id: Mapped[int | None] = mapped_column(ForeignKey("replicates.id"))
    created_at: Mapped[datetime]
    created_by: Mapped[str]

    run: Mapped[Run] = relationship(back_populates="replicates")
    supersedes: Mapped[Replicate | None] = relationship(remote_side=[id])


class Review(Base):
    """A second person's signed decision on a run."""

    __tablename__ = "reviews"
    __table_args__ = (CheckConstraint(_one_of("decision", DECISIONS), name="decision"),)

    id: Mapped[int] = mapped_column(primary_key=True)
    run_id: Mapped[int] = mapped_column(ForeignKey("runs.id"), index=True)
    reviewer: Mapped[str]
    decision: Mapped[str]
    reason: Mapped[str | None] = mapped_column(Text)
    signed_at: Mapped[datetime]

    run: Mapped[Run] = relationship(back_populates="reviews")


class Use(Base):
    """A draw from a batch, kept so a bad batch's impact can be traced."""

    __tablename__ = "uses"

    id: Mapped[int] = mapped_column(primary_key=True)
    batch_id: Mapped[int] = mapped_column(ForeignKey("batches.id"), index=True)
    used_at: Mapped[datetime]
    used_by: Mapped[str]
    volume_ml_text: Mapped[str | None]
    purpose: Mapped[str | None] = mapped_column(Text)

    batch: Mapped[Batch] = relationship()


class Setting(Base):
    """A lab-wide setting; only its value (and who/when) changes."""

    __tablename__ = "settings"
    __updatable__ = frozenset({"value", "updated_at", "updated_by"})

    id: Mapped[int] = mapped_column(primary_key=True)
    key: Mapped[str] = mapped_column(unique=True)
    value: Mapped[str] = mapped_column(Text)
    updated_at: Mapped[datetime]
    updated_by: Mapped[str]


class AuditEvent(Base):
    """One link of the append-only, hash-chained audit trail."""

    __tablename__ = "audit_events"
    __table_args__ = (Index("ix_audit_events_record_type_record_id", "record_type", "record_id"),)

    seq: Mapped[int] = mapped_column(primary_key=True, autoincrement=False)
    at: Mapped[datetime]
    actor: Mapped[str]
    action: Mapped[str]
    record_type: Mapped[str]
    record_id: Mapped[int]
    values: Mapped[str] = mapped_column(Text)
    reason: Mapped[str | None] = mapped_column(Text)
    performed_at: Mapped[datetime | None]
    prev_hash: Mapped[str | None]
    hash: Mapped[str]


class AuditHead(Base):
    """The single row (id=1) naming the last event; locked while an event is written."""

    __tablename__ = "audit_head"
    __table_args__ = (CheckConstraint("id = 1", name="single_row"),)
    __updatable__ = frozenset({"seq", "hash"})

    id: Mapped[int] = mapped_column(primary_key=True, autoincrement=False)
    seq: Mapped[int] = mapped_column(default=0)
    hash: Mapped[str | None]


class LabelPrint(Base):
    """One print of a bottle label, with what it showed, so an outdated label can be found.

    Exactly one of ``batch_id`` (a titrant bottle) and ``lot_id`` (a primary-standard
    bottle) is set; ``run_id`` is the standardization whose result the label showed
    (None when the batch had no accepted run yet). ``shown_json`` is the canonical
    JSON of every field as printed.
    """

    __tablename__ = "label_prints"
    __table_args__ = (
        CheckConstraint("(batch_id IS NULL) <> (lot_id IS NULL)", name="one_subject"),
        CheckConstraint("copies >= 1", name="copies"),
    )

    id: Mapped[int] = mapped_column(primary_key=True)
    batch_id: Mapped[int | None] = mapped_column(ForeignKey("batches.id"), index=True)
    lot_id: Mapped[int | None] = mapped_column(ForeignKey("lots.id"), index=True)
    run_id: Mapped[int | None] = mapped_column(ForeignKey("runs.id"))
    printed_at: Mapped[datetime]
    printed_by: Mapped[str]
    size: Mapped[str]
    sheet: Mapped[str | None]
    copies: Mapped[int]
    normality: Mapped[float | None]
    factor: Mapped[float | None]
    standardized_on: Mapped[date | None]
    restandardize_by: Mapped[date | None]
    expires: Mapped[date | None]
    file_name: Mapped[str] = mapped_column(Text)
    shown_json: Mapped[str] = mapped_column(Text)


# Every table whose rows the audit trail vouches for (all but the trail itself).
AUDITED_MODELS: tuple[type[Base], ...] = (
    User,
    Material,
    Spec,
    Lot,
    Instrument,
    Batch,
    Run,
    Replicate,
    Review,
    Use,
    Setting,
    LabelPrint,
)


def table_of(model: type[Base]) -> Table:
    """A model's table (SQLAlchemy types ``__table__`` as any FROM clause; a declarative
    model's is always a ``Table``)."""
    table = model.__table__
    assert isinstance(table, Table)
    return table


AUDITED_TABLES: dict[str, Table] = {table_of(m).name: table_of(m) for m in AUDITED_MODELS}


def _datetime(value: Any) -> str:
    if isinstance(value, datetime):
        if value.tzinfo is not None:
            value = value.astimezone(UTC).replace(tzinfo=None)
        return value.isoformat(timespec="microseconds")
    return str(value)


def _date(value: Any) -> str:
    if isinstance(value, datetime):
        value = value.date()
    return value.isoformat() if isinstance(value, date) else str(value)


def _float(value: Any) -> float | str:
    number = float(value)
    # JSON has no NaN/Infinity; keep them readable rather than failing the write.
    return number if math.isfinite(number) else repr(number)


def _int(value: Any) -> int:
    """A whole number as stored; anything else (1.25, 'x', a blob) is refused, never
    truncated, so a fraction written into a whole-number column cannot pass as it."""
    if type(value) is int:
        return value
    if isinstance(value, float) and value.is_integer():
        return int(value)
    raise ValueError(f"{value!r} is not a whole number")


def _bool(value: Any) -> bool:
    """A flag as stored: True/False or 1/0 only (not 2, '' or 'yes')."""
    if type(value) is bool:
        return value
    if type(value) is int and value in (0, 1):
        return bool(value)
    raise ValueError(f"{value!r} is not a yes/no flag")


def _text(value: Any) -> str:
    return value if type(value) is str else str(value)


def _converter(column_type: Any) -> Callable[[Any], Any]:
    """The canonicalising function for one column type (chosen once per column)."""
    if isinstance(column_type, DateTime):
        return _datetime
    if isinstance(column_type, Date):
        return _date
    if isinstance(column_type, Boolean):
        return _bool
    if isinstance(column_type, Float):
        return _float
    if isinstance(column_type, Integer):
        return _int
    if isinstance(column_type, String):  # Text is a String
        return _text
    return lambda value: str(value) if isinstance(value, Decimal) else value


def canonical_value(column_type: Any, value: Any) -> Any:
    """One column value in the form both databases agree on (JSON-safe, type-driven)."""
    return None if value is None else _converter(column_type)(value)


FINGERPRINT_PREFIX = "sha256:"
_FINGERPRINT = re.compile(r"sha256:[0-9a-f]{64}")


def fingerprint(value: Any) -> str:
    """``sha256:<hex>`` of a text column's UTF-8 text: what the snapshot holds for it.

    Any change to the text changes the fingerprint, so the row check of ``audit
    verify`` still finds an edit to a digested column.
    """
    text = value if type(value) is str else str(value)
    return FINGERPRINT_PREFIX + hashlib.sha256(text.encode()).hexdigest()


def is_fingerprint(value: Any) -> bool:
    """Whether a snapshot value has the exact shape ``fingerprint`` writes."""
    return type(value) is str and _FINGERPRINT.fullmatch(value) is not None


def audited_in_digest(column: Any) -> bool:
    """Whether the audit snapshot holds this column as its fingerprint."""
    return bool(column.info.get("audit") == "digest")


@cache
def digested_columns(table: Table) -> tuple[str, ...]:
    """The names of ``table``'s columns that the snapshot holds as fingerprints, sorted."""
    return tuple(sorted(c.name for c in table.columns if audited_in_digest(c)))


def legacy_to_digest(table: Table, audited: dict[str, Any]) -> dict[str, Any]:
    """A snapshot written before a column was digested, in today's form.

    Events recorded before ``fingerprint`` existed hold the full text of a digested
    column; that text is replaced by its fingerprint (a value already shaped like
    one is taken as one), so the old snapshot compares with a row read today. The
    event itself is never rewritten: its hash is over the text it stores.
    """
    names = digested_columns(table)
    if not names:
        return audited
    out = dict(audited)
    for name in names:
        value = out.get(name)
        if isinstance(value, str) and not is_fingerprint(value):
            out[name] = fingerprint(value)
    return out


def passthrough_type(column: Any) -> type | None:
    """The type a driver value of this column already has when it is canonical.

    Text read as ``str`` and integers read as ``int`` need no canonicaliser (the hot
    path of ``audit verify``); None when every value goes through it.
    """
    convert = _column_converter(column)
    if convert is _text:
        return str
    if convert is _int:
        return int
    return None


def _column_converter(column: Any) -> Callable[[Any], Any]:
    return fingerprint if audited_in_digest(column) else _converter(column.type)


@cache
def snapshot_columns(table: Table) -> tuple[tuple[str, Callable[[Any], Any]], ...]:
    """(column name, canonicaliser) for every column of ``table``, sorted by name.

    Sorted so a dict built in this order dumps to the same JSON as ``sort_keys``.
    A digested column's canonicaliser is ``fingerprint``.
    """
    return tuple(sorted((c.name, _column_converter(c)) for c in table.columns))


def snapshot_mapping(table: Table, values: Mapping[str, Any]) -> dict[str, Any]:
    """Canonical snapshot from a mapping keyed by column name (e.g. a Core result row)."""
    return {
        name: None if values[name] is None else convert(values[name])
        for name, convert in snapshot_columns(table)
    }


def snapshot(row: Base) -> dict[str, Any]:
    """All columns of an ORM row, keyed by column name, canonical and JSON-safe.

    Keyed by the database column name (``expanded_u``, not ``U``) so the snapshot
    can be compared with a plain read of the table.
    """
    mapper = inspect(row).mapper
    table = mapper.local_table
    assert isinstance(table, Table)  # declarative models map one table each
    by_name: dict[str, Any] = {}
    for prop in mapper.column_attrs:
        for column in prop.columns:
            if column.table is table:
                by_name[column.name] = getattr(row, prop.key)
    return snapshot_mapping(table, by_name)
