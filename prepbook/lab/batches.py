"""Batches: making a bottle of titrant, showing its whole chain, its life."""

from __future__ import annotations

import functools
import json
from collections import defaultdict
from datetime import date
from decimal import Decimal
from typing import Any, cast

from sqlalchemy import bindparam, func, select
from sqlalchemy.orm import Session, joinedload

from prepbook import clock
from prepbook.errors import InvalidInput, Refused
from prepbook.inputs import parse_code, parse_number, parse_text, utc_now
from prepbook.lab import specs as spec_view
from prepbook.lab.batch_facts import current_normality, impact, when
from prepbook.lab.batch_records import (
    BatchRecord,
    BudgetRow,
    Check,
    MadeBatch,
    Preparation,
    ReplicateRow,
    Retired,
    ReviewRow,
    RunRecord,
    UseRecorded,
    UseRow,
    chain_facts,
)
from prepbook.lab.common import acting, by_code, lab_zone, work_time, write
from prepbook.lab.preparing import ConcentrateLot, concentrate_normality
from prepbook.lab.volumes import draw, remaining_ml
from prepbook.store import retry
from prepbook.store.engine import Database
from prepbook.store.models import Batch, Instrument, Lot, Replicate, Review, Run, Spec, Use


def next_code(session: Session, model: type[Batch] | type[Run], prefix: str) -> str:
    """The next free code ``prefix-N`` (N counts up per prefix)."""
    query = _codes_from(model, session.get_bind().dialect.name)
    # Every code starting ``prefix-``: from ``prefix-`` up to ``prefix.`` ("." follows
    # "-"), compared byte by byte, so the index on the codes serves it (see ``_codes_from``).
    taken = set(session.scalars(query, {"low": f"{prefix}-", "high": f"{prefix}."}))
    n = len(taken) + 1
    while f"{prefix}-{n}" in taken:
        n += 1
    return f"{prefix}-{n}"


@functools.cache
def _codes_from(model: type[Batch] | type[Run], dialect: str) -> Any:
    """The codes in a range compared byte by byte, found through an index under any
    collation: PostgreSQL's index on ``code COLLATE "C"`` (the database's own collation,
    en_US.UTF-8 say, orders "-" and "." by other rules, and LIKE 'P-%' uses no index
    under it); SQLite's own index on the codes (BINARY, byte by byte already)."""
    code = model.code.collate("C") if dialect == "postgresql" else model.code
    return select(model.code).where(code >= bindparam("low"), code < bindparam("high"))


@functools.cache
def _reviews_of_run() -> Any:
    return select(Review).where(Review.run_id == bindparam("run_id")).order_by(Review.id)


def instrument_of(session: Session, code: str | None, kind: str) -> Instrument | None:
    if code is None:
        return None
    ins = by_code(session, Instrument, code, "instrument")
    if ins.kind != kind:
        raise InvalidInput(f"instrument {code} is a {ins.kind}, not a {kind}")
    return ins


