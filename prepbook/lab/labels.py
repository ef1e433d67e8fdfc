"""Bottle labels: record a print (with what it showed) and find the outdated ones.

The service reads what a label shows from the record and records the print; the
caller draws the label and writes the file (``deliver``). The ``label_prints`` row
and its audit event are written in the same transaction that moves the finished
file into place: a label that exists on disk is in the record, and a refused print
leaves neither a row nor a file.
"""

from __future__ import annotations

import json
import re
from collections.abc import Callable, Sequence
from datetime import date
from typing import Protocol, TypedDict

import msgspec
from sqlalchemy import inspect, select
from sqlalchemy.orm import Session

from prepbook import clock
from prepbook.errors import InvalidInput, NotFound, Refused
from prepbook.inputs import utc_now
from prepbook.lab import specs as spec_view
from prepbook.lab.common import acting, by_code, iso, lab_zone, write
from prepbook.lab.label_content import BatchLabel, Hazard, LabelContent, LotLabel, Standing
from prepbook.records import as_data
from prepbook.store.audit import head_code
from prepbook.store.engine import Database
from prepbook.store.models import Batch, LabelPrint, Lot, Run

MAX_COPIES = 500


class Drawn(Protocol):
    """What the drawing of a label reports back: the font size it chose and any notes."""

    @property
    def font_pt(self) -> float: ...

    @property
    def notes(self) -> Sequence[str]: ...


# deliver(content, record): draw ``content``, write the file whole, calling ``record()``
# after the file is complete and before it is moved into place; returns the drawing.
Deliver = Callable[[LabelContent, Callable[[], None]], Drawn]


class LabelPrinted(msgspec.Struct, frozen=True):
    """One recorded print (the fields are the JSON keys of `prepbook label --json`)."""

    label: int
    kind: str
    code: str
    file: str
    size: str
    sheet: str | None
    copies: int
    run: str | None
    factor: float | None
    state: str | None
    font_pt: float
    notes: tuple[str, ...]
    printed_at: str | None
    printed_by: str


class LabelShown(msgspec.Struct, frozen=True):
    run: str | None
    factor: float | None
    restandardize_by: str | None
    expires: str | None


class LabelCurrent(msgspec.Struct, frozen=True):
    run: str | None
    factor: float | None
    restandardize_by: str | None
    expires: str | None
    state: str


class StaleLabel(msgspec.Struct, frozen=True):
    """A bottle whose latest label no longer matches the record, and why."""

    batch: str
    label: int
    printed_at: str | None
    printed_by: str
    file: str
    shown: LabelShown
    current: LabelCurrent
    reasons: tuple[str, ...]


class LabelPrintRow(TypedDict):
    """A recorded print as the batch report lists it."""

    printed_at: str | None
    printed_by: str
    run: str | None
    factor: float | None
    size: str
    copies: int
    file: str


def default_file_name(code: str) -> str:
    """label-<code>.pdf, with anything a file name should not hold replaced by '_'."""
    return "label-" + re.sub(r"[^A-Za-z0-9._()+-]", "_", code) + ".pdf"


def _current(session: Session, batch: Batch, today: date) -> tuple[Standing, int | None]:
    """What a label of ``batch`` shows today (its accepted result, dates and state), and
    the id of that accepted run."""
    from prepbook.lab import board
    from prepbook.lab.batches import current_normality

    life = board.batch_life(session, batch, today)
    n20, run = current_normality(session, batch)
    if run is None:
        return Standing(state=life.state, run=None, normality=n20, factor=None,
                        concentration=None, standardized_on=None, standardized_by=None,
                        reviewed_by=None, restandardize_by=life.restandardize_by,
                        expires=life.expires), None
    nominal = spec_view.view(batch.spec).nominal
    return Standing(
        state=life.state, run=run.code, normality=n20, factor=run.factor,
        concentration=nominal * run.factor if run.factor else None,
        standardized_on=clock.local_date(run.performed_at, lab_zone(session)).isoformat(),
        standardized_by=run.analyst, reviewed_by=_accepted_by(run),
        restandardize_by=life.restandardize_by, expires=life.expires), run.id


