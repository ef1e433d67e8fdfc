"""Standardization runs: recording, correcting, excluding, and their review.

``standardize`` records a run exactly as entered, computes it with the core,
applies every acceptance check and leaves it awaiting review. ``correct`` and
``exclude`` never edit a replicate: they add a new version of it, with a reason,
and recompute the run, which returns to awaiting review. ``review`` is the
second person's signed decision.
"""

from __future__ import annotations

import functools
import json
import math
from dataclasses import dataclass, fields, replace
from datetime import datetime
from typing import Any

from sqlalchemy import bindparam, select
from sqlalchemy.orm import Session

from prepbook.errors import InvalidInput, Refused
from prepbook.inputs import (
    Reading,
    ReplicateEntry,
    parse_datetime,
    parse_number,
    parse_replicates,
    parse_text,
    utc_now,
)
from prepbook.lab import specs as spec_view
from prepbook.lab.batches import current_normality, instrument_of, next_code, run_dict
from prepbook.lab.common import (
    RECORDERS,
    REVIEWERS,
    acting,
    by_code,
    find_by_code,
    not_future,
    setting,
    signed,
    write,
)
from prepbook.store import retry
from prepbook.store.engine import Database
from prepbook.store.models import Batch, Instrument, Lot, Replicate, Review, Run

# Defaults when a run names no instrument (stated in the run's notes so nobody is misled).
DEFAULT_BURETTE_TOLERANCE_ML = 0.05  # Class A 50 mL burette, ISO 385
DEFAULT_PIPETTE_TOLERANCE_ML = 0.03  # Class A 25 mL pipette (from memory)
DEFAULT_BALANCE_LINEARITY_G = 0.00015  # the balance of EURACHEM/CITAC CG4 Example A2
DEFAULT_PURITY_HALF_WIDTH = 0.0005  # +/-0.05 %, CG4 Example A2's certificate
# Water in which the standard is dissolved before titration, for the concentration at the
# equivalence point (indicator check): common practice, no source.
DISSOLVING_WATER_ML = 50.0


def _float(text: str | None) -> float | None:
    return float(text) if text is not None else None


def _budget_dicts(unc: Any) -> list[dict[str, Any]]:
    # The budget lines are flat dataclasses of scalars: their fields, without asdict's
    # recursive deep copy.
    if unc is None:
        return []
    return [{f.name: getattr(line, f.name) for f in fields(line)} for line in unc.budget]


def _check_dicts(checks: Any) -> list[dict[str, Any]]:
    return [{"name": c.name, "passed": c.passed, "severity": c.severity, "message": c.message}
            for c in checks]


def _batch_state(session: Session, batch: Batch, when: datetime) -> str:
    from prepbook.lab.board import batch_life

    return batch_life(session, batch, when.date()).state


@dataclass(frozen=True)
class _Conditions:
    """Everything a run is computed from, except its replicates."""

    batch: Batch
    view: spec_view.SpecView
    performed_at: datetime
    temperature: Reading
    blank: Reading
    indicator: str | None
    lot: Lot | None = None
    balance: Instrument | None = None
    burette: Instrument | None = None
    reference: dict[str, Any] | None = None  # secondary: the reference used, as recorded


def _setting_number(session: Session, key: str, default: float) -> float:
    try:
        return float(setting(session, key, str(default)))
    except ValueError:
        return default