@retry.on_conflict
def make_batch(
    db: Database,
    *,
    actor: str,
    spec: str,
    volume: str,
    solute_mass: str | None = None,
    solute_lot: str | None = None,
    stock_volume: str | None = None,
    from_batch: str | None = None,
    aliquot: str | None = None,
    flask: str | None = None,
    balance: str | None = None,
    notes: str | None = None,
    at: str | None = None,
    code: str | None = None,
    late_reason: str | None = None,
) -> MadeBatch:
    """Record a new batch and compute its theoretical normality from how it was made.

    ``code`` is the lab's own bottle code; without it one is made from the spec code,
    the date and a count (``NaOH-0.1N-261130-1``).
    """
    from prepbook.catalog import loader
    from prepbook.chem import formula
    from prepbook.rules import life

    methods = [m for m, given in (("solid", solute_mass is not None),
                                  ("concentrate", stock_volume is not None),
                                  ("dilution", from_batch is not None)) if given]
    if len(methods) != 1:
        raise InvalidInput("say how the batch was made: exactly one of --solute-mass, "
                           "--stock-volume or --from-batch (with --aliquot)")
    method = methods[0]
    if method == "dilution" and aliquot is None:
        raise InvalidInput("--from-batch needs --aliquot ML (the volume of stock taken)")
    if method != "dilution" and aliquot is not None:
        raise InvalidInput("--aliquot goes with --from-batch")
    if solute_lot is not None and method == "dilution":
        raise InvalidInput("--solute-lot goes with --solute-mass or --stock-volume")
    vol = parse_number(volume, "final volume (mL)", positive=True)
    mass = parse_number(solute_mass, "solute mass (g)", positive=True) if solute_mass else None
    stock = parse_number(stock_volume, "concentrate volume (mL)", positive=True) \
        if stock_volume else None
    ali = parse_number(aliquot, "aliquot (mL)", positive=True) if aliquot else None
    if ali is not None and ali.value >= vol.value:
        raise InvalidInput(f"aliquot {ali.text} mL must be smaller than the final volume "
                           f"{vol.text} mL")
    if stock is not None and stock.value >= vol.value:
        raise InvalidInput(f"concentrate volume {stock.text} mL must be smaller than the final "
                           f"volume {vol.text} mL")
    notes = parse_text(notes, "notes")
    own_code = parse_code(code, "batch code") if code is not None else None
    late_reason = parse_text(late_reason, "reason", max_len=500)
    made_at = work_time(db, at, "preparation time", reason=late_reason)

    with db.session() as s:
        user = acting(s, actor, doing="make batches")
        made_on = clock.local_date(made_at, lab_zone(s))  # the lab's date of the work
        sp = by_code(s, Spec, spec, "solution spec")
        view = spec_view.view(sp)
        solute = loader.find_material(view.solute)
        rx = solute.reaction(name=view.reaction) if view.reaction else solute.reaction()
        warnings: list[str] = []
        handling: tuple[str, ...] = ()  # a concentrate's own cautions, before the spec's
        parents: list[date] = []
        lot_row: Lot | None = None
        parent: Batch | None = None
        if method == "solid":
            assert mass is not None
            purity = 1.0
            if solute_lot is not None:
                lot_row = by_code(s, Lot, solute_lot, "lot")
                if lot_row.material_code != solute.code:
                    raise InvalidInput(f"lot {lot_row.code} is {lot_row.material_code}, but "
                                       f"{sp.code} is made from {solute.code}")
                if lot_row.expires < made_on:
                    raise Refused(f"lot {lot_row.code} expired on {lot_row.expires.isoformat()}")
                purity = float(lot_row.purity_text) / 100
                parents.append(lot_row.expires)
            mm = formula.molar_mass(solute.formula)
            theoretical = 1000 * mass.value * purity * rx.n / (mm.value_g_per_mol * vol.value)
        elif method == "concentrate":
            assert stock is not None
            lot_row = by_code(s, Lot, solute_lot, "lot") if solute_lot is not None else None
            made = concentrate_normality(
                solute.code, rx.n, stock.value, vol.value, made_on,
                lot=ConcentrateLot(lot_row.code, lot_row.material_code, lot_row.purity_text,
                                   lot_row.density_text, lot_row.expires)
                if lot_row is not None else None)
            theoretical = made.normality
            warnings.extend(made.warnings)
            handling = made.cautions
            if lot_row is not None:
                parents.append(lot_row.expires)
        else:
            assert from_batch is not None and ali is not None
            parent = by_code(s, Batch, from_batch, "batch")
            parent_spec = spec_view.view(parent.spec)
            if parent_spec.solute != view.solute:
                raise InvalidInput(f"batch {parent.code} is {parent_spec.solute}; {sp.code} "
                                   f"needs {view.solute}")
            if parent.retired_at is not None:
                raise Refused(f"batch {parent.code} is retired and cannot be used")
            if parent.expires < made_on:
                raise Refused(f"batch {parent.code} expired on {parent.expires.isoformat()}")
            draw(s, parent, Decimal(ali.text), "an aliquot")
            n_parent, _ = current_normality(s, parent)
            if n_parent is None:
                n_parent = parent.theoretical_normality
                warnings.append(f"stock batch {parent.code} has no accepted standardization; "
                                "its theoretical normality is used")
            if n_parent is None:  # pragma: no cover - every batch has one
                raise Refused(f"batch {parent.code} has no normality to dilute from")
            theoretical = n_parent * ali.value / vol.value
            parents.append(parent.expires)
        flask_row = instrument_of(s, flask, "flask")
        balance_row = instrument_of(s, balance, "balance")
        for ins in (flask_row, balance_row):
            if ins is not None and ins.due < made_on:
                warnings.append(f"{ins.kind} {ins.code} was past its calibration due date "
                                f"({ins.due.isoformat()})")
        if flask_row is not None and flask_row.capacity_text is not None \
                and float(flask_row.capacity_text) != vol.value:
            warnings.append(f"flask {flask_row.code} holds {flask_row.capacity_text} mL, "
                            f"not the {vol.text} mL recorded")
        expires = life.expiry(made_on, view.shelf_life_days, parents)
        if own_code is not None:
            if s.scalars(select(Batch).where(Batch.code == own_code)).first() is not None:
                raise Refused(f"batch {own_code!r} already exists")
            code = own_code
        else:
            code = next_code(s, Batch, f"{sp.code}-{made_on:%y%m%d}")
        batch = Batch(
            code=code, spec_id=sp.id, method=method, volume_ml_text=vol.text,
            solute_mass_g_text=mass.text if mass else None,
            solute_lot_id=lot_row.id if lot_row else None,
            stock_volume_ml_text=stock.text if stock else None,
            parent_batch_id=parent.id if parent else None,
            aliquot_ml_text=ali.text if ali else None,
            flask_id=flask_row.id if flask_row else None,
            balance_id=balance_row.id if balance_row else None,
            theoretical_normality=theoretical, made_at=made_at, recorded_at=utc_now(),
            made_by=user.name, notes=notes, expires=expires,
        )
        write(s, user.name, "batch.make", batch, performed_at=made_at, reason=late_reason)
        nominal_value = view.to_spec_unit(theoretical, rx.n)
        return MadeBatch(
            batch=code, spec=sp.code, method=method, theoretical_normality=theoretical,
            theoretical_factor=nominal_value / view.nominal, unit=view.unit,
            made_at=when(made_at), expires=when(expires),
            cautions=tuple(dict.fromkeys((*handling, *view.cautions))),
            warnings=tuple(warnings))


