"""Standardization runs: recording, correcting and excluding.

``standardize`` records a run exactly as entered, computes it with the one evaluation
(``prepbook.rules.evaluation``: the chemistry and every acceptance check) and leaves it
awaiting review. ``correct`` and ``exclude`` never edit a replicate: they add a new
version of it, with a reason, and recompute the run, which returns to awaiting review.
``review`` (``prepbook.lab.reviews``, named here too) is the second person's signed
decision.
"""

from __future__ import annotations

import json
from collections.abc import Sequence
from datetime import datetime
from decimal import Decimal
from typing import Any

import msgspec
from sqlalchemy import select
from sqlalchemy.orm import Session

from prepbook import clock
from prepbook.chem import uncertainty
from prepbook.chem.uncertainty import BudgetLine
from prepbook.errors import InvalidInput, Refused
from prepbook.inputs import (
    Reading,
    ReplicateEntry,
    parse_number,
    parse_percent,
    parse_repeatability,
    parse_text,
    utc_now,
)
from prepbook.lab import replicate_sources as sources
from prepbook.lab import specs as spec_view
from prepbook.lab.batches import current_normality, instrument_of, next_code
from prepbook.lab.common import (
    RECORDERS,
    acting,
    by_code,
    lab_time,
    lab_zone,
    signed,
    work_time,
    write,
    write_all,
)
from prepbook.lab.reviews import QueuedRun, review, runs_awaiting_review
from prepbook.lab.run_conditions import (
    NO_TEMPERATURE_NOTE,
    REFERENCE_TEMPERATURE_C,
    Conditions,
    plausible_readings,
    standardization,
    validated_repeatability,
)
from prepbook.lab.volumes import draw
from prepbook.records import as_data
from prepbook.rules import evaluation as ev
from prepbook.rules import plausibility as plaus
from prepbook.rules.acceptance import Check
from prepbook.store import retry
from prepbook.store.engine import Database
from prepbook.store.models import Batch, Lot, Replicate, Run

__all__ = ["QueuedRun", "RunResult", "correct", "exclude", "review", "runs_awaiting_review",
           "standardize"]


class RunResult(msgspec.Struct, frozen=True):
    """A standardization computed by ``standardize``, ``correct`` or ``exclude``.

    ``run`` is None when nothing was recorded (``record=False``); ``previous_status`` is
    the run's status before a correction or an exclusion (None for a new run).
    """

    run: str | None
    previous_status: str | None
    batch: str
    normality: float
    normality_20c: float
    temperature_c: float
    factor: float
    unit: str
    sd: float | None
    rsd_percent: float | None
    u: float | None
    U: float | None
    k: float | None
    verdict: str
    checks: tuple[Check, ...]
    warnings: tuple[str, ...]
    replicates: tuple[ev.EvaluatedReplicate, ...]
    budget: tuple[BudgetLine, ...]
    status: str | None
    reference: ev.Reference | None  # secondary: the reference and the u it passes on
    repeatability: str  # given (for the run), spec, estimated (replicates) or missing
    repeatability_rsd_percent: float | None  # the validated value used, given or the spec's
    reaction: str | None  # direct: the standard's reaction used

    def to_json(self) -> dict[str, Any]:
        """The JSON of the command: a new run has no ``previous_status`` key."""
        data = as_data(self)
        if self.previous_status is None:
            del data["previous_status"]
        return data


def _batch_state(session: Session, batch: Batch, when: datetime) -> str:
    from prepbook.lab.board import batch_life

    return str(batch_life(session, batch, when.date()).state)


