"""The tables of the prepbook record, as SQLAlchemy 2 declarative models.

Readings are kept exactly as entered in ``*_text`` columns and never reparsed or
rewritten; computed values sit beside them. Times are naive UTC ``DateTime``.
No row is ever deleted. The only columns that may change after a row is written
are listed in each class's ``__updatable__`` (the session refuses anything else,
see ``prepbook.store.engine``), and every write carries an audit event
(``prepbook.store.audit``).

``prepbook.store.snapshot`` turns a row into the canonical, JSON-safe dict the audit
trail stores.
"""

from __future__ import annotations

from datetime import date, datetime
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
    LargeBinary,
    MetaData,
    String,
    Table,
    Text,
    UniqueConstraint,
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
RUN_STATUSES = ("awaiting-review", "accepted", "rejected", "revoked")
DECISIONS = ("accept", "reject", "revoke")


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
    __updatable__ = frozenset({"active", "failed_attempts", "passphrase_hash", "role"})

    id: Mapped[int] = mapped_column(primary_key=True)
    name: Mapped[str] = mapped_column(unique=True)
    role: Mapped[str]
    # A secret: the audit trail keeps only its fingerprint (sha256 of the hash text),
    # enough to see that it changed, nothing to attack offline.
    passphrase_hash: Mapped[str | None] = mapped_column(info={"audit": "digest",
                                                                    "secret": True})
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
    # Who wrote it at the machine: the operating-system login and the host (None on
    # events written before they were recorded); ``key_id`` is the fingerprint of the
    # audit key of a keyed event. Part of the hashed text when present.
    os_login: Mapped[str | None]
    host: Mapped[str | None]
    key_id: Mapped[str | None]


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


class AuditKeying(Base):
    """The single row (id=1) saying how this trail is kept, recorded at its first write.

    ``lab_id`` names the lab's trail in checkpoints and witness files; ``scheme`` is the
    hash scheme (sha256 or hmac-sha256) and ``key_fingerprint`` the fingerprint of the
    audit key of a keyed trail; ``public_key`` is the lab's Ed25519 checkpoint-signing
    public key (hex), recorded at the first checkpoint.
    """

    __tablename__ = "audit_keying"
    __table_args__ = (CheckConstraint("id = 1", name="single_row"),)
    __updatable__ = frozenset({"public_key"})

    id: Mapped[int] = mapped_column(primary_key=True, autoincrement=False)
    lab_id: Mapped[str]
    scheme: Mapped[str]
    key_fingerprint: Mapped[str | None]
    public_key: Mapped[str | None]
    recorded_at: Mapped[datetime]


class AuditCheckpoint(Base):
    """A signed statement that the trail had ``events`` events ending in ``head_hash``.

    The same line goes to the witness folder outside the database; ``signature`` is
    the Ed25519 signature (hex) of ``prepbook.store.audit.checkpoints.message``.
    """

    __tablename__ = "audit_checkpoints"

    id: Mapped[int] = mapped_column(primary_key=True)
    lab_id: Mapped[str]
    events: Mapped[int]
    head_hash: Mapped[str]
    made_at: Mapped[datetime]
    public_key: Mapped[str]
    signature: Mapped[str]
class Assay(Base):
    """A sample titrated with a batch in service: the sample as entered (an aliquot or a
    mass), the standardization whose normality was used (``titrant_normality_20c`` as it
    stood then, ``titrant_normality`` at the temperature of use), the draw of titrant
    (``use_id``) and the result in ``result_unit``. Never rewritten: a later correction,
    revocation or drift of the run is followed to it on reading (``lab.impact``)."""

    __tablename__ = "assays"
    __table_args__ = (
        CheckConstraint("(aliquot_ml_text IS NULL) <> (mass_g_text IS NULL)",
                        name="one_amount"),
    )

    id: Mapped[int] = mapped_column(primary_key=True)
    code: Mapped[str] = mapped_column(unique=True)
    batch_id: Mapped[int] = mapped_column(ForeignKey("batches.id"), index=True)
    run_id: Mapped[int] = mapped_column(ForeignKey("runs.id"), index=True)
    use_id: Mapped[int] = mapped_column(ForeignKey("uses.id"), index=True)
    sample: Mapped[str]
    analyte: Mapped[str]
    reaction: Mapped[str | None]
    aliquot_ml_text: Mapped[str | None]
    mass_g_text: Mapped[str | None]
    blank_ml_text: Mapped[str]
    temperature_c_text: Mapped[str]
    titrant_normality_20c: Mapped[float]
    titrant_normality: Mapped[float]
    titrant_u: Mapped[float | None]
    limit_low_text: Mapped[str | None]
    limit_high_text: Mapped[str | None]
    performed_at: Mapped[datetime]
    recorded_at: Mapped[datetime]
    analyst: Mapped[str]
    result: Mapped[float]
    result_unit: Mapped[str]
    sd: Mapped[float | None]
    rsd_percent: Mapped[float | None]
    u: Mapped[float | None]
    U: Mapped[float | None] = mapped_column("expanded_u")  # noqa: N815 (the trade's symbol)
    k: Mapped[float | None]
    # The whole computed result (statistics, budget, warnings): the audit trail keeps
    # its fingerprint, the readings and the result in full.
    result_json: Mapped[str] = mapped_column(Text, info={"audit": "digest"})

    batch: Mapped[Batch] = relationship()
    run: Mapped[Run] = relationship()
    replicates: Mapped[list[AssayReplicate]] = relationship(
        back_populates="assay", order_by="AssayReplicate.position")


