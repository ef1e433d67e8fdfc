"""Which uses of a batch need review when its strength turns out to have moved.

Pure: plain tuples in, plain tuples out. A use needs review when it was made
between two accepted standardizations that differ by more than the spec's drift
limit (the titrant may have been off for any of them), or after the last accepted
standardization and before a run that was then rejected, or while the result of a
run that was later revoked stood (from that run until it was revoked, or the next
accepted one if that came first).
"""

from __future__ import annotations

from collections.abc import Sequence
from datetime import datetime

import msgspec

from prepbook.rules.life import drift_between, drift_beyond


class RunPoint(msgspec.Struct, frozen=True):
    code: str
    at: datetime
    status: str  # "accepted" | "rejected" | "awaiting-review" | "revoked"
    normality: float | None
    revoked_at: datetime | None = None  # when a revoked run's result was withdrawn


class UsePoint(msgspec.Struct, frozen=True):
    key: int
    at: datetime


class Flag(msgspec.Struct, frozen=True):
    use: int
    reason: str


def uses_needing_review(runs: Sequence[RunPoint], uses: Sequence[UsePoint],
                        drift_limit_percent: float) -> tuple[Flag, ...]:
    """Flags, at most one per use (the first reason found), in the order of ``uses``."""
    ordered = sorted(runs, key=lambda r: r.at)
    accepted = [r for r in ordered if r.status == "accepted" and r.normality]
    reasons: dict[int, str] = {}
    for prev, cur in zip(accepted, accepted[1:], strict=False):
        assert prev.normality is not None and cur.normality is not None
        drift = drift_between(prev.normality, cur.normality)
        if not drift_beyond(drift, drift_limit_percent):
            continue
        why = (f"made between {prev.code} and {cur.code}, whose normalities differ by "
               f"{drift:+.2f} % (limit {drift_limit_percent:g} %)")
        for u in uses:
            if prev.at <= u.at < cur.at:
                reasons.setdefault(u.key, why)
    for rej in (r for r in ordered if r.status == "rejected"):
        before = [a for a in accepted if a.at <= rej.at]
        since = before[-1].at if before else None
        why = (f"made after the last accepted standardization and before {rej.code}, "
               "which was rejected")
        for u in uses:
            if u.at < rej.at and (since is None or u.at >= since):
                reasons.setdefault(u.key, why)
    for rev in (r for r in ordered if r.status == "revoked"):
        ends = [a.at for a in accepted if a.at > rev.at]
        if rev.revoked_at is not None:
            ends.append(rev.revoked_at)
        until = min(ends) if ends else None
        why = f"made while the result of {rev.code} stood, which was revoked"
        for u in uses:
            if u.at >= rev.at and (until is None or u.at < until):
                reasons.setdefault(u.key, why)
    return tuple(Flag(u.key, reasons[u.key]) for u in uses if u.key in reasons)
