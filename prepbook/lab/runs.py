"""Standardization runs and their review.

``standardize`` records a run exactly as entered, computes it with the core,
applies every acceptance check and leaves it awaiting review; ``review`` is the
second person's signed decision.
"""

from __future__ import annotations

import json
import math
from dataclasses import asdict
from datetime import datetime
from typing import Any

from sqlalchemy import select
from sqlalchemy.orm import Session

from prepbook.errors import InvalidInput, Refused
from prepbook.inputs import (
    ReplicateEntry,
    parse_datetime,
    parse_number,
    parse_replicates,
    parse_text,
    utc_now,
)
from prepbook.lab import specs as spec_view
from prepbook.lab.batches import current_normality, instrument_of, next_code, run_dict
from prepbook.lab.common import REVIEWERS, acting, by_code, check_passphrase, not_future, write
from prepbook.store.engine import Database
from prepbook.store.models import Batch, Lot, Replicate, Review, Run

# Defaults when a run names no instrument (stated in the budget so nobody is misled).
DEFAULT_BURETTE_TOLERANCE_ML = 0.05  # Class A 50 mL burette, ISO 385
DEFAULT_BALANCE_LINEARITY_G = 0.00015  # EURACHEM/CITAC CG4 Example A2 balance
TEMPERATURE_RANGE_C = 3.0  # laboratory variation assumed for the volume budget
# Water in which the standard is dissolved before titration, for the concentration at the
# equivalence point (indicator check): common practice, no source.
DISSOLVING_WATER_ML = 50.0


def _float(text: str | None) -> float | None:
    return float(text) if text is not None else None


def _budget_dicts(unc: Any) -> list[dict[str, Any]]:
    return [asdict(line) for line in unc.budget] if unc is not None else []


def _check_dicts(checks: Any) -> list[dict[str, Any]]:
    return [{"name": c.name, "passed": c.passed, "severity": c.severity, "message": c.message}
            for c in checks]