def _evaluate(s: Session, c: Conditions, entries: list[ReplicateEntry],
              excluded: frozenset[int] = frozenset(), notes: list[str] | None = None
              ) -> tuple[ev.Evaluation, dict[str, Any]]:
    """Compute a run: the evaluation, and the columns of the run that store it
    (``notes``: what the service itself assumed, kept with the result)."""
    e = ev.evaluate(standardization(s, c, entries, excluded))
    payload = {
        "verdict": e.verdict,
        "checks": [as_data(ch) for ch in e.checks],
        "budget": [as_data(line) for line in e.budget],
        "notes": [*(notes or []), *e.notes, *e.uncertainty_notes],
        "equivalence_ph": e.equivalence_ph,
        "titrant_n_eq_per_mol": e.titrant_n_eq_per_mol,
        "reference": as_data(c.reference) if c.reference else None,
        "replicates": [as_data(r) for r in e.replicates],
        "repeatability": e.repeatability,
        "repeatability_rsd_percent": validated_repeatability(c)[0],
        "repeatability_given": c.repeatability.text if c.repeatability else None,
        "reaction": e.reaction,
        "reaction_given": c.reaction,
    }
    columns = {
        "indicator": e.indicator, "normality": e.normality, "normality_20c": e.normality_20c,
        "factor": e.factor, "sd": e.sd, "rsd_percent": e.rsd_percent, "u": e.u, "U": e.U,
        "k": e.k, "result_json": json.dumps(payload, sort_keys=True),
    }
    return e, columns


def _result(c: Conditions, e: ev.Evaluation, *, run: str | None, status: str | None,
            previous_status: str | None = None, notes: list[str] | None = None) -> RunResult:
    assert e.factor is not None and e.verdict is not None, "a recorded run is judged"
    warnings = [*(notes or []), *(ch.message for ch in e.checks if not ch.passed), *e.notes]
    return RunResult(
        run=run, previous_status=previous_status, batch=c.batch.code, normality=e.normality,
        normality_20c=e.normality_20c, temperature_c=c.temperature.value, factor=e.factor,
        unit=c.view.unit, sd=e.sd, rsd_percent=e.rsd_percent, u=e.u, U=e.U, k=e.k,
        verdict=e.verdict, checks=e.checks, warnings=tuple(warnings), replicates=e.replicates,
        budget=e.budget, status=status, reference=c.reference, repeatability=e.repeatability,
        repeatability_rsd_percent=validated_repeatability(c)[0], reaction=e.reaction)


def _reference(s: Session, ref_batch: Batch, batch: Batch, performed_at: datetime,
               notes: list[str]) -> ev.Reference:
    if ref_batch.id == batch.id:
        raise InvalidInput("a batch cannot be standardized against itself")
    ref_state = _batch_state(s, ref_batch, performed_at)
    if ref_state not in ("in-service", "due"):
        raise Refused(f"reference batch {ref_batch.code} is {ref_state}; it must be in service")
    if ref_state == "due":
        notes.append(f"reference batch {ref_batch.code} is due for restandardization")
    n20, ref_run = current_normality(s, ref_batch)
    assert n20 is not None and ref_run is not None
    # its run's u belongs to its normality at its own temperature: the relative
    # uncertainty carries to 20 C unchanged
    u20 = (ref_run.u * n20 / ref_run.normality
           if ref_run.u is not None and ref_run.normality else None)
    return ev.Reference(batch=ref_batch.code, run=ref_run.code, normality_20c=n20, u=u20)


def parse_temperature(text: str) -> Reading:
    """A titrant temperature as typed, within 0-40 C."""
    temp = parse_number(text, "temperature (C)")
    if not 0 <= temp.value <= 40:
        raise InvalidInput(f"temperature {temp.text} C is outside 0-40 C")
    return temp


def last_temperature(db: Database, batch: str) -> str | None:
    """The temperature of the latest run of this batch, else of its spec's batches."""
    with db.session(write=False) as s:
        b = by_code(s, Batch, batch, "batch")
        for where in (Run.batch_id == b.id,
                      Run.batch_id.in_(select(Batch.id).where(Batch.spec_id == b.spec_id))):
            text = s.scalars(select(Run.temperature_c_text)
                             .where(where, Run.temperature_c_text.is_not(None))
                             .order_by(Run.performed_at.desc(), Run.id.desc()).limit(1)).first()
            if text is not None:
                return text
    return None


