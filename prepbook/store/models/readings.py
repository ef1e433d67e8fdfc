"""Where readings came from: a balance's connection, each replicate's sources and
the titration curves stored with replicates."""

from __future__ import annotations

from datetime import datetime

from sqlalchemy import CheckConstraint, ForeignKey, LargeBinary, Text, UniqueConstraint
from sqlalchemy.orm import Mapped, mapped_column

from prepbook.store.models.base import Base

READING_SOURCES = ("typed", "balance", "curve")


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