class AssayReplicate(Base):
    """One titration of a sample: the titrant volume at the endpoint, as entered."""

    __tablename__ = "assay_replicates"
    __table_args__ = (
        UniqueConstraint("assay_id", "position"),
        CheckConstraint("position >= 1", name="position"),
    )

    id: Mapped[int] = mapped_column(primary_key=True)
    assay_id: Mapped[int] = mapped_column(ForeignKey("assays.id"), index=True)
    position: Mapped[int]
    volume_ml_text: Mapped[str]

    assay: Mapped[Assay] = relationship(back_populates="replicates")


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
    Assay,
    AssayReplicate,
)


def table_of(model: type[Base]) -> Table:
    """A model's table (SQLAlchemy types ``__table__`` as any FROM clause; a declarative
    model's is always a ``Table``)."""
    table = model.__table__
    assert isinstance(table, Table)
    return table


AUDITED_TABLES: dict[str, Table] = {table_of(m).name: table_of(m) for m in AUDITED_MODELS}


class InstrumentConnection(Base):
    """How prepbook reaches a balance: its port and print-line profile. A new connection
    is a new version; the latest one is used."""

    __tablename__ = "instrument_connections"
    __table_args__ = (UniqueConstraint("instrument_id", "version"),
                      CheckConstraint("version >= 1", name="version"))

    id: Mapped[int] = mapped_column(primary_key=True)
    instrument_id: Mapped[int] = mapped_column(ForeignKey("instruments.id"), index=True)
    version: Mapped[int]
    port: Mapped[str] = mapped_column(Text)
    profile: Mapped[str]
    created_at: Mapped[datetime]
    created_by: Mapped[str]


READING_SOURCES = ("typed", "balance", "curve")


class ReplicateSource(Base):
    """Where one replicate version's readings came from: ``amount_source`` "typed" or
    "balance" (then the balance's code, when it was read and the line it printed, as
    received), ``volume_source`` "typed" or "curve" (the endpoint of its stored curve).
    A replicate recorded before sources were kept has none."""

    __tablename__ = "replicate_sources"
    __table_args__ = (
        CheckConstraint("amount_source IN ('typed', 'balance')", name="amount_source"),
        CheckConstraint("volume_source IN ('typed', 'curve')", name="volume_source"),
    )

    id: Mapped[int] = mapped_column(primary_key=True)
    replicate_id: Mapped[int] = mapped_column(ForeignKey("replicates.id"), unique=True)
    amount_source: Mapped[str]
    amount_instrument: Mapped[str | None]
    amount_read_at: Mapped[datetime | None]
    amount_raw: Mapped[str | None] = mapped_column(Text)
    volume_source: Mapped[str]
    created_at: Mapped[datetime]
    created_by: Mapped[str]


class ReplicateCurve(Base):
    """The titration curve recorded for one replicate, the exported file byte for byte.

    The audit trail holds ``content`` as its fingerprint (the SHA-256 of the bytes) and
    ``sha256`` in full, so a file changed behind prepbook's back is found."""

    __tablename__ = "replicate_curves"
    __table_args__ = (UniqueConstraint("run_id", "position"),
                      CheckConstraint("position >= 1", name="position"))

    id: Mapped[int] = mapped_column(primary_key=True)
    run_id: Mapped[int] = mapped_column(ForeignKey("runs.id"), index=True)
    position: Mapped[int]
    file_name: Mapped[str] = mapped_column(Text)
    content: Mapped[bytes] = mapped_column(LargeBinary, info={"audit": "digest"})
    sha256: Mapped[str]
    size_bytes: Mapped[int]
    created_at: Mapped[datetime]
    created_by: Mapped[str]


_READINGS_MODELS: tuple[type[Base], ...] = (InstrumentConnection, ReplicateSource,
                                            ReplicateCurve)
AUDITED_MODELS = (*AUDITED_MODELS, *_READINGS_MODELS)
AUDITED_TABLES.update({table_of(m).name: table_of(m) for m in _READINGS_MODELS})


class LoginSession(Base):
    """A person signed in from one operating-system account and host, to this database.

    Only the SHA-256 of the session's random token is kept (the token itself is in the
    owner's session file); ``login_seq`` is the audit event of the login, which names
    the same hash. Not an audited table: ``last_seen_at`` moves with every write the
    session makes (the idle clock); the login and logout are events on the user.
    """

    __tablename__ = "login_sessions"
    __updatable__ = frozenset({"last_seen_at", "ended_at", "ended_reason"})

    id: Mapped[int] = mapped_column(primary_key=True)
    user_id: Mapped[int] = mapped_column(ForeignKey("users.id"), index=True)
    token_sha256: Mapped[str] = mapped_column(unique=True)
    os_login: Mapped[str]
    host: Mapped[str]
    login_seq: Mapped[int]
    started_at: Mapped[datetime]
    last_seen_at: Mapped[datetime]
    ended_at: Mapped[datetime | None]
    ended_reason: Mapped[str | None]
