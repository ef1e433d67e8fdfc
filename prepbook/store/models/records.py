"""The lab's own records: people, the catalog, lots, instruments, batches, their
standardizations and reviews, uses, settings and label prints."""

from __future__ import annotations

from datetime import date, datetime

from sqlalchemy import CheckConstraint, ForeignKey, Index, Text, UniqueConstraint
from sqlalchemy.orm import Mapped, mapped_column, relationship

from prepbook.store.models.base import (
    BATCH_METHODS,
    DECISIONS,
    INSTRUMENT_KINDS,
    ROLES,
    RUN_METHODS,
    RUN_STATUSES,
    UNITS,
    Base,
    _one_of,
)


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
    # A concentrate's density (g/mL) from its certificate; its assay (% w/w) is purity_text.
    density_text: Mapped[str | None] = mapped_column(default=None)


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
