"""The tables of the prepbook record, as SQLAlchemy 2 declarative models, in four
modules (``records``, ``readings``, ``samples``, ``trail``) on one ``Base``; every
name is imported from here.

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

from sqlalchemy import Table

from prepbook.store.models.base import (
    BATCH_METHODS,
    DECISIONS,
    INSTRUMENT_KINDS,
    NAMING_CONVENTION,
    ROLES,
    RUN_METHODS,
    RUN_STATUSES,
    UNITS,
    Base,
    table_of,
)
from prepbook.store.models.readings import (
    READING_SOURCES,
    InstrumentConnection,
    ReplicateCurve,
    ReplicateSource,
)
from prepbook.store.models.records import (
    Batch,
    Instrument,
    LabelPrint,
    Lot,
    Material,
    Replicate,
    Review,
    Run,
    Setting,
    Spec,
    Use,
    User,
)
from prepbook.store.models.samples import Assay, AssayReplicate
from prepbook.store.models.trail import (
    AuditCheckpoint,
    AuditEvent,
    AuditHead,
    AuditKeying,
    LoginSession,
)

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
    InstrumentConnection,
    ReplicateSource,
    ReplicateCurve,
)
AUDITED_TABLES: dict[str, Table] = {table_of(m).name: table_of(m) for m in AUDITED_MODELS}

__all__ = [
    "AUDITED_MODELS", "AUDITED_TABLES", "BATCH_METHODS", "DECISIONS", "INSTRUMENT_KINDS",
    "NAMING_CONVENTION", "READING_SOURCES", "ROLES", "RUN_METHODS", "RUN_STATUSES", "UNITS",
    "Assay", "AssayReplicate", "AuditCheckpoint", "AuditEvent", "AuditHead", "AuditKeying",
    "Base", "Batch", "Instrument", "InstrumentConnection", "LabelPrint", "LoginSession", "Lot",
    "Material", "Replicate", "ReplicateCurve", "ReplicateSource", "Review", "Run", "Setting",
    "Spec", "Use", "User", "table_of",
]