def _replicate_rows(session: Session, run: Run,
                    reps: list[Replicate] | None = None) -> tuple[ReplicateRow, ...]:
    if reps is None:
        reps = list(session.scalars(
            select(Replicate).where(Replicate.run_id == run.id)
            .order_by(Replicate.position, Replicate.version)
        ))
    latest: dict[int, int] = {}
    for r in reps:
        latest[r.position] = max(latest.get(r.position, 0), r.version)
    result = json.loads(run.result_json) if run.result_json else {}
    per_rep = {r["index"]: r for r in result.get("replicates", [])}
    rows = []
    for r in reps:
        current = latest[r.position] == r.version
        rows.append(ReplicateRow(
            position=r.position, version=r.version, current=current, amount=r.amount_text,
            volume_ml=r.volume_ml_text, excluded=r.excluded, reason=r.reason,
            normality=per_rep.get(r.position, {}).get("normality") if current else None,
            outlier=per_rep.get(r.position, {}).get("outlier", False) if current else False,
            recorded_by=r.created_by, recorded_at=when(r.created_at)))
    return tuple(rows)


def run_dict(session: Session, run: Run, *, with_replicates: bool = True,
             reviews: list[Review] | None = None,
             replicates: list[Replicate] | None = None) -> RunRecord:
    """A run as plain data; ``reviews``/``replicates`` when the caller has read them
    already for many runs at once (``show_batch``), in id / (position, version) order."""
    result = json.loads(run.result_json) if run.result_json else {}
    if reviews is None:
        reviews = list(session.scalars(_reviews_of_run(), {"run_id": run.id}))
    return RunRecord(
        run=run.code, method=run.method, status=run.status,
        performed_at=when(run.performed_at), recorded_at=when(run.recorded_at),
        analyst=run.analyst,
        lot=run.lot.code if run.lot else None,
        lot_certificate=run.lot.certificate if run.lot else None,
        reference_batch=run.reference_batch.code if run.reference_batch else None,
        balance=run.balance.code if run.balance else None,
        burette=run.burette.code if run.burette else None,
        temperature_c=run.temperature_c_text, blank_ml=run.blank_ml_text,
        indicator=run.indicator, normality=run.normality, normality_20c=run.normality_20c,
        factor=run.factor, sd=run.sd, rsd_percent=run.rsd_percent, u=run.u, U=run.U, k=run.k,
        verdict=result.get("verdict"),
        checks=tuple(cast(list[Check], result.get("checks", []))),
        budget=tuple(cast(list[BudgetRow], result.get("budget", []))),
        reviews=tuple(ReviewRow(reviewer=r.reviewer, decision=r.decision, reason=r.reason,
                                signed_at=when(r.signed_at)) for r in reviews),
        replicates=_replicate_rows(session, run, replicates) if with_replicates else None,
        **chain_facts(result))


