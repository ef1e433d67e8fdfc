"""Bottle labels: print one (recording what it showed) and find the outdated ones.

Each print writes a ``label_prints`` row and its audit event, in the same
transaction that moves the finished PDF into place: a label that exists on disk
is in the record, and a refused print leaves neither a row nor a file.
"""

from __future__ import annotations

import json
import re
from datetime import date
from pathlib import Path
from typing import Any

from sqlalchemy import select
from sqlalchemy.orm import Session

from prepbook.errors import InvalidInput, NotFound, Refused
from prepbook.inputs import utc_now
from prepbook.lab import specs as spec_view
from prepbook.lab.common import acting, by_code, iso, write
from prepbook.store.engine import Database
from prepbook.store.models import Batch, LabelPrint, Lot, Run

MAX_COPIES = 500


def default_file_name(code: str) -> str:
    """label-<code>.pdf, with anything a file name should not hold replaced by '_'."""
    return "label-" + re.sub(r"[^A-Za-z0-9._()+-]", "_", code) + ".pdf"


def _current(session: Session, batch: Batch, today: date) -> dict[str, Any]:
    """What a label of ``batch`` shows today: its accepted result, dates and state."""
    from prepbook.lab import board
    from prepbook.lab.batches import current_normality

    life = board.batch_life(session, batch, today)
    n20, run = current_normality(session, batch)
    view = spec_view.view(batch.spec)
    concentration = view.nominal * run.factor if run is not None and run.factor else None
    return {
        "state": life.state,
        "run": run.code if run is not None else None,
        "run_id": run.id if run is not None else None,
        "normality": n20,
        "factor": run.factor if run is not None else None,
        "concentration": concentration,
        "standardized_on": iso(run.performed_at.date()) if run is not None else None,
        "restandardize_by": life.restandardize_by,
        "expires": life.expires,
    }


def _batch_content(session: Session, batch: Batch, actor: str, today: date) -> dict[str, Any]:
    view = spec_view.view(batch.spec)
    now = _current(session, batch, today)
    return {
        "kind": "batch",
        "code": batch.code,
        "spec": batch.spec.code,
        "name": batch.spec.name,
        "unit": view.unit,
        "nominal": view.nominal,
        **{k: now[k] for k in ("state", "run", "normality", "factor", "concentration",
                               "standardized_on", "restandardize_by", "expires")},
        "made_on": iso(batch.made_at.date()),
        "made_by": batch.made_by,
        "storage": view.storage,
        "hazard": {k: view.hazard.get(k) for k in ("signal_word", "statements", "pictograms")},
        "printed_on": iso(today),
        "printed_by": actor,
    }


def _lot_content(lot: Lot, actor: str, today: date) -> dict[str, Any]:
    from prepbook.catalog import loader

    material = loader.find_material(lot.material_code)
    hazard = material.hazard
    return {
        "kind": "lot",
        "code": lot.code,
        "name": material.name[:1].upper() + material.name[1:],
        "material": material.code,
        "formula": material.formula,
        "purity_percent": lot.purity_text,
        "purity_u_percent": lot.purity_u_text,
        "certificate": lot.certificate,
        "opened_on": iso(lot.opened_on),
        "dried_on": iso(lot.dried_on),
        "drying": material.drying,
        "expires": iso(lot.expires),
        "expired": lot.expires < today,
        "hazard": ({"signal_word": hazard.signal_word, "statements": list(hazard.statements),
                    "pictograms": list(hazard.pictograms)} if hazard else {}),
        "printed_on": iso(today),
        "printed_by": actor,
    }