@retry.on_conflict
def standardize(
    db: Database,
    *,
    actor: str,
    batch: str,
    replicates: Sequence[str | ReplicateEntry],
    lot: str | None = None,
    against: str | None = None,
    balance: str | None = None,
    burette: str | None = None,
    temperature: str | None = None,
    blank: str | None = None,
    indicator: str | None = None,
    at: str | None = None,
    record: bool = True,
    late_reason: str | None = None,
    repeatability: str | None = None,
    reaction: str | None = None,
) -> RunResult:
    """Record and compute one standardization; it then awaits a second person's review.

    ``repeatability``: a validated relative SD of one result (%) for this run's budget,
    over the spec's; ``reaction``: the standard's reaction by name (direct only).

    With ``record=False`` nothing is written: the result is computed and returned
    (``run`` is None), which is how the terminal shows the running result while
    replicates are typed one at a time.
    """
    if (lot is None) == (against is None):
        raise InvalidInput("standardize against exactly one of --lot LOT (a primary standard) "
                           "or --against BATCH (a standardized solution)")
    secondary = against is not None
    entries: list[ReplicateEntry] = sources.entries(
        db, replicates, amount_name="aliquot (mL)" if secondary else "mass (g)",
        balance=balance, secondary=secondary)
    temp = parse_temperature(temperature or REFERENCE_TEMPERATURE_C)
    temp_notes = [] if temperature else [NO_TEMPERATURE_NOTE]
    blank_r = parse_number(blank or "0", "blank (mL)", non_negative=True)
    indicator = parse_text(indicator, "indicator", max_len=60)
    performed_at = work_time(db, at, "standardization time", reason=late_reason)
    rsd = parse_repeatability(repeatability) if repeatability is not None else None
    reaction = parse_text(reaction, "reaction", max_len=60)
    if reaction is not None and secondary:
        raise InvalidInput("--reaction goes with --lot: it names the standard's reaction")

    from prepbook.lab import board

    uncertainty.load_library()  # before the writer lock, not under it
    with db.session(write=record) as s:
        user = acting(s, actor, doing="standardize")
        # The batch with what its state is computed from, in one query.
        b = board.batch_of_code(s, batch) or by_code(s, Batch, batch, "batch")
        state = _batch_state(s, b, performed_at)
        if state in ("expired", "retired"):
            raise Refused(f"batch {b.code} is {state} and cannot be standardized")
        if performed_at < b.made_at:
            raise InvalidInput(f"the standardization ({lab_time(s, performed_at)}) cannot be "
                               f"before the batch was made ({lab_time(s, b.made_at)})")
        balance_row = instrument_of(s, balance, "balance")
        burette_row = instrument_of(s, burette, "burette")
        lot_row: Lot | None = None
        ref_batch: Batch | None = None
        reference = None
        ref_notes: list[str] = list(temp_notes)
        if secondary:
            if balance_row is not None:
                raise InvalidInput("--balance goes with --lot: a secondary standardization "
                                   "weighs nothing")
            assert against is not None
            ref_batch = by_code(s, Batch, against, "batch")
            reference = _reference(s, ref_batch, b, performed_at, ref_notes)
        else:
            assert lot is not None
            lot_row = by_code(s, Lot, lot, "lot")
            if lot_row.expires < performed_at.date():
                raise Refused(f"lot {lot_row.code} expired on {lot_row.expires.isoformat()}")
        cond = Conditions(batch=b, view=spec_view.view(b.spec), performed_at=performed_at,
                           temperature=temp, blank=blank_r, indicator=indicator, lot=lot_row,
                           balance=balance_row, burette=burette_row, reference=reference,
                           entered_at=utc_now(), repeatability=rsd, reaction=reaction)
        plausible_readings(entries, secondary=secondary, burette=burette_row)
        draw(s, b, sum((Decimal(e.volume.text) for e in entries), Decimal(0)), "the titrant")
        if ref_batch is not None:
            draw(s, ref_batch, sum((Decimal(e.amount.text) for e in entries), Decimal(0)),
                 "the aliquots")
        e, columns = _evaluate(s, cond, entries, notes=temp_notes)
        assert e.factor is not None
        plaus.factor(e.factor, nominal=cond.view.nominal, unit=cond.view.unit)
        if not record:
            return _result(cond, e, run=None, status=None, notes=ref_notes)
        code = next_code(s, Run, f"R{clock.local_date(performed_at, lab_zone(s)):%y%m%d}")
        run = Run(
            code=code, batch_id=b.id, method="secondary" if secondary else "direct",
            lot_id=lot_row.id if lot_row else None,
            reference_batch_id=ref_batch.id if ref_batch else None,
            balance_id=balance_row.id if balance_row else None,
            burette_id=burette_row.id if burette_row else None,
            temperature_c_text=temp.text, blank_ml_text=blank_r.text,
            performed_at=performed_at, recorded_at=utc_now(), analyst=user.name,
            status="awaiting-review", **columns,
        )
        write(s, user.name, "run.record", run, performed_at=performed_at,
              reason=parse_text(late_reason, "reason", max_len=500))
        now = utc_now()
        # The replicates in one insert and their events in one, then their sources.
        reps = [Replicate(run_id=run.id, position=pos, version=1,
                          amount_text=entry.amount.text, volume_ml_text=entry.volume.text,
                          excluded=False, created_at=now, created_by=user.name)
                for pos, entry in enumerate(entries, start=1)]
        write_all(s, user.name, "replicate.record", reps, performed_at=performed_at)
        sources.record(s, user.name, run, reps, entries)
        return _result(cond, e, run=code, status=run.status, notes=ref_notes)


