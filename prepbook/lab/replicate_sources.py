"""Where a replicate's readings came from: typed, read from a balance, or from a curve.

The replicate forms ``standardize --rep`` takes beyond ``MASS:VOL``:

* ``@balance:VOL``: the mass is read now from the run's ``--balance`` (a stable net
  reading in grams; the balance's code, the time and the raw line are recorded);
* ``MASS:@FILE``: the volume is the endpoint of the curve in FILE (a meter's or an
  automatic titrator's CSV export, stored with the replicate byte for byte);
* ``MASS:VOL@FILE``: the volume as typed, the curve stored beside it and its endpoint
  compared with the volume (``prepbook.rules.curve_check``).

``entries`` turns those texts into ``ReplicateEntry`` values (a value already made,
for example by the interactive prompt, is taken as it is); ``record`` writes a
replicate's source row (and curve) beside it; ``carry`` gives a corrected version its
sources; ``evidence`` is what the curve check compares.
"""

from __future__ import annotations

from collections.abc import Sequence

import msgspec
from msgspec.structs import replace
from sqlalchemy import select
from sqlalchemy.orm import Session

from prepbook.devices.records import RecordedCurve
from prepbook.errors import InvalidInput
from prepbook.inputs import Reading, ReplicateEntry, parse_number, parse_replicate, utc_now
from prepbook.lab import replicate_curves
from prepbook.lab.common import setting, write, write_all
from prepbook.rules.curve_check import CurveEvidence
from prepbook.store.engine import Database
from prepbook.store.models import Replicate, ReplicateSource, Run

BALANCE_TOKEN = "@balance"
CURVE_VOLUME_DECIMALS = 3  # a volume taken from a curve is written to 0.001 mL (stated)


class SourceRow(msgspec.Struct, frozen=True):
    """One replicate version's sources, as ``batch show`` and the report say them."""

    position: int
    version: int
    amount_source: str  # "typed" or "balance"
    balance: str | None
    read_at: str | None
    raw: str | None
    volume_source: str  # "typed" or "curve"
    volume_ml_text: str  # the titrant volume of this version, as recorded


def _written(endpoint_ml: float) -> str:
    return f"{endpoint_ml:.{CURVE_VOLUME_DECIMALS}f}"


def volume_from_curve(entry_volume_name: str, endpoint_ml: float) -> Reading:
    return parse_number(_written(endpoint_ml), entry_volume_name, positive=True)


def weighed(db: Database, balance: str | None, position: int) -> ReplicateEntry:
    """A replicate's mass read now from ``balance`` (its volume still to come)."""
    from prepbook.lab.balances import read_mass

    if balance is None:
        raise InvalidInput(f"replicate {position}: {BALANCE_TOKEN} reads the run's balance; "
                           "name it with --balance CODE")
    w = read_mass(db, balance)
    amount = parse_number(w.mass_text, f"replicate {position} mass (g) read from balance "
                          f"{w.balance}", positive=True)
    return ReplicateEntry(amount=amount, volume=Reading("0", 0.0), weighing=w)


def typed_amount(text: str, position: int, amount_name: str) -> ReplicateEntry:
    """A replicate's amount as typed (its volume still to come)."""
    amount = parse_number(text, f"replicate {position} {amount_name}", positive=True)
    return ReplicateEntry(amount=amount, volume=Reading("0", 0.0))


def with_volume(entry: ReplicateEntry, volume_text: str, position: int,
                curve: RecordedCurve | None = None) -> ReplicateEntry:
    """``entry`` with its volume: typed (``VOL``), from a curve (``@FILE``, or ``curve``
    already read with no volume typed) or typed and checked against a curve (``VOL@FILE``,
    or ``VOL`` with ``curve``)."""
    what = f"replicate {position} titrant volume (mL)"
    typed, at, path = volume_text.strip().partition("@")
    if at:
        curve = replicate_curves.read_file(path.strip())
    if curve is None:
        return replace(entry, volume=parse_number(typed, what, positive=True))
    if typed.strip():
        return replace(entry, volume=parse_number(typed, what, positive=True), curve=curve)
    return replace(entry, volume=volume_from_curve(what, curve.endpoint_ml), curve=curve,
                   volume_from_curve=True)


def entries(db: Database, items: Sequence[str | ReplicateEntry], *, amount_name: str,
            balance: str | None, secondary: bool) -> list[ReplicateEntry]:
    """The replicates of a run from their texts (see the module for the forms)."""
    if not items:
        raise InvalidInput("at least one replicate (--rep AMOUNT:VOLUME) is required")
    out = []
    for position, item in enumerate(items, start=1):
        if isinstance(item, ReplicateEntry):
            out.append(item)
            continue
        amount_text, sep, volume_text = item.strip().partition(":")
        if "@" not in item or not sep:
            out.append(parse_replicate(item, position, amount_name=amount_name))
            continue
        if amount_text.strip().lower() == BALANCE_TOKEN:
            if secondary:
                raise InvalidInput(f"replicate {position}: a secondary standardization weighs "
                                   "nothing; type the aliquot (mL)")
            out.append(with_volume(weighed(db, balance, position), volume_text, position))
        else:
            out.append(with_volume(typed_amount(amount_text, position, amount_name),
                                   volume_text, position))
    return out


