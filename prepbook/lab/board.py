"""The board: every batch not retired, its state, strength, dates and warnings.

Built with a fixed number of set-based queries whatever the size of the
history (no query per batch), so it stays quick over years of records.
"""

from __future__ import annotations

import functools
from collections import defaultdict
from datetime import date
from decimal import Decimal
from typing import TYPE_CHECKING, Any, cast

import msgspec
from msgspec.structs import replace
from sqlalchemy import bindparam, select
from sqlalchemy.orm import Session, aliased

from prepbook.inputs import utc_now
from prepbook.lab import specs as spec_view
from prepbook.lab.batch_facts import when
from prepbook.lab.common import (
    iso,
    life_facts,
    life_result,
    remember_batch,
    remembered,
    setting,
)
from prepbook.lab.volumes import remaining_volumes
from prepbook.rules import life
from prepbook.store.engine import Database
from prepbook.store.models import Batch, Instrument, Lot, Run, Spec

if TYPE_CHECKING:
    from prepbook.rules.life import RunStatus

DEFAULT_LEAD_DAYS = 7  # warn this many days ahead: common practice, no source

# Attention order on the board: what needs action first.
_ORDER = {"expired": 0, "due": 1, "awaiting-review": 2, "new": 3, "in-service": 4, "retired": 5}


class BatchLife(msgspec.Struct, frozen=True):
    """One batch on the board: its state, strength at 20 C, dates and warnings."""

    batch: str
    spec: str
    state: str
    normality: float | None  # eq/L at 20 C, of the latest accepted run
    factor: float | None
    standardized_on: str | None
    restandardize_by: str | None
    expires: str
    warnings: tuple[str, ...]
    remaining_ml: float | None = None  # made less every recorded draw (``lab.volumes``)
    # On the board: the instruments it depends on whose calibration is overdue or due
    # soon, by code; their warnings are then in ``Board.instruments``, once each, not
    # in ``warnings``. Elsewhere (one batch's life) they are in ``warnings`` too.
    instruments: tuple[str, ...] = ()


class InstrumentWarning(msgspec.Struct, frozen=True):
    """One instrument's calibration warning on the board, and the batches it concerns."""

    instrument: str
    warning: str
    batches: tuple[str, ...]


class Board(msgspec.Struct, frozen=True):
    """The board: the batches, and each instrument warning once (not under every batch
    that used the instrument)."""

    batches: tuple[BatchLife, ...]
    instruments: tuple[InstrumentWarning, ...]

    def warnings_of(self, item: BatchLife) -> tuple[str, ...]:
        """Every warning of one batch of the board, its instruments' included (for a
        view of that batch alone)."""
        texts = {w.instrument: w.warning for w in self.instruments}
        return (*item.warnings, *(texts[code] for code in item.instruments))


class _RunFacts(msgspec.Struct, frozen=True):
    batch_id: int
    performed_on: date
    status: RunStatus
    normality_20c: float | None  # at 20 C: what the factor, the label and the trend use
    factor: float | None
    lot_code: str | None
    lot_expires: date | None
    instrument_dues: tuple[tuple[str, str, date], ...]


def _life(
    *,
    batch: Batch,
    spec: Spec,
    runs: list[_RunFacts],
    batch_instruments: list[tuple[str, str, date]],
    solute_lot: tuple[str, date] | None,
    today: date,
    lead_days: int,
    remaining_ml: Decimal | None = None,
    grouped: bool = False,
) -> BatchLife:
    """One batch's life; ``grouped`` (the board): its instruments' calibration warnings
    left out of ``warnings`` and named in ``instruments``."""
    view = spec_view.view(spec)
    # A revoked result no longer counts: the batch stands on the runs before it.
    revoked = [r for r in runs if r.status == "revoked"]
    runs = [r for r in runs if r.status != "revoked"]
    accepted = [r for r in runs if r.status == "accepted"]
    last = accepted[-1] if accepted else None
    latest = runs[-1] if runs else None
    restd = life.restandardize_by(last.performed_on if last else None, view.restandardize_days)
    state = life.batch_state(
        retired=batch.retired_at is not None,
        today=today,
        expires=batch.expires,
        has_runs=bool(runs),
        latest_status=latest.status if latest else None,
        last_accepted_on=last.performed_on if last else None,
        restandardize_by=restd,
    )
    flagged = life.instrument_warnings(_instruments(batch_instruments, runs), today, lead_days)
    lots: list[tuple[str, date]] = []
    if last is not None and last.lot_code is not None and last.lot_expires is not None:
        lots.append((last.lot_code, last.lot_expires))
    if solute_lot is not None:
        lots.append(solute_lot)
    warnings = life.batch_warnings(
        today=today,
        lead_days=lead_days,
        expires=batch.expires,
        restandardize_by=restd,
        lots=lots,
        # At 20 C, as the trend compares them: two runs at different temperatures
        # differ by the solution's expansion alone, which is no drift.
        accepted_normalities=[r.normality_20c for r in accepted if r.normality_20c is not None],
        drift_limit_percent=view.drift_limit_percent,
        latest_status=latest.status if latest else None,
    )
    if not grouped:
        warnings = (*warnings, *(text for _, text in flagged))
    warnings = (*warnings, *(
        f"an accepted result of {batch.code} (standardized {r.performed_on}) was revoked: "
        f"the uses made while it stood need review (prepbook trace {batch.code})"
        for r in revoked))
    return BatchLife(
        batch=batch.code,
        spec=spec.code,
        state=state,
        normality=last.normality_20c if last else None,
        factor=last.factor if last else None,
        standardized_on=iso(last.performed_on) if last else None,
        restandardize_by=iso(restd),
        expires=when(batch.expires),
        warnings=tuple(warnings),
        remaining_ml=float(remaining_ml) if remaining_ml is not None else None,
        instruments=tuple(code for code, _ in flagged),
    )


