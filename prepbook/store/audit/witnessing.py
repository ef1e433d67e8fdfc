"""What the checkpoints say about the trail: the verify side of ``checkpoints``.

Every checkpoint ``verify`` can see (kept in the database, in a witness outside it,
the witness folder or the witness database (``Source``), or typed from paper as a
code) attests that event #N was the trail's last, with this hash
(or, for a code, a hash with these first letters). ``gather`` collects them, ``compare``
holds them against the chain as read: a trail that does not reach #N was shortened or
rolled back; one whose event #N is another was rolled back or rewritten.

Signatures are checked where they decide something: a checkpoint that contradicts the
trail (a forgery is named as such, not as a rewritten trail), and the latest checkpoint
from outside the database that agrees with it (the claim "witnessed up to #N"). A
checkpoint that agrees with the trail and is not relied on needs no check: a forged one
could only add a problem, never hide one.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from dataclasses import dataclass, field
from pathlib import Path

import msgspec
from sqlalchemy import Connection

from prepbook.store.audit import witness_db
from prepbook.store.audit.checkpoints import (
    Checkpoint,
    Keying,
    checkpoint_of,
    code_of,
    other_trails,
    parse_code,
    read_witness,
    signature_ok,
    stored,
)
from prepbook.store.audit.rekey_check import Keys

Add = Callable[[str, str], None]  # (kind, message)
# lab id -> (its checkpoints, what could not be read, the lab ids of other trails there)
Reader = Callable[[str], tuple[list[Checkpoint], list[str], list[str]]]
_DATABASE = "database"


class Source(msgspec.Struct, frozen=True):
    """A witness outside the database: what it is called, where, and how it is read."""

    name: str  # "witness folder", "witness database"
    where: str
    read: Reader


def sources(folder: Path | None, database: str | None) -> tuple[Source, ...]:
    """The witnesses verify reads: the folder and the database, each when named."""
    found = []
    if folder is not None:
        def read_folder(lab_id: str) -> tuple[list[Checkpoint], list[str], list[str]]:
            return (*read_witness(folder, lab_id), other_trails(folder, lab_id))

        found.append(Source("witness folder", str(folder), read_folder))
    if database is not None:
        def read_database(lab_id: str) -> tuple[list[Checkpoint], list[str], list[str]]:
            rows, faults, others = witness_db.read(database, lab_id)
            found = []
            for number, row in enumerate(rows, start=1):
                try:
                    found.append(checkpoint_of(row))
                except (ValueError, TypeError, KeyError):
                    faults.append(f"checkpoint {number} of lab {lab_id} in the witness "
                                  "database is not a checkpoint")
            return found, faults, others

        found.append(Source("witness database", witness_db.shown(database), read_database))
    return tuple(found)


@dataclass
class Attestation:
    """One checkpoint as verify holds it against the trail."""

    events: int
    code: str
    checkpoint: Checkpoint | None  # None for a code typed from paper
    sources: list[str] = field(default_factory=list)

    @property
    def outside(self) -> bool:
        """Held outside the database (a witness, or paper)."""
        return self.checkpoint is None or any(s != _DATABASE for s in self.sources)

    @property
    def name(self) -> str:
        if self.checkpoint is None:
            return f"the checkpoint code {self.code} (typed)"
        return f"the checkpoint of {self.checkpoint.when} ({' and '.join(self.sources)})"


class Findings(msgspec.Struct, frozen=True):
    """What the checkpoints showed: whether the trail was shortened, how far a witness
    outside the database vouches for it, and which checkpoints a witness lacks."""

    shortened: bool
    witnessed_events: int | None
    outside_checked: int
    gaps: tuple[str, ...] = ()


def gather(conn: Connection, kept: Keying | None, codes: Sequence[str],
           witnesses: Sequence[Source], add: Add) -> list[Attestation]:
    """Every checkpoint verify can see, each once; faults of the witnesses named."""
    found: dict[Checkpoint, Attestation] = {}

    def take(cp: Checkpoint, source: str) -> None:
        seen = found.setdefault(cp, Attestation(cp.events, cp.code, cp))
        if source not in seen.sources:
            seen.sources.append(source)

    for cp in stored(conn):
        take(cp, _DATABASE)
    for source in witnesses:
        witnessed, faults, others = source.read(kept.lab_id if kept else "")
        for fault in faults:
            add("witness", fault)
        if kept is None:
            if others:
                add("witness", f"the {source.name} holds checkpoints of trail(s) "
                    f"{', '.join(others)} but this database records no lab id: "
                    "its keying was removed, or it is another database")
            continue
        for cp in witnessed:
            take(cp, source.name)
        if not witnessed and others:
            add("witness", f"the {source.name} holds checkpoints of other trails "
                f"({', '.join(others)}) and none of this one (lab {kept.lab_id}): this "
                "is not the database it witnessed, or its lab id was changed")
    typed = [Attestation(*parse_code(text), None, ["typed"]) for text in codes]
    return [*found.values(), *typed]


def gaps(attestations: Sequence[Attestation],
         witnesses: Sequence[Source]) -> tuple[str, ...]:
    """For each witness, the checkpoints kept in the database that it lacks (it could
    not be reached when they were made, or was named later)."""
    out = []
    kept = [a for a in attestations if a.checkpoint is not None and _DATABASE in a.sources]
    for source in witnesses:
        missing = sorted({a.events for a in kept if source.name not in a.sources})
        if missing:
            shown = ", ".join(f"#{n}" for n in missing[:5]) + (
                f" and {len(missing) - 5} more" if len(missing) > 5 else "")
            out.append(f"{len(missing)} checkpoint(s) kept in the database are not in the "
                       f"{source.name} {source.where} (attesting events {shown}): it could not "
                       "be reached when they were made, or was named later")
    return tuple(out)


def _signed_by_lab(att: Attestation, kept: Keying | None, keys: Keys, add: Add) -> bool:
    """True when ``att`` is a checkpoint of this lab's trail signed with its key; else
    the reason is named."""
    cp = att.checkpoint
    if cp is None:
        return True
    if kept is None or cp.lab_id != kept.lab_id:
        add("forged", f"{att.name} is of another trail (lab {cp.lab_id}), not this "
            f"database's (lab {kept.lab_id if kept else 'not recorded'})")
        return False
    if not keys.signs(cp.public_key, cp.events):
        add("forged", f"{att.name} is signed with a key that is not the one this database "
            "records for the lab at that point of the trail: forged, or the recorded key "
            "was replaced")
        return False
    if not signature_ok(cp):
        add("forged", f"{att.name} has a signature that does not verify: forged or altered")
        return False
    return True


def compare(attestations: list[Attestation], last_seq: int, hashes_at: dict[int, str],
            kept: Keying | None, keys: Keys, witnesses: Sequence[Source],
            add: Add) -> Findings:
    """Hold every checkpoint against the trail (which ends at ``last_seq``)."""
    shortened = False
    agreeing: list[Attestation] = []
    for att in sorted(attestations, key=lambda a: a.events):
        actual = hashes_at.get(att.events)
        if actual is not None and att.events <= last_seq and (
                att.checkpoint.head_hash == actual if att.checkpoint is not None
                else code_of(att.events, actual) == att.code):
            agreeing.append(att)
            continue
        if not _signed_by_lab(att, kept, keys, add):
            continue
        if att.events > last_seq:
            shortened = True
            add("shortened", f"{last_seq} events, but {att.name} attests {att.events}: "
                "the trail was shortened or rolled back")
        else:
            add("rewritten", f"event #{att.events} is not the one {att.name} attests: "
                "the trail was rolled back or rewritten")
    witnessed = None
    outside = [a for a in agreeing if a.outside]
    for att in reversed(outside):  # the latest first; one valid signature suffices
        if _signed_by_lab(att, kept, keys, add):
            witnessed = att.events
            break
    checked = sum(1 for a in attestations if a.outside)
    return Findings(shortened, witnessed, checked, gaps(attestations, witnesses))