def evidence(s: Session, items: Sequence[ReplicateEntry]) -> tuple[CurveEvidence, ...]:
    """What the curve check compares, with the lab's tolerance (setting in microlitres)."""
    tolerance_ml = float(setting(s, "curve_tolerance_ul", "50")) / 1000.0
    return tuple(CurveEvidence(position=pos, volume_ml=e.volume.value,
                               volume_text=e.volume.text, endpoints_ml=e.curve.endpoints_ml,
                               from_curve=e.volume_from_curve, tolerance_ml=tolerance_ml)
                 for pos, e in enumerate(items, start=1) if e.curve is not None)


def record(s: Session, actor: str, run: Run, replicates: Sequence[Replicate],
           entries: Sequence[ReplicateEntry]) -> None:
    """Write where new replicates' readings came from (and their curves) beside them,
    the sources in one insert and their events in one."""
    now = utc_now()
    rows = []
    for replicate, entry in zip(replicates, entries, strict=True):
        w = entry.weighing
        rows.append(ReplicateSource(
            replicate_id=replicate.id, amount_source="balance" if w else "typed",
            amount_instrument=w.balance if w else None,
            amount_read_at=w.read_at if w else None, amount_raw=w.raw if w else None,
            volume_source="curve" if entry.volume_from_curve else "typed",
            created_at=now, created_by=actor))
    write_all(s, actor, "replicate.source", rows)
    for replicate, entry in zip(replicates, entries, strict=True):
        if entry.curve is not None:
            replicate_curves.store(s, actor, run, replicate.position, entry.curve)


def carry(s: Session, actor: str, old: Replicate, new: Replicate) -> None:
    """A corrected replicate's sources: a reading changed by hand is typed; a reading
    kept is still what it was (a replicate from before sources were kept: typed)."""
    was = s.scalars(select(ReplicateSource)
                    .where(ReplicateSource.replicate_id == old.id)).first()
    keep_amount = was is not None and new.amount_text == old.amount_text
    keep_volume = was is not None and new.volume_ml_text == old.volume_ml_text
    write(s, actor, "replicate.source", ReplicateSource(
        replicate_id=new.id,
        amount_source=was.amount_source if was and keep_amount else "typed",
        amount_instrument=was.amount_instrument if was and keep_amount else None,
        amount_read_at=was.amount_read_at if was and keep_amount else None,
        amount_raw=was.amount_raw if was and keep_amount else None,
        volume_source=was.volume_source if was and keep_volume else "typed",
        created_at=utc_now(), created_by=actor))


def with_stored_curves(s: Session, run: Run, items: list[ReplicateEntry]
                       ) -> list[ReplicateEntry]:
    """A recorded run's replicates with their stored curves (so a correction is checked
    against them again)."""
    stored = replicate_curves.stored_of_run(s, run)
    if not stored:
        return items
    out = []
    for pos, e in enumerate(items, start=1):
        curve = stored.get(pos)
        # A volume still equal to the curve's endpoint as written was taken from it.
        taken = curve is not None and e.volume.text == _written(curve.endpoint_ml)
        out.append(replace(e, curve=curve, volume_from_curve=taken))
    return out


def sources_of_runs(s: Session, runs: list[Run]) -> dict[str, tuple[SourceRow, ...]]:
    """Every replicate version's sources, by run code (versions with no row: typed)."""
    if not runs:
        return {}
    codes = {r.id: r.code for r in runs}
    reps = s.execute(select(Replicate, ReplicateSource)
                     .outerjoin(ReplicateSource, ReplicateSource.replicate_id == Replicate.id)
                     .where(Replicate.run_id.in_(codes))
                     .order_by(Replicate.run_id, Replicate.position, Replicate.version)).all()
    out: dict[str, list[SourceRow]] = {}
    for rep, src in reps:
        out.setdefault(codes[rep.run_id], []).append(SourceRow(
            position=rep.position, version=rep.version,
            amount_source=src.amount_source if src else "typed",
            balance=src.amount_instrument if src else None,
            read_at=src.amount_read_at.isoformat(timespec="seconds")
            if src and src.amount_read_at else None,
            raw=src.amount_raw if src else None,
            volume_source=src.volume_source if src else "typed",
            volume_ml_text=rep.volume_ml_text))
    return {code: tuple(rows) for code, rows in out.items()}


class RunReadings(msgspec.Struct, frozen=True):
    """Where one run's readings came from, and its stored curves."""

    run: str
    sources: tuple[SourceRow, ...]
    curves: tuple[replicate_curves.StoredCurve, ...]

    @property
    def from_instruments(self) -> bool:
        return bool(self.curves) or any(r.amount_source != "typed" or r.volume_source != "typed"
                                        for r in self.sources)


def of_batch(db: Database, code: str) -> dict[str, RunReadings]:
    """Every run of a batch with its readings' sources and curves, by run code."""
    from prepbook.lab.common import by_code
    from prepbook.store.models import Batch

    with db.session(write=False) as s:
        batch = by_code(s, Batch, code, "batch")
        runs = list(s.scalars(select(Run).where(Run.batch_id == batch.id).order_by(Run.id)))
        found = sources_of_runs(s, runs)
        curves = replicate_curves.curves_of_runs(s, runs)
        return {r.code: RunReadings(run=r.code, sources=found.get(r.code, ()),
                                    curves=curves.get(r.code, ())) for r in runs}