def _instruments(batch_instruments: list[tuple[str, str, date]],
                 runs: list[_RunFacts]) -> list[tuple[str, str, date]]:
    """(code, kind, calibration due) of the instruments a batch depends on: its own (flask,
    balance) and those of its latest accepted standardization (a revoked one no longer
    counts)."""
    accepted = [r for r in runs if r.status == "accepted"]
    return [*batch_instruments, *(accepted[-1].instrument_dues if accepted else ())]


# Aliases and statements are built once: building them is most of a small query's cost.
_BALANCE = aliased(Instrument, name="balance")
_BURETTE = aliased(Instrument, name="burette")
_FLASK = aliased(Instrument, name="flask")


@functools.cache
def _run_facts_query() -> Any:
    return (
        select(Run.batch_id, Run.performed_at, Run.status, Run.normality_20c, Run.factor,
               Lot.code, Lot.expires, _BALANCE.code, _BALANCE.due, _BURETTE.code, _BURETTE.due)
        .outerjoin(Lot, Run.lot_id == Lot.id)
        .outerjoin(_BALANCE, Run.balance_id == _BALANCE.id)
        .outerjoin(_BURETTE, Run.burette_id == _BURETTE.id)
        .order_by(Run.batch_id, Run.performed_at, Run.id)
    )


@functools.cache
def _batch_rows_query() -> Any:
    return (
        select(Batch, Spec, _FLASK.code, _FLASK.due, _BALANCE.code, _BALANCE.due, Lot.code,
               Lot.expires)
        .join(Spec, Batch.spec_id == Spec.id)
        .outerjoin(_FLASK, Batch.flask_id == _FLASK.id)
        .outerjoin(_BALANCE, Batch.balance_id == _BALANCE.id)
        .outerjoin(Lot, Batch.solute_lot_id == Lot.id)
        .order_by(Batch.id)
    )


@functools.cache
def _one_batch_queries() -> tuple[Any, Any]:
    """The two queries of one batch's life, its id a parameter (built and keyed once)."""
    return (_batch_rows_query().where(Batch.id == bindparam("batch_id")),
            _run_facts_query().where(Run.batch_id == bindparam("batch_id")))


def _run_facts(session: Session, batch_ids: Any, *,
               one: int | None = None) -> dict[int, list[_RunFacts]]:
    """The runs of the given batches (a list of ids, or a subquery selecting them), or
    with ``one`` of that one batch."""
    if one is not None:
        result = session.execute(_one_batch_queries()[1], {"batch_id": one})
    else:
        result = session.execute(_run_facts_query().where(Run.batch_id.in_(batch_ids)))
    out: dict[int, list[_RunFacts]] = defaultdict(list)
    for (bid, at, status, n, f, lot_code, lot_exp, bal_code, bal_due, bur_code,
         bur_due) in result:
        dues = tuple((c, k, d) for c, k, d in ((bal_code, "balance", bal_due),
                                               (bur_code, "burette", bur_due)) if c)
        out[bid].append(_RunFacts(bid, at.date(), cast("RunStatus", status), n, f, lot_code,
                                  lot_exp, dues))
    return out


