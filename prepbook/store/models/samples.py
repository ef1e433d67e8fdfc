"""Sample titrations (assays) made with a batch in service."""

from __future__ import annotations

from datetime import datetime

from sqlalchemy import CheckConstraint, ForeignKey, Index, Text, UniqueConstraint
from sqlalchemy.orm import Mapped, mapped_column, relationship

from prepbook.store.models.base import Base
from prepbook.store.models.records import Batch, Run


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


# The next free code (``lab.batches.next_code``) is looked up as a range of codes compared
# byte by byte. SQLite's own index on each code column is BINARY (byte by byte) and serves
# it; on PostgreSQL the column's index follows the database's collation (en_US.UTF-8,
# say), so revision d3f5a7c9e1b2 adds these there, on ``code COLLATE "C"``. Declared on
# the column (Alembic compares an index's columns, not their collation) and marked for
# PostgreSQL only (``store.audit.schema_check.comparing``).
for _model in (Batch, Run, Assay):
    Index(f"ix_{_model.__tablename__}_code_bytes", _model.code, info={"backend": "postgresql"})
