"""What the checkpoints say about the trail: the verify side of ``checkpoints``.

Every checkpoint ``verify`` can see (kept in the database, in the witness folder, or
typed from paper as a code) attests that event #N was the trail's last, with this hash
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

from sqlalchemy import Connection

from prepbook.store.audit.checkpoints import (
    Checkpoint,
    Keying,
    code_of,
    other_trails,
    parse_code,
    read_witness,
    signature_ok,
    stored,
)

Add = Callable[[str, str], None]  # (kind, message)


@dataclass
class Attestation:
    """One checkpoint as verify holds it against the trail."""

    events: int
    code: str
    checkpoint: Checkpoint | None  # None for a code typed from paper
    sources: list[str] = field(default_factory=list)

    @property
    def outside(self) -> bool:
        """Held outside the database (the witness folder, or paper)."""
        return self.checkpoint is None or "witness folder" in self.sources

    @property
    def name(self) -> str:
        if self.checkpoint is None:
            return f"the checkpoint code {self.code} (typed)"
        return f"the checkpoint of {self.checkpoint.when} ({' and '.join(self.sources)})"


@dataclass(frozen=True)
class Findings:
    """What the checkpoints showed: whether the trail was shortened, and how far a
    witness outside the database vouches for it."""

    shortened: bool
    witnessed_events: int | None
    outside_checked: int


def gather(conn: Connection, kept: Keying | None, codes: Sequence[str], folder: Path | None,
           add: Add) -> list[Attestation]:
    """Every checkpoint verify can see, each once; faults of the witness named."""
    found: dict[Checkpoint, Attestation] = {}

    def take(cp: Checkpoint, source: str) -> None:
        seen = found.setdefault(cp, Attestation(cp.events, cp.code, cp))
        if source not in seen.sources:
            seen.sources.append(source)

    for cp in stored(conn):
        take(cp, "database")
    if folder is not None:
        if kept is None:
            others = other_trails(folder, "")
            if others:
                add("witness", f"the witness folder holds checkpoints of trail(s) "
                    f"{', '.join(others)} but this database records no lab id: "
                    "its keying was removed, or it is another database")
        else:
            witnessed, faults = read_witness(folder, kept.lab_id)
            for fault in faults:
                add("witness", fault)
            for cp in witnessed:
                take(cp, "witness folder")
            others = other_trails(folder, kept.lab_id)
            if not witnessed and others:
                add("witness", f"the witness folder holds checkpoints of other trails "
                    f"({', '.join(others)}) and none of this one (lab {kept.lab_id}): this "
                    "is not the database it witnessed, or its lab id was changed")
    typed = [Attestation(*parse_code(text), None, ["typed"]) for text in codes]
    return [*found.values(), *typed]


def _signed_by_lab(att: Attestation, kept: Keying | None, add: Add) -> bool:
    """True when ``att`` is a checkpoint of this lab's trail signed with its key; else
    the reason is named."""
    cp = att.checkpoint
    if cp is None:
        return True
    if kept is None or cp.lab_id != kept.lab_id:
        add("forged", f"{att.name} is of another trail (lab {cp.lab_id}), not this "
            f"database's (lab {kept.lab_id if kept else 'not recorded'})")
        return False
    if kept.public_key is None or cp.public_key != kept.public_key:
        add("forged", f"{att.name} is signed with a key that is not the one this database "
            "records for the lab: forged, or the recorded key was replaced")
        return False
    if not signature_ok(cp):
        add("forged", f"{att.name} has a signature that does not verify: forged or altered")
        return False
    return True


def compare(attestations: list[Attestation], last_seq: int, hashes_at: dict[int, str],
            kept: Keying | None, add: Add) -> Findings:
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
        if not _signed_by_lab(att, kept, add):
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
        if _signed_by_lab(att, kept, add):
            witnessed = att.events
            break
    checked = sum(1 for a in attestations if a.outside)
    return Findings(shortened, witnessed, checked)
