"""What remains in a batch: the volume made less every recorded draw.

One computation (``remaining_volumes``) for the board, ``batch show`` and every
service that draws from a batch (uses, the assays' sample titrations, dilutions,
standardizations); ``draw`` refuses taking more than remains.
"""

from __future__ import annotations

from collections.abc import Collection, Mapping
from decimal import Decimal
from functools import cache
from typing import Any

from sqlalchemy import Integer, String, bindparam, cast, null, or_, select, union_all
from sqlalchemy.orm import Session

from prepbook.errors import Refused
from prepbook.store.models import Batch, Replicate, Run, Use


def remaining_volumes(session: Session, batch_ids: Collection[int],
                      made: Mapping[int, str] | None = None) -> dict[int, Decimal]:
    """mL left in each of the given batches: the volume made, less every recorded draw:
    uses (the assays' too), aliquots taken to make other batches, the titrant of its
    standardizations and the aliquots pipetted from it to standardize others (the
    latest version of each replicate). Exact decimal arithmetic on the readings as
    entered; one query for any number of batches (two without ``made``). The one place
    the remaining volume is computed. ``made`` gives the volumes made (id -> mL as
    typed) of batches the caller already holds, which are then not read again."""
    ids = list(batch_ids)
    if made is None:
        made = dict(session.execute(
            select(Batch.id, Batch.volume_ml_text).where(Batch.id.in_(ids))).all())
    left: dict[int, Decimal] = {bid: Decimal(text) for bid, text in made.items()}
    latest: dict[tuple[int, int], tuple[int, int, int | None, str, str]] = {}
    for own, ref, run_id, pos, version, amount, volume in session.execute(
            _draws_statement(), {"ids": ids}):
        if run_id is None:  # a use, or an aliquot taken to make another batch
            left[own] -= Decimal(volume)
        elif (run_id, pos) not in latest or version > latest[(run_id, pos)][0]:
            latest[(run_id, pos)] = (version, own, ref, amount, volume)
    # The latest version of each replicate is the one kept.
    for _version, own, ref, amount, volume in latest.values():
        if own in left:
            left[own] -= Decimal(volume)
        if ref in left:
            left[ref] -= Decimal(amount)
    return left


@cache
def _draws_statement() -> Any:
    """Every draw from the batches ``:ids``, a row each: (batch drawn from, reference
    batch, replicate run, position, version, amount, volume); uses and aliquots fill only
    the first column and the volume. Built once (the ids are a bound parameter): making
    this statement costs more than running it on a young batch. One round trip under the
    writer lock."""
    ids: Any = bindparam("ids", expanding=True)
    no_int, no_text = cast(null(), Integer), cast(null(), String)
    return union_all(  # the NULLs are filtered out: every text is a volume
        select(Use.batch_id, no_int, no_int, no_int, no_int, no_text, Use.volume_ml_text)
        .where(Use.batch_id.in_(ids), Use.volume_ml_text.is_not(None)),
        select(Batch.parent_batch_id, no_int, no_int, no_int, no_int, no_text,
               Batch.aliquot_ml_text)
        .where(Batch.parent_batch_id.in_(ids), Batch.aliquot_ml_text.is_not(None)),
        select(Run.batch_id, Run.reference_batch_id, Replicate.run_id, Replicate.position,
               Replicate.version, Replicate.amount_text, Replicate.volume_ml_text)
        .join(Run, Replicate.run_id == Run.id)
        .where(or_(Run.batch_id.in_(ids), Run.reference_batch_id.in_(ids))))


def remaining_ml(session: Session, batch: Batch) -> Decimal:
    """mL left in one batch (``remaining_volumes``)."""
    return remaining_volumes(session, [batch.id], {batch.id: batch.volume_ml_text})[batch.id]


def draw(session: Session, batch: Batch, volume_ml: Decimal, what: str) -> None:
    """Refuse drawing more from a batch than remains in it (one line, nothing written)."""
    left = remaining_ml(session, batch)
    if volume_ml > left:
        raise Refused(f"{what} of {volume_ml:f} mL is more than remains in batch {batch.code} "
                      f"({max(left, Decimal(0)):f} mL of {batch.volume_ml_text} mL made)")