def reviews_of_runs(session: Session, run_ids: Any) -> dict[int, list[Review]]:
    """The reviews of many runs (a list of ids, or a subquery selecting them) in one
    query, in id order: run id -> its reviews (an empty list for none)."""
    reviews: dict[int, list[Review]] = defaultdict(list)
    for rv in session.scalars(select(Review).where(Review.run_id.in_(run_ids))
                              .order_by(Review.id)):
        reviews[rv.run_id].append(rv)
    return reviews


def _run_dicts(session: Session, runs: list[Run]) -> tuple[RunRecord, ...]:
    """``run_dict`` of many runs with a fixed number of queries (not two per run)."""
    ids = [r.id for r in runs]
    reviews = reviews_of_runs(session, ids) if ids else {}
    replicates: dict[int, list[Replicate]] = {i: [] for i in ids}
    if ids:
        for rep in session.scalars(select(Replicate).where(Replicate.run_id.in_(ids))
                                   .order_by(Replicate.position, Replicate.version)):
            replicates[rep.run_id].append(rep)
    return tuple(run_dict(session, r, reviews=reviews[r.id], replicates=replicates[r.id])
                 for r in runs)


def show_batch(db: Database, code: str, today: date | None = None) -> BatchRecord:
    """Everything about one batch, from its preparation to its latest standardization."""
    from prepbook.lab import board

    today = today or utc_now().date()
    with db.session(write=False) as s:
        b = by_code(s, Batch, code, "batch")
        view = spec_view.view(b.spec)
        # The instruments, lots and reference batches of all the runs come in the same
        # query; their reviews and replicates in one more each (``_run_dicts``).
        runs = list(s.scalars(
            select(Run).where(Run.batch_id == b.id)
            .options(joinedload(Run.lot), joinedload(Run.reference_batch),
                     joinedload(Run.balance), joinedload(Run.burette))
            .order_by(Run.performed_at, Run.id)).unique())
        uses = s.scalars(select(Use).where(Use.batch_id == b.id).order_by(Use.used_at)).all()
        children = s.scalars(select(Batch.code).where(Batch.parent_batch_id == b.id)).all()
        life_row = board.batch_life(s, b, today)
        lot = b.solute_lot
        return BatchRecord(
            batch=b.code, spec=b.spec.code, spec_name=b.spec.name, nominal=view.nominal,
            unit=view.unit, state=life_row.state, normality=life_row.normality,
            factor=life_row.factor, restandardize_by=life_row.restandardize_by,
            expires=life_row.expires, warnings=life_row.warnings,
            preparation=Preparation(
                method=b.method, volume_ml=b.volume_ml_text, solute_mass_g=b.solute_mass_g_text,
                solute_lot=lot.code if lot else None,
                concentrate_volume_ml=b.stock_volume_ml_text,
                from_batch=b.parent_batch.code if b.parent_batch else None,
                aliquot_ml=b.aliquot_ml_text, flask=b.flask.code if b.flask else None,
                balance=b.balance.code if b.balance else None,
                theoretical_normality=b.theoretical_normality, made_at=when(b.made_at),
                recorded_at=when(b.recorded_at), made_by=b.made_by, notes=b.notes),
            retired=(Retired(at=when(b.retired_at), by=b.retired_by, reason=b.retired_reason)
                     if b.retired_at else None),
            runs=_run_dicts(s, runs),
            uses=tuple(UseRow(at=when(u.used_at), by=u.used_by, volume_ml=u.volume_ml_text,
                              purpose=u.purpose) for u in uses),
            diluted_into=tuple(children),
            uses_needing_review=impact(s, b, view.drift_limit_percent),
            storage=view.storage, hazard=view.hazard,
            remaining_ml=float(remaining_ml(s, b)))