def _evaluate(s: Session, c: _Conditions, entries: list[ReplicateEntry],
              excluded: frozenset[int] = frozenset()) -> dict[str, Any]:
    """Compute a run from its conditions and replicates: result, checks, payload."""
    from prepbook.catalog import loader
    from prepbook.chem import corrections, formula
    from prepbook.chem import standardization as st
    from prepbook.rules import acceptance

    view = c.view
    solute = loader.find_material(view.solute)
    titrant_rx = solute.reaction(name=view.reaction) if view.reaction else solute.reaction()
    temperature_range = _setting_number(s, "temperature_range_c", 3.0)
    notes: list[str] = []
    for i, e in enumerate(entries, start=1):
        if c.blank.value >= e.volume.value:
            raise InvalidInput(f"blank {c.blank.text} mL is not smaller than replicate {i}'s "
                               f"titrant volume {e.volume.text} mL")
    capacity = _float(c.burette.capacity_text) if c.burette else None
    if capacity is not None:
        for i, e in enumerate(entries, start=1):
            if e.volume.value > capacity:
                raise InvalidInput(f"replicate {i} titrant volume {e.volume.text} mL exceeds "
                                   f"the capacity of burette {c.burette.code} "  # type: ignore[union-attr]
                                   f"({c.burette.capacity_text} mL)")  # type: ignore[union-attr]
    tol = _float(c.burette.tolerance_text) if c.burette else None
    if tol is None:
        tol = DEFAULT_BURETTE_TOLERANCE_ML
        notes.append("no burette tolerance on record: +/-0.05 mL (Class A 50 mL) assumed")
    kept = [e for i, e in enumerate(entries, start=1) if i not in excluded]
    if not kept:
        raise InvalidInput("every replicate would be excluded; at least one must remain")
    mean_volume = sum(e.volume.value for e in kept) / len(kept)
    u_volume = st.volume_u_from_burette(tol, mean_volume, temperature_range_c=temperature_range)
    pairs = [(e.amount.value, e.volume.value) for e in entries]
    eq_ph: float | None = None
    indicator = c.indicator
    masses: list[float] | None
    if c.lot is not None:
        std_mat = loader.find_material(c.lot.material_code)
        std_rx, tit_rx = loader.reaction_for_pair(std_mat, solute)
        if tit_rx is not None:
            titrant_rx = tit_rx
        mm = formula.molar_mass(std_mat.formula)
        purity = float(c.lot.purity_text) / 100
        if c.lot.purity_u_text:
            half = float(c.lot.purity_u_text) / 100
        else:
            half = DEFAULT_PURITY_HALF_WIDTH
            notes.append("purity uncertainty not on record: +/-0.05 % assumed")
        standard = st.PrimaryStandard(
            name=std_mat.name, molar_mass_g_per_mol=mm.value_g_per_mol,
            u_molar_mass_g_per_mol=mm.u_g_per_mol, n_eq_per_mol=std_rx.n,
            purity_fraction=purity, u_purity_fraction=half / math.sqrt(3),
            density_g_per_cm3=std_mat.density_g_per_cm3)
        linearity = None
        if c.balance is not None:
            linearity = _float(c.balance.tolerance_text) or _float(c.balance.readability_text)
        if linearity is None:
            linearity = DEFAULT_BALANCE_LINEARITY_G
            notes.append("no balance tolerance on record: +/-0.15 mg linearity assumed")
        buoy = None
        if setting(s, "buoyancy", "off") == "on":
            if std_mat.density_g_per_cm3 is None:
                notes.append(f"no density known for {std_mat.name}: buoyancy not corrected")
            else:
                buoy = st.Buoyancy()
        result = st.direct(
            standard, pairs, blank_ml=c.blank.value, buoyancy=buoy, excluded=excluded,
            uncertainty=st.UncertaintyInputs(u_mass_g=st.mass_u_from_balance(linearity),
                                             u_volume_ml=u_volume))
        masses = [e.amount.value for e in entries]
        indicator = indicator or view.indicator or std_rx.indicator
        if std_rx.kind == "acid-base" and std_mat.pka:
            from prepbook.chem import equilibria

            mean_mass = sum(e.amount.value for e in kept) / len(kept)
            moles = mean_mass * purity / mm.value_g_per_mol
            conc = moles / ((mean_volume + DISSOLVING_WATER_ML) / 1000)
            eq_ph = equilibria.equivalence_ph_for(std_mat, std_rx, conc)
    else:
        ref = c.reference
        assert ref is not None
        n_ref = corrections.normality_at_temperature(ref["normality_20c"], 20.0,
                                                     c.temperature.value)
        u_ref = (ref.get("u") or 0.0) * n_ref / ref["normality_20c"]
        aliquot = kept[0].amount.value
        result = st.secondary(
            n_ref, u_ref, pairs, blank_ml=c.blank.value, excluded=excluded,
            uncertainty=st.UncertaintyInputs(
                u_mass_g=0.0, u_volume_ml=u_volume,
                u_aliquot_ml=st.volume_u_from_burette(DEFAULT_PIPETTE_TOLERANCE_ML, aliquot,
                                                      temperature_range_c=temperature_range)))
        masses = None
        indicator = indicator or view.indicator
        notes.append(f"reference {ref['batch']} at {ref['normality_20c']:.5f} eq/L (20 C), "
                     f"from its run {ref['run']}")
    normality = result.normality
    normality_20c = corrections.normality_at_temperature(normality, c.temperature.value, 20.0)
    factor = view.to_spec_unit(normality_20c, titrant_rx.n) / view.nominal
    ind_range = None
    if indicator:
        try:
            ind = loader.find_indicator(indicator)
            if ind.low_ph is not None and ind.high_ph is not None:
                ind_range = (ind.low_ph, ind.high_ph)
            indicator = ind.name
        except LookupError:  # an indicator outside the catalog is recorded as typed
            notes.append(f"indicator {indicator!r} is not in the catalog: not checked")
    instruments = [(i.code, i.kind, i.due) for i in (c.balance, c.burette) if i is not None]
    rules = replace(view.rules(), min_burette_fraction=_setting_number(
        s, "min_burette_fraction_percent", 30.0) / 100)
    checks = acceptance.check_standardization(
        rules,
        replicate_count=result.stats.n,
        rsd_percent=result.stats.rsd_percent,
        factor=factor,
        masses_g=masses,
        balance_readability_g=_float(c.balance.readability_text) if c.balance else None,
        volumes_ml=[e.volume.value for e in entries],
        burette_capacity_ml=capacity,
        lot_expires=c.lot.expires if c.lot else None,
        lot_dried_on=c.lot.dried_on if c.lot else None,
        run_date=c.performed_at.date(),
        instruments=instruments,
        outlier_index=result.stats.outlier.index if result.stats.outlier else None,
        excluded=excluded,
        indicator=indicator,
        equivalence_ph=eq_ph,
        indicator_range=ind_range,
    )
    unc = result.uncertainty
    payload = {
        "verdict": acceptance.verdict(checks),
        "checks": _check_dicts(checks),
        "budget": _budget_dicts(unc),
        "notes": notes + list(getattr(unc, "notes", ()) or ()),
        "equivalence_ph": eq_ph,
        "titrant_n_eq_per_mol": titrant_rx.n,
        "reference": c.reference,
        "replicates": [
            {"index": r.index, "normality": r.normality, "outlier": r.outlier,
             "excluded": r.excluded, "true_mass_g": r.true_mass_g}
            for r in result.replicates
        ],
    }
    fields = {
        "indicator": indicator, "normality": normality, "normality_20c": normality_20c,
        "factor": factor, "sd": result.stats.sd, "rsd_percent": result.stats.rsd_percent,
        "u": unc.u if unc else None, "U": unc.U if unc else None, "k": unc.k if unc else None,
        "result_json": json.dumps(payload, sort_keys=True),
    }
    warnings = [ch["message"] for ch in payload["checks"] if not ch["passed"]] + notes
    summary = {
        "batch": c.batch.code,
        "normality": normality,
        "normality_20c": normality_20c,
        "temperature_c": c.temperature.value,
        "factor": factor,
        "unit": view.unit,
        "sd": result.stats.sd,
        "rsd_percent": result.stats.rsd_percent,
        "u": fields["u"],
        "U": fields["U"],
        "k": fields["k"],
        "verdict": payload["verdict"],
        "checks": payload["checks"],
        "warnings": warnings,
        "replicates": payload["replicates"],
        "budget": payload["budget"],
    }
    return {"summary": summary, "fields": fields}