def _batch_rows(session: Session, where: Any, *,
                one: int | None = None) -> list[tuple[Batch, Spec, list, Any]]:
    rows = []
    if one is not None:
        result = session.execute(_one_batch_queries()[0], {"batch_id": one})
    else:
        result = session.execute(_batch_rows_query().where(where))
    for batch, spec, fc, fd, bc, bd, lc, le in result:
        instruments = [(c, k, d) for c, k, d in ((fc, "flask", fd), (bc, "balance", bd)) if c]
        rows.append((batch, spec, instruments, (lc, le) if lc else None))
    return rows


def _lead_days(session: Session) -> int:
    try:
        return int(setting(session, "warning_lead_days", str(DEFAULT_LEAD_DAYS)))
    except ValueError:
        return DEFAULT_LEAD_DAYS


def batch_of_code(session: Session, code: str) -> Batch | None:
    """The batch with this code, read with what its life is computed from (one query)."""
    known = remembered(session, Batch, code)
    if known is not None:
        return known
    rows = _batch_rows(session, Batch.code == code)
    if rows:
        remember_batch(session, rows[0][0], rows[0])
    return rows[0][0] if rows else None


def batch_life(session: Session, batch: Batch, today: date) -> BatchLife:
    """State, strength, dates and warnings of one batch.

    What it is computed from (the batch, its runs, instruments and lots) is read once
    per transaction and kept until the transaction writes a batch, run, lot,
    instrument or spec (``common.life_facts``; a run of the batch drops only its runs),
    so many uses of one batch grouped in one transaction read it once.
    """
    def read_batch() -> tuple[Any, ...]:
        return _batch_rows(session, None, one=batch.id)[0]

    def read_runs() -> list[_RunFacts]:
        return _run_facts(session, None, one=batch.id).get(batch.id, [])

    (b, spec, instruments, lot), runs = life_facts(session, batch.id, read_batch, read_runs)
    lead = _lead_days(session)
    return life_result(session, batch.id, (today, lead), lambda: _life(
        batch=b, spec=spec, runs=runs, batch_instruments=instruments, solute_lot=lot,
        today=today, lead_days=lead))


def board(db: Database, today: date | None = None) -> list[BatchLife]:
    """Every batch not retired, those needing action first."""
    return list(board_view(db, today).batches)


def board_view(db: Database, today: date | None = None) -> Board:
    """Every batch not retired, those needing action first, and the calibration
    warnings of the instruments they depend on, once per instrument."""
    today = today or utc_now().date()
    with db.session(write=False) as s:
        lead = _lead_days(s)
        rows = _batch_rows(s, Batch.retired_at.is_(None))
        # Only the runs of the batches shown: retired batches' runs (most of a long
        # history) are never read.
        shown = select(Batch.id).where(Batch.retired_at.is_(None))
        facts = _run_facts(s, shown)
        left = remaining_volumes(s, [b.id for b, *_ in rows],
                                 {b.id: b.volume_ml_text for b, *_ in rows})
        items = [
            _life(batch=b, spec=spec, runs=facts.get(b.id, []), batch_instruments=ins,
                  solute_lot=lot, today=today, lead_days=lead, remaining_ml=left.get(b.id),
                  grouped=True)
            for b, spec, ins, lot in rows
        ]
        texts = dict(pair for b, _, ins, _ in rows for pair in life.instrument_warnings(
            _instruments(ins, facts.get(b.id, [])), today, lead))
        items = _mark_impacted(s, rows, items)
    items.sort(key=lambda it: (_ORDER.get(it.state, 9), it.restandardize_by or "9999",
                               it.expires, it.batch))
    users: dict[str, list[str]] = defaultdict(list)  # in the board's order
    for it in items:
        for code in it.instruments:
            users[code].append(it.batch)
    return Board(batches=tuple(items), instruments=tuple(
        InstrumentWarning(instrument=code, warning=texts[code], batches=tuple(batches))
        for code, batches in sorted(users.items(), key=lambda kv: texts[kv[0]])))


def _mark_impacted(session: Session, rows: list[tuple[Batch, Spec, list, Any]],
                   items: list[BatchLife]) -> list[BatchLife]:
    """A warning on each batch with assay results its titrant's changed value impacts."""

    from prepbook.lab.impact import impacted_counts

    counts = impacted_counts(session, [(b.id, b.code, spec) for b, spec, _, _ in rows])
    return [replace(it, warnings=(*it.warnings, f"{counts[it.batch]} assay result(s) "
                                  "impacted by a change of the titrant's value (prepbook "
                                  f"impact {it.batch})")) if it.batch in counts else it
            for it in items]