def print_label(db: Database, *, actor: str, code: str, output: str | None = None,
                size: str | None = None, copies: int = 1, sheet: str | None = None,
                lot: bool = False, replace: bool = False) -> dict[str, Any]:
    """Write the PDF label of a batch (or, with ``lot``, of a primary-standard lot) and
    record the print; returns what was printed and where."""
    from prepbook.render import files, labels, sizes

    label_size = sizes.find_size(size or sizes.DEFAULT_SIZE)
    label_sheet = sizes.find_sheet(sheet) if sheet else None
    if not 1 <= copies <= MAX_COPIES:
        raise InvalidInput(f"--copies must be between 1 and {MAX_COPIES}")
    target = Path(output) if output else Path(default_file_name(code))
    if target.suffix.lower() != ".pdf":
        raise InvalidInput(f"{target} should end in .pdf")
    files.check_target(target, replace=replace)
    now = utc_now()
    with db.session() as s:
        user = acting(s, actor, doing="print labels")
        if lot:
            lot_row = by_code(s, Lot, code, "lot")
            content = _lot_content(lot_row, user.name, now.date())
            row = LabelPrint(lot_id=lot_row.id, expires=lot_row.expires)
        else:
            batch = _find_batch(s, code)
            if batch.retired_at is not None:
                raise Refused(f"batch {batch.code} is retired; its bottle is not relabelled")
            content = _batch_content(s, batch, user.name, now.date())
            current = _current(s, batch, now.date())
            row = LabelPrint(
                batch_id=batch.id, run_id=current["run_id"], normality=current["normality"],
                factor=current["factor"],
                standardized_on=_date(current["standardized_on"]),
                restandardize_by=_date(current["restandardize_by"]),
                expires=_date(current["expires"]))
        pdf, layout = labels.label_pdf(content, label_size, copies=copies, sheet=label_sheet)
        row.printed_at = now
        row.printed_by = user.name
        row.size = label_size.name
        row.sheet = label_sheet.name if label_sheet else None
        row.copies = copies
        row.file_name = str(files.absolute(target))
        row.shown_json = json.dumps(content, sort_keys=True, ensure_ascii=False)
        with files.staged(target, replace=replace) as (tmp, commit):
            tmp.write_bytes(pdf)
            write(s, user.name, "label.print", row)
            commit()  # last step inside the transaction: a failed move rolls the row back
        return {
            "label": row.id,
            "kind": content["kind"],
            "code": content["code"],
            "file": row.file_name,
            "size": label_size.name,
            "sheet": row.sheet,
            "copies": copies,
            "run": content.get("run"),
            "factor": content.get("factor"),
            "state": content.get("state"),
            "font_pt": layout.font_pt,
            "notes": list(layout.notes),
            "printed_at": iso(now),
            "printed_by": user.name,
        }


def _date(text: str | None) -> date | None:
    return date.fromisoformat(text) if text else None


def _find_batch(session: Session, code: str) -> Batch:
    try:
        return by_code(session, Batch, code, "batch")
    except NotFound:
        if session.scalars(select(Lot.id).where(Lot.code == code)).first() is not None:
            raise NotFound(f"no batch with code {code!r}; {code} is a lot: pass --lot") from None
        raise


def stale_labels(db: Database, today: date | None = None) -> list[dict[str, Any]]:
    """Bottles (batches not retired) whose latest label no longer matches the record:
    a newer or corrected standardization, another factor, or other dates."""
    today = today or utc_now().date()
    out: list[dict[str, Any]] = []
    with db.session(write=False) as s:
        latest: dict[int, LabelPrint] = {}
        for lp in s.scalars(select(LabelPrint).where(LabelPrint.batch_id.is_not(None))
                            .order_by(LabelPrint.printed_at, LabelPrint.id)):
            assert lp.batch_id is not None
            latest[lp.batch_id] = lp
        for batch_id, lp in latest.items():
            batch = s.get(Batch, batch_id)
            if batch is None or batch.retired_at is not None:
                continue
            now = _current(s, batch, today)
            shown_run = s.get(Run, lp.run_id).code if lp.run_id is not None else None
            reasons = []
            if lp.run_id != now["run_id"]:
                reasons.append(f"the label shows {'run ' + shown_run if shown_run else 'no run'}"
                               f"; the current accepted run is {now['run'] or 'none'}")
            elif lp.factor != now["factor"]:
                reasons.append(f"factor changed from {lp.factor!r} to {now['factor']!r} "
                               "(the run was recomputed)")
            for what, shown, current in (
                ("restandardize by", iso(lp.restandardize_by), now["restandardize_by"]),
                ("expires", iso(lp.expires), now["expires"]),
            ):
                if shown != current:
                    reasons.append(f"{what}: label {shown or '-'}, record {current or '-'}")
            if reasons:
                out.append({
                    "batch": batch.code,
                    "label": lp.id,
                    "printed_at": iso(lp.printed_at),
                    "printed_by": lp.printed_by,
                    "file": lp.file_name,
                    "shown": {"run": shown_run, "factor": lp.factor,
                              "restandardize_by": iso(lp.restandardize_by),
                              "expires": iso(lp.expires)},
                    "current": {k: now[k] for k in ("run", "factor", "restandardize_by",
                                                    "expires", "state")},
                    "reasons": reasons,
                })
    out.sort(key=lambda r: r["batch"])
    return out


def label_prints(db: Database, code: str) -> list[dict[str, Any]]:
    """Every recorded print of a batch's label, oldest first (for the batch report)."""
    with db.session(write=False) as s:
        batch = by_code(s, Batch, code, "batch")
        rows = s.scalars(select(LabelPrint).where(LabelPrint.batch_id == batch.id)
                         .order_by(LabelPrint.printed_at, LabelPrint.id)).all()
        return [{"printed_at": iso(r.printed_at), "printed_by": r.printed_by,
                 "run": s.get(Run, r.run_id).code if r.run_id is not None else None,
                 "factor": r.factor, "size": r.size, "copies": r.copies,
                 "file": r.file_name} for r in rows]