def _reference(s: Session, ref_batch: Batch, batch: Batch, performed_at: datetime,
               notes: list[str]) -> dict[str, Any]:
    if ref_batch.id == batch.id:
        raise InvalidInput("a batch cannot be standardized against itself")
    ref_state = _batch_state(s, ref_batch, performed_at)
    if ref_state not in ("in-service", "due"):
        raise Refused(f"reference batch {ref_batch.code} is {ref_state}; it must be in service")
    if ref_state == "due":
        notes.append(f"reference batch {ref_batch.code} is due for restandardization")
    n20, ref_run = current_normality(s, ref_batch)
    assert n20 is not None and ref_run is not None
    return {"batch": ref_batch.code, "run": ref_run.code, "normality_20c": n20, "u": ref_run.u}


@retry.on_conflict
def standardize(
    db: Database,
    *,
    actor: str,
    batch: str,
    replicates: list[str],
    lot: str | None = None,
    against: str | None = None,
    balance: str | None = None,
    burette: str | None = None,
    temperature: str | None = None,
    blank: str | None = None,
    indicator: str | None = None,
    at: str | None = None,
    record: bool = True,
) -> dict[str, Any]:
    """Record and compute one standardization; it then awaits a second person's review.

    With ``record=False`` nothing is written: the result is computed and returned
    (``run`` is None), which is how the terminal shows the running result while
    replicates are typed one at a time.
    """
    if (lot is None) == (against is None):
        raise InvalidInput("standardize against exactly one of --lot LOT (a primary standard) "
                           "or --against BATCH (a standardized solution)")
    secondary = against is not None
    entries: list[ReplicateEntry] = parse_replicates(
        replicates, amount_name="aliquot (mL)" if secondary else "mass (g)")
    temp = parse_number(temperature or "20", "temperature (C)")
    if not 0 <= temp.value <= 40:
        raise InvalidInput(f"temperature {temp.text} C is outside 0-40 C")
    blank_r = parse_number(blank or "0", "blank (mL)", non_negative=True)
    indicator = parse_text(indicator, "indicator", max_len=60)
    performed_at = not_future(parse_datetime(at, "--at") if at else None, "standardization time")

    with db.session(write=record) as s:
        user = acting(s, actor, doing="standardize")
        b = by_code(s, Batch, batch, "batch")
        state = _batch_state(s, b, performed_at)
        if state in ("expired", "retired"):
            raise Refused(f"batch {b.code} is {state} and cannot be standardized")
        if performed_at < b.made_at:
            raise InvalidInput(f"the standardization ({performed_at:%Y-%m-%d %H:%M}) cannot be "
                               f"before the batch was made ({b.made_at:%Y-%m-%d %H:%M})")
        balance_row = instrument_of(s, balance, "balance")
        burette_row = instrument_of(s, burette, "burette")
        lot_row: Lot | None = None
        ref_batch: Batch | None = None
        reference = None
        ref_notes: list[str] = []
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
        cond = _Conditions(batch=b, view=spec_view.view(b.spec), performed_at=performed_at,
                           temperature=temp, blank=blank_r, indicator=indicator, lot=lot_row,
                           balance=balance_row, burette=burette_row, reference=reference)
        ev = _evaluate(s, cond, entries)
        summary = ev["summary"]
        summary["warnings"] = ref_notes + summary["warnings"]
        if not record:
            return {"run": None, **summary, "status": None}
        code = next_code(s, Run, f"R{performed_at:%y%m%d}")
        run = Run(
            code=code, batch_id=b.id, method="secondary" if secondary else "direct",
            lot_id=lot_row.id if lot_row else None,
            reference_batch_id=ref_batch.id if ref_batch else None,
            balance_id=balance_row.id if balance_row else None,
            burette_id=burette_row.id if burette_row else None,
            temperature_c_text=temp.text, blank_ml_text=blank_r.text,
            performed_at=performed_at, recorded_at=utc_now(), analyst=user.name,
            status="awaiting-review", **ev["fields"],
        )
        write(s, user.name, "run.record", run, performed_at=performed_at)
        now = utc_now()
        for pos, e in enumerate(entries, start=1):
            write(s, user.name, "replicate.record", Replicate(
                run_id=run.id, position=pos, version=1, amount_text=e.amount.text,
                volume_ml_text=e.volume.text, excluded=False, created_at=now,
                created_by=user.name), performed_at=performed_at)
        return {"run": code, **summary, "status": run.status}