def _batch_state(session: Session, batch: Batch, when: datetime) -> str:
    from prepbook.lab.board import batch_life

    return str(batch_life(session, batch, when.date())["state"])


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
    from prepbook.catalog import loader
    from prepbook.chem import corrections, formula
    from prepbook.chem import standardization as st
    from prepbook.rules import acceptance

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
    for e in entries:
        if blank_r.value >= e.volume.value:
            raise InvalidInput(f"blank {blank_r.text} mL is not smaller than the titrant volume "
                               f"{e.volume.text} mL")
    indicator = parse_text(indicator, "indicator", max_len=60)
    performed_at = not_future(parse_datetime(at, "--at") if at else None, "standardization time")

    with db.session() as s:
        user = acting(s, actor, doing="standardize")
        b = by_code(s, Batch, batch, "batch")
        state = _batch_state(s, b, performed_at)
        if state in ("expired", "retired"):
            raise Refused(f"batch {b.code} is {state} and cannot be standardized")
        if performed_at < b.made_at:
            raise InvalidInput(f"the standardization ({performed_at:%Y-%m-%d %H:%M}) cannot be "
                               f"before the batch was made ({b.made_at:%Y-%m-%d %H:%M})")
        view = spec_view.view(b.spec)
        solute = loader.find_material(view.solute)
        balance_row = instrument_of(s, balance, "balance")
        burette_row = instrument_of(s, burette, "burette")
        if secondary and balance_row is not None:
            raise InvalidInput("--balance goes with --lot: a secondary standardization weighs "
                               "nothing")
        capacity = _float(burette_row.capacity_text) if burette_row else None
        if capacity is not None:
            for e in entries:
                if e.volume.value > capacity:
                    raise InvalidInput(f"titrant volume {e.volume.text} mL exceeds the "
                                       f"capacity of burette {burette_row.code} "
                                       f"({burette_row.capacity_text} mL)")
        tol = (_float(burette_row.tolerance_text) if burette_row else None)
        tol = DEFAULT_BURETTE_TOLERANCE_ML if tol is None else tol
        mean_volume = sum(e.volume.value for e in entries) / len(entries)
        u_volume = st.volume_u_from_burette(tol, mean_volume,
                                            temperature_range_c=TEMPERATURE_RANGE_C)
        lot_row: Lot | None = None
        ref_batch: Batch | None = None
        eq_ph: float | None = None
        titrant_rx = solute.reaction(name=view.reaction) if view.reaction else solute.reaction()
        notes: list[str] = []
        if not secondary:
            assert lot is not None
            lot_row = by_code(s, Lot, lot, "lot")
            if lot_row.expires < performed_at.date():
                raise Refused(f"lot {lot_row.code} expired on {lot_row.expires.isoformat()}")
            std_mat = loader.find_material(lot_row.material_code)
            std_rx, tit_rx = loader.reaction_for_pair(std_mat, solute)
            if tit_rx is not None:
                titrant_rx = tit_rx
            mm = formula.molar_mass(std_mat.formula)
            purity = float(lot_row.purity_text) / 100
            half = float(lot_row.purity_u_text) / 100 if lot_row.purity_u_text else 0.0005
            if not lot_row.purity_u_text:
                notes.append("purity uncertainty not on record: +/-0.05 % assumed")
            standard = st.PrimaryStandard(
                name=std_mat.name, molar_mass_g_per_mol=mm.value_g_per_mol,
                u_molar_mass_g_per_mol=mm.u_g_per_mol, n_eq_per_mol=std_rx.n,
                purity_fraction=purity, u_purity_fraction=half / math.sqrt(3),
                density_g_per_cm3=std_mat.density_g_per_cm3)
            linearity = None
            if balance_row is not None:
                linearity = _float(balance_row.tolerance_text) or \
                    _float(balance_row.readability_text)
            if linearity is None:
                linearity = DEFAULT_BALANCE_LINEARITY_G
                notes.append("no balance tolerance on record: +/-0.15 mg linearity assumed")
            buoy = None
            from prepbook.lab.common import setting

            if setting(s, "buoyancy", "off") == "on":
                if std_mat.density_g_per_cm3 is None:
                    notes.append(f"no density known for {std_mat.name}: buoyancy not corrected")
                else:
                    buoy = st.Buoyancy()
            result = st.direct(
                standard, [(e.amount.value, e.volume.value) for e in entries],
                blank_ml=blank_r.value, buoyancy=buoy,
                uncertainty=st.UncertaintyInputs(u_mass_g=st.mass_u_from_balance(linearity),
                                                 u_volume_ml=u_volume))
            masses = [e.amount.value for e in entries]
            indicator = indicator or view.indicator or std_rx.indicator
            if std_rx.kind == "acid-base" and std_mat.pka:
                from prepbook.chem import equilibria

                mean_mass = sum(masses) / len(masses)
                moles = mean_mass * purity / mm.value_g_per_mol
                conc = moles / ((mean_volume + DISSOLVING_WATER_ML) / 1000)
                eq_ph = equilibria.equivalence_ph_for(std_mat, std_rx, conc)
        else:
            assert against is not None
            ref_batch = by_code(s, Batch, against, "batch")
            if ref_batch.id == b.id:
                raise InvalidInput("a batch cannot be standardized against itself")
            ref_state = _batch_state(s, ref_batch, performed_at)
            if ref_state not in ("in-service", "due"):
                raise Refused(f"reference batch {ref_batch.code} is {ref_state}; it must be "
                              "in service")
            if ref_state == "due":
                notes.append(f"reference batch {ref_batch.code} is due for restandardization")
            n20, ref_run = current_normality(s, ref_batch)
            assert n20 is not None and ref_run is not None
            n_ref = corrections.normality_at_temperature(n20, 20.0, temp.value)
            u_ref = (ref_run.u or 0.0) * n_ref / n20
            result = st.secondary(
                n_ref, u_ref, [(e.amount.value, e.volume.value) for e in entries],
                blank_ml=blank_r.value,
                uncertainty=st.UncertaintyInputs(u_mass_g=0.0, u_volume_ml=u_volume,
                                                 u_aliquot_ml=st.volume_u_from_burette(
                                                     0.03, entries[0].amount.value,
                                                     temperature_range_c=TEMPERATURE_RANGE_C)))
            masses = None
            indicator = indicator or view.indicator
        normality = result.normality
        normality_20c = corrections.normality_at_temperature(normality, temp.value, 20.0)
        factor = view.to_spec_unit(normality_20c, titrant_rx.n) / view.nominal
        ind_range = None
        if indicator:
            try:
                ind = loader.find_indicator(indicator)
                if ind.low_ph is not None and ind.high_ph is not None:
                    ind_range = (ind.low_ph, ind.high_ph)
                indicator = ind.name
            except Exception:  # an indicator outside the catalog is recorded as typed
                notes.append(f"indicator {indicator!r} is not in the catalog: not checked")
        instruments = [(i.code, i.kind, i.due) for i in (balance_row, burette_row)
                       if i is not None]
        checks = acceptance.check_standardization(
            view.rules(),
            replicate_count=result.stats.n,
            rsd_percent=result.stats.rsd_percent,
            factor=factor,
            masses_g=masses,
            balance_readability_g=_float(balance_row.readability_text) if balance_row else None,
            volumes_ml=[e.volume.value for e in entries],
            burette_capacity_ml=capacity,
            lot_expires=lot_row.expires if lot_row else None,
            lot_dried_on=lot_row.dried_on if lot_row else None,
            run_date=performed_at.date(),
            instruments=instruments,
            outlier_index=result.stats.outlier.index if result.stats.outlier else None,
            indicator=indicator,
            equivalence_ph=eq_ph,
            indicator_range=ind_range,
        )
        verdict = acceptance.verdict(checks)
        unc = result.uncertainty
        code = next_code(s, Run, f"R{performed_at:%y%m%d}") if record else None
        payload = {
            "verdict": verdict,
            "checks": _check_dicts(checks),
            "budget": _budget_dicts(unc),
            "notes": notes,
            "equivalence_ph": eq_ph,
            "titrant_n_eq_per_mol": titrant_rx.n,
            "replicates": [
                {"index": r.index, "normality": r.normality, "outlier": r.outlier,
                 "true_mass_g": r.true_mass_g}
                for r in result.replicates
            ],
        }
        warnings = [c["message"] for c in payload["checks"] if not c["passed"]] + notes
        summary = {
            "run": code,
            "batch": b.code,
            "normality": normality,
            "normality_20c": normality_20c,
            "temperature_c": temp.value,
            "factor": factor,
            "unit": view.unit,
            "sd": result.stats.sd,
            "rsd_percent": result.stats.rsd_percent,
            "u": unc.u if unc else None,
            "U": unc.U if unc else None,
            "k": unc.k if unc else None,
            "status": "awaiting-review" if record else None,
            "verdict": verdict,
            "checks": payload["checks"],
            "warnings": warnings,
            "replicates": payload["replicates"],
            "budget": payload["budget"],
        }
        if not record:
            return summary
        assert code is not None
        run = Run(
            code=code, batch_id=b.id, method="secondary" if secondary else "direct",
            lot_id=lot_row.id if lot_row else None,
            reference_batch_id=ref_batch.id if ref_batch else None,
            balance_id=balance_row.id if balance_row else None,
            burette_id=burette_row.id if burette_row else None,
            temperature_c_text=temp.text, blank_ml_text=blank_r.text, indicator=indicator,
            performed_at=performed_at, recorded_at=utc_now(), analyst=user.name,
            status="awaiting-review", normality=normality, normality_20c=normality_20c,
            factor=factor, sd=result.stats.sd, rsd_percent=result.stats.rsd_percent,
            u=unc.u if unc else None, U=unc.U if unc else None, k=unc.k if unc else None,
            result_json=json.dumps(payload, sort_keys=True),
        )
        write(s, user.name, "run.record", run, performed_at=performed_at)
        now = utc_now()
        for pos, e in enumerate(entries, start=1):
            write(s, user.name, "replicate.record", Replicate(
                run_id=run.id, position=pos, version=1, amount_text=e.amount.text,
                volume_ml_text=e.volume.text, excluded=False, created_at=now,
                created_by=user.name), performed_at=performed_at)
        return summary


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
    with db.session() as s:
        reviewer = acting(s, actor, REVIEWERS, "review standardizations")
        r = by_code(s, Run, run, "run")
        if r.analyst == reviewer.name:
            raise Refused(f"{reviewer.name} recorded run {r.code} and cannot review it; "
                          "a second person must")
        if r.status != "awaiting-review":
            raise Refused(f"run {r.code} is already {r.status}")
        if signed_at < r.performed_at:
            raise InvalidInput(f"the review ({signed_at:%Y-%m-%d %H:%M}) cannot be before the "
                               f"run ({r.performed_at:%Y-%m-%d %H:%M})")
        check_passphrase(reviewer, passphrase)
        decision = "accept" if accept else "reject"
        write(s, reviewer.name, f"review.{decision}",
              Review(run_id=r.id, reviewer=reviewer.name, decision=decision, reason=reason,
                     signed_at=signed_at), reason=reason, performed_at=signed_at)
        r.status = "accepted" if accept else "rejected"
        write(s, reviewer.name, "run.status", r, reason=reason, performed_at=signed_at)
        return run_dict(s, r, with_replicates=False) | {"batch": r.batch.code}


def runs_awaiting_review(db: Database) -> list[dict[str, Any]]:
    with db.session() as s:
        rows = s.scalars(select(Run).where(Run.status == "awaiting-review")
                         .order_by(Run.performed_at)).all()
        return [run_dict(s, r, with_replicates=False) | {"batch": r.batch.code} for r in rows]