def _current_replicates(s: Session, run: Run) -> dict[int, Replicate]:
    latest: dict[int, Replicate] = {}
    for r in s.scalars(select(Replicate).where(Replicate.run_id == run.id)
                       .order_by(Replicate.position, Replicate.version)):
        latest[r.position] = r
    return latest


def _conditions_of(run: Run) -> Conditions:
    payload = json.loads(run.result_json) if run.result_json else {}
    reference = payload.get("reference")
    return Conditions(
        batch=run.batch, view=spec_view.view(run.batch.spec), performed_at=run.performed_at,
        temperature=parse_number(run.temperature_c_text or "20", "temperature (C)"),
        blank=parse_number(run.blank_ml_text or "0", "blank (mL)", non_negative=True),
        indicator=run.indicator, lot=run.lot, balance=run.balance, burette=run.burette,
        reference=ev.Reference(**reference) if reference else None,
        entered_at=run.recorded_at,
        # What was recorded is read back as it was accepted then (any % up to 100),
        # so a run recorded before the 5 % bound still re-evaluates.
        repeatability=parse_percent(payload["repeatability_given"], "repeatability RSD (%)")
        if payload.get("repeatability_given") is not None else None,
        reaction=payload.get("reaction_given"))


@retry.on_conflict
def _revise(db: Database, *, actor: str, run: str, position: int, reason: str | None,
            passphrase: str | None, action: str, amount: str | None = None,
            volume: str | None = None, exclude: bool = False) -> RunResult:
    """Add a new version of one replicate and recompute the run (signed, with a reason)."""
    reason = parse_text(reason, "reason", max_len=1000)
    if not (reason and reason.strip()):
        raise InvalidInput(f"a {action} needs a --reason")
    if position < 1:
        raise InvalidInput("--replicate counts from 1")
    signed(db, actor, passphrase, RECORDERS, f"{action} replicates",
           meaning=f"{action.rstrip('e')}ed a replicate", what=f"run {run} #{position}")
    uncertainty.load_library()  # before the writer lock, not under it
    with db.session() as s:
        user = acting(s, actor, RECORDERS, f"{action} replicates")
        r = by_code(s, Run, run, "run")
        if r.batch.retired_at is not None:
            raise Refused(f"batch {r.batch.code} is retired; its runs cannot be changed")
        current = _current_replicates(s, r)
        if position not in current:
            raise InvalidInput(f"run {r.code} has no replicate {position} "
                               f"(it has {len(current)})")
        old = current[position]
        amount_name = "aliquot (mL)" if r.method == "secondary" else "mass (g)"
        new_amount = parse_number(amount, f"replicate {position} {amount_name}", positive=True) \
            if amount is not None else None
        new_volume = parse_number(volume, f"replicate {position} titrant volume (mL)",
                                  positive=True) if volume is not None else None
        if exclude and old.excluded:
            raise Refused(f"replicate {position} of run {r.code} is already excluded")
        if not exclude and new_amount is None and new_volume is None:
            raise InvalidInput("say what is corrected: --mass/--aliquot G or --volume ML")
        amount_text = new_amount.text if new_amount else old.amount_text
        volume_text = new_volume.text if new_volume else old.volume_ml_text
        if not exclude and (amount_text, volume_text) == (old.amount_text, old.volume_ml_text):
            raise InvalidInput(f"replicate {position} already reads {old.amount_text}:"
                               f"{old.volume_ml_text}; nothing to correct")
        new = Replicate(run_id=r.id, position=position, version=old.version + 1,
                        amount_text=amount_text, volume_ml_text=volume_text,
                        excluded=exclude or old.excluded, reason=reason, supersedes_id=old.id,
                        created_at=utc_now(), created_by=user.name)
        current[position] = new
        entries = [ReplicateEntry(
            amount=parse_number(rep.amount_text, f"replicate {pos} {amount_name}", positive=True),
            volume=parse_number(rep.volume_ml_text, f"replicate {pos} titrant volume (mL)",
                                positive=True))
            for pos, rep in sorted(current.items())]
        entries = sources.with_stored_curves(s, r, entries)
        excluded = frozenset(pos for pos, rep in current.items() if rep.excluded)
        cond = _conditions_of(r)
        if not exclude:  # the corrected reading must be plausible; the others stand as read
            plausible_readings([entries[position - 1]], secondary=cond.secondary,
                               burette=cond.burette, first=position)
        kept = [n for n in json.loads(r.result_json or "{}").get("notes", [])
                if n == NO_TEMPERATURE_NOTE]
        e, columns = _evaluate(s, cond, entries, excluded, notes=kept)
        write(s, user.name, f"replicate.{action}", new, reason=reason)
        sources.carry(s, user.name, old, new)
        previous_status = r.status
        for key, value in columns.items():
            setattr(r, key, value)
        r.status = "awaiting-review"
        write(s, user.name, f"run.{action}", r,
              reason=f"{reason} (replicate {position}; was {previous_status})")
        return _result(cond, e, run=r.code, status=r.status, previous_status=previous_status)


def correct(db: Database, *, actor: str, run: str, replicate: int, mass: str | None = None,
            volume: str | None = None, reason: str | None, passphrase: str | None
            ) -> RunResult:
    """Correct one replicate's reading: a new version; the old stays in the history."""
    return _revise(db, actor=actor, run=run, position=replicate, reason=reason,
                   passphrase=passphrase, action="correct", amount=mass, volume=volume)


def exclude(db: Database, *, actor: str, run: str, replicate: int, reason: str | None,
            passphrase: str | None) -> RunResult:
    """Exclude one replicate (an outlier, a spoiled titration) with a recorded reason."""
    return _revise(db, actor=actor, run=run, position=replicate, reason=reason,
                   passphrase=passphrase, action="exclude", exclude=True)