def _current_replicates(s: Session, run: Run) -> dict[int, Replicate]:
    latest: dict[int, Replicate] = {}
    for r in s.scalars(select(Replicate).where(Replicate.run_id == run.id)
                       .order_by(Replicate.position, Replicate.version)):
        latest[r.position] = r
    return latest


def _conditions_of(run: Run) -> _Conditions:
    payload = json.loads(run.result_json) if run.result_json else {}
    return _Conditions(
        batch=run.batch, view=spec_view.view(run.batch.spec), performed_at=run.performed_at,
        temperature=parse_number(run.temperature_c_text or "20", "temperature (C)"),
        blank=parse_number(run.blank_ml_text or "0", "blank (mL)", non_negative=True),
        indicator=run.indicator, lot=run.lot, balance=run.balance, burette=run.burette,
        reference=payload.get("reference"))


@retry.on_conflict
def _revise(db: Database, *, actor: str, run: str, position: int, reason: str | None,
            passphrase: str | None, action: str, amount: str | None = None,
            volume: str | None = None, exclude: bool = False) -> dict[str, Any]:
    """Add a new version of one replicate and recompute the run (signed, with a reason)."""
    reason = parse_text(reason, "reason", max_len=1000)
    if not (reason and reason.strip()):
        raise InvalidInput(f"a {action} needs a --reason")
    if position < 1:
        raise InvalidInput("--replicate counts from 1")
    signed(db, actor, passphrase, RECORDERS, f"{action} replicates")
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
        excluded = frozenset(pos for pos, rep in current.items() if rep.excluded)
        ev = _evaluate(s, _conditions_of(r), entries, excluded)
        write(s, user.name, f"replicate.{action}", new, reason=reason)
        previous_status = r.status
        for key, value in ev["fields"].items():
            setattr(r, key, value)
        r.status = "awaiting-review"
        write(s, user.name, f"run.{action}", r,
              reason=f"{reason} (replicate {position}; was {previous_status})")
        return {"run": r.code, "previous_status": previous_status, **ev["summary"],
                "status": r.status}