def _accepted_by(run: Run) -> str | None:
    """Who accepted ``run`` on review: the latest "accept" among its reviews."""
    accepts = [r.reviewer for r in run.reviews if r.decision == "accept"]
    return accepts[-1] if accepts else None


def _batch_content(batch: Batch, now: Standing, actor: str, today: date,
                   made_on: date) -> BatchLabel:
    view = spec_view.view(batch.spec)
    return BatchLabel(
        **msgspec.structs.asdict(now), code=batch.code, spec=batch.spec.code, name=batch.spec.name,
        unit=view.unit, nominal=view.nominal, made_on=made_on.isoformat(),
        made_by=batch.made_by, storage=view.storage,
        hazard=Hazard(signal_word=view.hazard.get("signal_word"),
                      statements=view.hazard.get("statements"),
                      pictograms=view.hazard.get("pictograms")),
        printed_on=today.isoformat(), printed_by=actor)


def _lot_content(lot: Lot, actor: str, today: date) -> LotLabel:
    from prepbook.catalog import loader

    material = loader.find_material(lot.material_code)
    hazard = material.hazard
    return LotLabel(
        code=lot.code, name=material.name[:1].upper() + material.name[1:],
        material=material.code, formula=material.formula, purity_percent=lot.purity_text,
        purity_u_percent=lot.purity_u_text, certificate=lot.certificate,
        opened_on=iso(lot.opened_on), dried_on=iso(lot.dried_on), drying=material.drying,
        expires=lot.expires.isoformat(), expired=lot.expires < today,
        hazard=(Hazard(signal_word=hazard.signal_word, statements=list(hazard.statements),
                       pictograms=list(hazard.pictograms)) if hazard else Hazard()),
        printed_on=today.isoformat(), printed_by=actor)


def print_label(db: Database, *, actor: str, code: str, size: str, copies: int, file: str,
                deliver: Deliver, sheet: str | None = None,
                lot: bool = False) -> LabelPrinted:
    """Record a print of the label of a batch (or, with ``lot``, of a primary-standard
    lot) on ``size`` stock, written by ``deliver`` to ``file``.

    ``deliver`` gets what the label shows and a ``record()`` to call once the file is
    complete, just before it moves into place: a failure anywhere (drawing, writing,
    recording, moving) rolls the print back, and the file is never half there.
    """
    if not 1 <= copies <= MAX_COPIES:
        raise InvalidInput(f"--copies must be between 1 and {MAX_COPIES}")
    now = utc_now()
    with db.session() as s:
        user = acting(s, actor, doing="print labels")
        zone = lab_zone(s)
        today = clock.local_date(now, zone)  # the lab's date, on the label and its checks
        content: LabelContent
        if lot:
            lot_row = by_code(s, Lot, code, "lot")
            content = _lot_content(lot_row, user.name, today)
            row = LabelPrint(lot_id=lot_row.id, expires=lot_row.expires)
            shows = None
        else:
            batch = _find_batch(s, code)
            if batch.retired_at is not None:
                raise Refused(f"batch {batch.code} is retired; its bottle is not relabelled")
            shows, run_id = _current(s, batch, today)
            content = _batch_content(batch, shows, user.name, today,
                                     clock.local_date(batch.made_at, zone))
            row = LabelPrint(
                batch_id=batch.id, run_id=run_id, normality=shows.normality,
                factor=shows.factor, standardized_on=_date(shows.standardized_on),
                restandardize_by=_date(shows.restandardize_by), expires=_date(shows.expires))
        row.printed_at = now
        row.printed_by = user.name
        row.size = size
        row.sheet = sheet
        row.copies = copies
        row.file_name = file
        content = msgspec.structs.replace(content, checkpoint=head_code(s))
        row.shown_json = json.dumps(as_data(content), sort_keys=True, ensure_ascii=False)
        drawn = deliver(content, lambda: write(s, user.name, "label.print", row))
        if not inspect(row).persistent:
            raise RuntimeError("a label file was delivered without recording its print")
        return LabelPrinted(
            label=row.id, kind=content.kind, code=content.code, file=row.file_name,
            size=size, sheet=sheet, copies=copies,
            run=shows.run if shows else None, factor=shows.factor if shows else None,
            state=shows.state if shows else None, font_pt=drawn.font_pt,
            notes=tuple(drawn.notes), printed_at=iso(now), printed_by=user.name)


