"""Titration curves stored with replicates: the exported file, byte for byte.

``store`` writes a replicate's curve (audited; the trail holds the SHA-256 of the
bytes), ``load`` returns it exactly as stored, ``curves_of_runs`` reads the curves of
some runs for ``batch show`` and the report, each analysed again from its stored bytes.
"""

from __future__ import annotations

import hashlib
from pathlib import Path

import msgspec
from sqlalchemy import select
from sqlalchemy.orm import Session

from prepbook.devices.records import RecordedCurve, recorded_curve
from prepbook.errors import IntegrityError, InvalidInput, NotFound
from prepbook.inputs import utc_now
from prepbook.lab.common import by_code, write
from prepbook.store.engine import Database
from prepbook.store.models import ReplicateCurve, Run


class StoredCurve(msgspec.Struct, frozen=True):
    """A replicate's stored curve: which run and replicate, the file's name and hash,
    and what prepbook reads in it."""

    run: str
    position: int
    file_name: str
    sha256: str
    size_bytes: int
    curve: RecordedCurve


def read_file(path_text: str) -> RecordedCurve:
    """A curve file from disk, read and analysed (refused in one line if it cannot be)."""
    path = Path(path_text).expanduser()
    try:
        content = path.read_bytes()
    except OSError as exc:
        raise InvalidInput(f"cannot read the curve file {path_text!r}: "
                           f"{exc.strerror or exc}") from None
    return recorded_curve(path.name, content)


def store(s: Session, actor: str, run: Run, position: int, curve: RecordedCurve) -> None:
    """Keep a replicate's curve file with the run (in the caller's transaction)."""
    write(s, actor, "replicate.curve", ReplicateCurve(
        run_id=run.id, position=position, file_name=curve.file_name, content=curve.content,
        sha256=curve.sha256, size_bytes=len(curve.content), created_at=utc_now(),
        created_by=actor))


def _analysed(run: str, row: ReplicateCurve) -> StoredCurve:
    content = bytes(row.content)
    if hashlib.sha256(content).hexdigest() != row.sha256:
        raise IntegrityError(f"the curve of run {run} replicate {row.position} does not match "
                             "its recorded hash; run `prepbook audit verify`")
    return StoredCurve(run=run, position=row.position, file_name=row.file_name,
                       sha256=row.sha256, size_bytes=row.size_bytes,
                       curve=recorded_curve(row.file_name, content))


def stored_of_run(s: Session, run: Run) -> dict[int, RecordedCurve]:
    """The curves of one run by replicate position, analysed from the stored bytes."""
    rows = s.scalars(select(ReplicateCurve).where(ReplicateCurve.run_id == run.id))
    return {r.position: _analysed(run.code, r).curve for r in rows}


def curves_of_runs(s: Session, runs: list[Run]) -> dict[str, tuple[StoredCurve, ...]]:
    """Every stored curve of these runs, by run code, in replicate order."""
    if not runs:
        return {}
    codes = {r.id: r.code for r in runs}
    rows = s.scalars(select(ReplicateCurve).where(ReplicateCurve.run_id.in_(codes))
                     .order_by(ReplicateCurve.run_id, ReplicateCurve.position))
    out: dict[str, list[StoredCurve]] = {}
    for row in rows:
        out.setdefault(codes[row.run_id], []).append(_analysed(codes[row.run_id], row))
    return {code: tuple(items) for code, items in out.items()}


def load(db: Database, run: str, position: int) -> bytes:
    """The curve file of one replicate, exactly as it was stored."""
    with db.session(write=False) as s:
        r = by_code(s, Run, run, "run")
        row = s.scalars(select(ReplicateCurve).where(ReplicateCurve.run_id == r.id,
                                                     ReplicateCurve.position == position)
                        ).first()
        if row is None:
            raise NotFound(f"run {r.code} has no curve for replicate {position}")
        return bytes(row.content)