def batch_count(db: Database) -> int:
    with db.session() as s:
        return int(s.scalar(select(func.count()).select_from(Batch)) or 0)



@retry.on_conflict
def use_batch(db: Database, *, actor: str, code: str, volume: str | None = None,
              purpose: str | None = None, at: str | None = None,
              late_reason: str | None = None) -> UseRecorded:
    """Record a draw from a batch (kept for impact analysis); only a batch in service."""
    from prepbook.lab import board

    vol = parse_number(volume, "volume used (mL)", positive=True) if volume else None
    purpose = parse_text(purpose, "purpose", max_len=500)
    if not (purpose and purpose.strip()):
        raise InvalidInput("a use needs a --purpose (the sample or method it served), so "
                           "its impact can be traced")
    late_reason = parse_text(late_reason, "reason", max_len=500)
    used_at = work_time(db, at, "time of use", reason=late_reason)
    # A use changes nothing but its batch's draws: uses of different batches are
    # written side by side on PostgreSQL (``Database.hold_writer_lock``); every other
    # write, a retirement or a standardization of this batch say, waits for them.
    with db.session(shared=True) as s:
        user = acting(s, actor, doing="use batches")
        # The batch and what its life needs in one query (``by_code`` names close codes
        # when there is none).
        b = board.batch_of_code(s, code) or by_code(s, Batch, code, "batch")
        db.hold_batch_lock(s, b.id)  # the volume left is read after the last use commits
        life_row = board.batch_life(s, b, used_at.date())
        if life_row.state != "in-service":
            raise Refused(f"batch {b.code} is {life_row.state} and may not be used")
        if used_at < b.made_at:
            raise InvalidInput("the use cannot be before the batch was made")
        if vol is not None:
            draw(s, b, Decimal(vol.text), "a use")
        use = Use(batch_id=b.id, used_at=used_at, used_by=user.name,
                  volume_ml_text=vol.text if vol else None, purpose=purpose)
        write(s, user.name, "batch.use", use, performed_at=used_at, reason=late_reason)
        return UseRecorded(batch=b.code, used_at=when(used_at), used_by=user.name,
                           volume_ml=vol.text if vol else None, purpose=purpose,
                           normality=life_row.normality, factor=life_row.factor)