def correct(db: Database, *, actor: str, run: str, replicate: int, mass: str | None = None,
            volume: str | None = None, reason: str | None, passphrase: str | None
            ) -> dict[str, Any]:
    """Correct one replicate's reading: a new version; the old stays in the history."""
    return _revise(db, actor=actor, run=run, position=replicate, reason=reason,
                   passphrase=passphrase, action="correct", amount=mass, volume=volume)


def exclude(db: Database, *, actor: str, run: str, replicate: int, reason: str | None,
            passphrase: str | None) -> dict[str, Any]:
    """Exclude one replicate (an outlier, a spoiled titration) with a recorded reason."""
    return _revise(db, actor=actor, run=run, position=replicate, reason=reason,
                   passphrase=passphrase, action="exclude", exclude=True)


def _run_to_review(s: Session, code: str) -> Run:
    """The run with this code; or, given a batch code, that batch's one run awaiting review."""
    r = find_by_code(s, Run, code)
    if r is not None:
        return r
    b = find_by_code(s, Batch, code)
    if b is None:
        return by_code(s, Run, code, "run")  # raises NotFound with suggestions
    waiting = list(s.scalars(select(Run).where(Run.batch_id == b.id,
                                               Run.status == "awaiting-review")))
    if len(waiting) != 1:
        raise InvalidInput(f"batch {b.code} has {len(waiting)} runs awaiting review; "
                           "name the run" + (": " + ", ".join(w.code for w in waiting)
                                             if waiting else ""))
    return waiting[0]


@functools.cache
def _correctors_query() -> Any:
    """Who recorded a later version (a correction) of one of a run's replicates."""
    return select(Replicate.created_by).where(Replicate.run_id == bindparam("run_id"),
                                              Replicate.version > 1)


def _review_precheck(s: Session, actor: str, run: str) -> Run:
    reviewer = acting(s, actor, REVIEWERS, "review standardizations")
    r = _run_to_review(s, run)
    if r.analyst == reviewer.name:
        raise Refused(f"{reviewer.name} recorded run {r.code} and cannot review it; "
                      "a second person must")
    corrected_by = set(s.scalars(_correctors_query(), {"run_id": r.id}))
    if reviewer.name in corrected_by:
        raise Refused(f"{reviewer.name} corrected run {r.code} and cannot review it")
    if r.status != "awaiting-review":
        raise Refused(f"run {r.code} is already {r.status}")
    return r


@retry.on_conflict
def review(
    db: Database,
    *,
    actor: str,
    run: str,
    accept: bool,
    reason: str | None,
    passphrase: str | None,
    at: str | None = None,
) -> dict[str, Any]:
    """A second person's signed accept or reject of a run awaiting review.

    ``at`` records when the review was actually done (transcribing a paper
    sign-off); the audit event keeps the time it was entered as well.
    """
    reason = parse_text(reason, "reason", max_len=1000)
    signed_at = not_future(parse_datetime(at, "--at") if at else None, "review time")
    if not accept and not (reason and reason.strip()):
        raise InvalidInput("a rejection needs a --reason")
    with db.session(write=False) as s:
        _review_precheck(s, actor, run)
    signed(db, actor, passphrase, REVIEWERS, "review standardizations")
    with db.session() as s:
        r = _review_precheck(s, actor, run)
        if signed_at < r.performed_at:
            raise InvalidInput(f"the review ({signed_at:%Y-%m-%d %H:%M}) cannot be before the "
                               f"run ({r.performed_at:%Y-%m-%d %H:%M})")
        decision = "accept" if accept else "reject"
        write(s, actor, f"review.{decision}",
              Review(run_id=r.id, reviewer=actor, decision=decision, reason=reason,
                     signed_at=signed_at), reason=reason, performed_at=signed_at)
        r.status = "accepted" if accept else "rejected"
        write(s, actor, "run.status", r, reason=reason, performed_at=signed_at)
        return run_dict(s, r, with_replicates=False).to_json() | {"batch": r.batch.code}


def runs_awaiting_review(db: Database) -> list[dict[str, Any]]:
    with db.session(write=False) as s:
        rows = s.scalars(select(Run).where(Run.status == "awaiting-review")
                         .order_by(Run.performed_at)).all()
        return [run_dict(s, r).to_json() | {"batch": r.batch.code} for r in rows]