def _date(text: str | None) -> date | None:
    return date.fromisoformat(text) if text else None


def _find_batch(session: Session, code: str) -> Batch:
    try:
        return by_code(session, Batch, code, "batch")
    except NotFound:
        if session.scalars(select(Lot.id).where(Lot.code == code)).first() is not None:
            raise NotFound(f"no batch with code {code!r}; {code} is a lot: pass --lot") from None
        raise


def stale_labels(db: Database, today: date | None = None) -> list[StaleLabel]:
    """Bottles (batches not retired) whose latest label no longer matches the record:
    a newer or corrected standardization, another factor, or other dates."""
    out: list[StaleLabel] = []
    with db.session(write=False) as s:
        today = today or clock.local_date(utc_now(), lab_zone(s))
        latest: dict[int, LabelPrint] = {}
        for lp in s.scalars(select(LabelPrint).where(LabelPrint.batch_id.is_not(None))
                            .order_by(LabelPrint.printed_at, LabelPrint.id)):
            assert lp.batch_id is not None
            latest[lp.batch_id] = lp
        for batch_id, lp in latest.items():
            batch = s.get(Batch, batch_id)
            if batch is None or batch.retired_at is not None:
                continue
            now, run_id = _current(s, batch, today)
            shown = LabelShown(run=_run_code(s, lp.run_id), factor=lp.factor,
                               restandardize_by=iso(lp.restandardize_by),
                               expires=iso(lp.expires))
            reasons = []
            if lp.run_id != run_id:
                reasons.append(f"the label shows {'run ' + shown.run if shown.run else 'no run'}"
                               f"; the current accepted run is {now.run or 'none'}")
            elif lp.factor != now.factor:
                reasons.append(f"factor changed from {lp.factor!r} to {now.factor!r} "
                               "(the run was recomputed)")
            for what, on_label, current in (
                ("restandardize by", shown.restandardize_by, now.restandardize_by),
                ("expires", shown.expires, now.expires),
            ):
                if on_label != current:
                    reasons.append(f"{what}: label {on_label or '-'}, record {current or '-'}")
            if reasons:
                out.append(StaleLabel(batch=batch.code, label=lp.id,
                                      printed_at=iso(lp.printed_at), printed_by=lp.printed_by,
                                      file=lp.file_name, shown=shown,
                                      current=LabelCurrent(
                                          run=now.run, factor=now.factor,
                                          restandardize_by=now.restandardize_by,
                                          expires=now.expires, state=now.state),
                                      reasons=tuple(reasons)))
    out.sort(key=lambda r: r.batch)
    return out


def _run_code(session: Session, run_id: int | None) -> str | None:
    run = session.get(Run, run_id) if run_id is not None else None
    return run.code if run is not None else None


def label_prints(db: Database, code: str) -> list[LabelPrintRow]:
    """Every recorded print of a batch's label, oldest first (for the batch report)."""
    with db.session(write=False) as s:
        batch = by_code(s, Batch, code, "batch")
        rows = s.scalars(select(LabelPrint).where(LabelPrint.batch_id == batch.id)
                         .order_by(LabelPrint.printed_at, LabelPrint.id)).all()
        return [LabelPrintRow(printed_at=iso(r.printed_at), printed_by=r.printed_by,
                              run=_run_code(s, r.run_id), factor=r.factor, size=r.size,
                              copies=r.copies, file=r.file_name) for r in rows]
