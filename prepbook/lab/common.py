"""Helpers shared by the services: who is acting, looking records up by code.

Only the services (``prepbook.lab``) use ORM objects, and only inside a session;
what they return is plain data.
"""

from __future__ import annotations

import difflib
import functools
import json
import weakref
from collections.abc import Callable, Sequence
from datetime import UTC, date, datetime, timedelta, tzinfo
from typing import Any, TypeVar

import msgspec
from sqlalchemy import bindparam, func, inspect, select
from sqlalchemy.orm import Session

from prepbook import clock
from prepbook.errors import InvalidInput, NotFound, Refused
from prepbook.inputs import parse_datetime, utc_now
from prepbook.lab.security import lock_period, passphrase_matches
from prepbook.store import audit
from prepbook.store.engine import Database
from prepbook.store.models import (
    AuditEvent,
    Base,
    Batch,
    Instrument,
    Lot,
    Run,
    Setting,
    Spec,
    User,
)

T = TypeVar("T", bound=Base)
T2 = TypeVar("T2", bound=tuple)  # type: ignore[type-arg]
T3 = TypeVar("T3")

RECORDERS = ("technician", "reviewer", "admin")
REVIEWERS = ("reviewer", "admin")


_MEMO = "prepbook_lookups"
_SETTINGS = ("settings",)


def _memo(session: Session) -> dict[Any, Any]:
    """Lookups already made in this transaction (code -> row, the settings).

    Codes and user names never change once recorded, and the row found is the
    session's own identity-mapped object (so it shows this transaction's writes):
    a second lookup of the same code in the same transaction needs no query. This
    is what keeps many service calls grouped in one transaction
    (``Database.one_transaction``, the benchmarks' synthetic history) quick; a single
    command does one lookup of each anyway. The memo is dropped when the transaction ends.
    """
    transaction = session.get_transaction()
    held = session.info.get(_MEMO)
    if held is None or held[0] is not transaction:
        held = (transaction, {})
        session.info[_MEMO] = held
    return held[1]  # type: ignore[no-any-return]


def _remembered(session: Session, key: Any) -> Any:
    row = _memo(session).get(key)
    # A row from a savepoint that was rolled back is no longer in the session.
    return row if row is not None and row in session else None


_LIFE = ("life",)
_LIFE_RUNS = ("life", "runs")
_LIFE_DONE = ("life", "done")
# Writing one of these can change a batch's state, dates or warnings.
_LIFE_TABLES = frozenset({"batches", "runs", "lots", "instruments", "specs"})


def life_facts(session: Session, batch_id: int, read_batch: Callable[[], T2],
               read_runs: Callable[[], Any]) -> tuple[T2, Any]:
    """What a batch's life is computed from, read once per transaction.

    ``read_batch()`` gives the batch's own part (its row, spec, instruments, lot),
    ``read_runs()`` its runs. Each is kept until this transaction writes (through
    ``write``) a row that can change it: a run of the batch drops only the runs; the
    batch itself drops both; a lot, instrument or spec (any batch's) drops all. See
    ``board.batch_life``.
    """
    memo = _memo(session)
    own = memo.setdefault(_LIFE, {})
    held = own.get(batch_id)
    if held is None or held[0] not in session:
        held = read_batch()
        own[batch_id] = held
        memo.setdefault(_LIFE_RUNS, {}).pop(batch_id, None)
        memo.setdefault(_LIFE_DONE, {}).pop(batch_id, None)
    runs_memo = memo.setdefault(_LIFE_RUNS, {})
    if batch_id in runs_memo:
        runs = runs_memo[batch_id]
    else:
        runs = runs_memo[batch_id] = read_runs()
        memo.setdefault(_LIFE_DONE, {}).pop(batch_id, None)
    return held, runs


def remembered(session: Session, model: type[T], code: str) -> T | None:
    """The row of ``model`` with this code if this transaction already looked it up."""
    return _remembered(session, (model, code))  # type: ignore[no-any-return]


def remember_batch(session: Session, batch: Batch, facts: tuple[Any, ...]) -> None:
    """Keep a batch read by its code together with its part of ``life_facts`` (one query
    where a lookup by code and then by id took two): later lookups of either in this
    transaction need no query."""
    memo = _memo(session)
    memo[(Batch, batch.code)] = batch
    memo.setdefault(_LIFE, {})[batch.id] = facts
    for key in (_LIFE_RUNS, _LIFE_DONE):
        memo.setdefault(key, {}).pop(batch.id, None)


def life_result(session: Session, batch_id: int, key: Any, compute: Callable[[], T3]) -> T3:
    """A batch's life for ``key`` (the day and lead time), computed once from the facts
    ``life_facts`` holds and dropped with them."""
    done = _memo(session).setdefault(_LIFE_DONE, {}).setdefault(batch_id, {})
    if key not in done:
        done[key] = compute()
    return done[key]  # type: ignore[no-any-return]


def find_by_code(session: Session, model: type[T], code: str) -> T | None:
    """The row of ``model`` with this code, or None (looked up once per transaction)."""
    row = remembered(session, model, code)
    if row is not None:
        return row
    row = session.scalars(_by_code_query(model), {"code": code}).first()
    if row is not None:
        _memo(session)[(model, code)] = row
    return row


@functools.cache
def _by_code_query(model: type[Base]) -> Any:
    """``model`` by its code, the code a parameter (built and keyed once per model)."""
    return select(model).where(model.code == bindparam("code"))  # type: ignore[attr-defined]


def by_code(session: Session, model: type[T], code: str, what: str) -> T:
    """The row of ``model`` with this code, or NotFound naming close matches."""
    row = find_by_code(session, model, code)
    if row is not None:
        return row
    # Codes are case-sensitive in the record; offer a case-insensitive match.
    codes = list(session.scalars(select(model.code)))  # type: ignore[attr-defined]
    folded = [c for c in codes if c.lower() == code.lower()]
    close = folded or difflib.get_close_matches(code, codes, n=3, cutoff=0.6)
    hint = f" (did you mean {', '.join(close)}?)" if close else ""
    raise NotFound(f"no {what} with code {code!r}{hint}")


def user_named(session: Session, name: str) -> User:
    key = (User, name)
    row = _remembered(session, key)
    if row is not None:
        return row  # type: ignore[no-any-return]
    row = session.scalars(select(User).where(User.name == name)).first()
    if row is not None:
        _memo(session)[key] = row
    if row is None:
        raise NotFound(
            f"{name!r} is not a prepbook user of this database "
            "(an admin adds users with `prepbook user add`)"
        )
    return row


DEFAULT_LOCKOUT_AFTER = 5  # wrong passphrases in a row before a lockout: common practice
DEFAULT_LOCKOUT_MINUTES = 15  # the first lock's length: common practice, no source


def whole_setting(session: Session, key: str, default: int) -> int:
    try:
        return max(1, int(setting(session, key, str(default))))
    except ValueError:
        return default


def lockout_after(session: Session) -> int:
    return whole_setting(session, "lockout_after", DEFAULT_LOCKOUT_AFTER)


def locked_until(session: Session, user: User) -> datetime | None:
    """Until when ``user`` is locked out by wrong passphrases in a row, or None.

    The lock starts at the last recorded failure (its audit event) and lasts
    ``lockout_minutes``, doubled by each failure beyond ``lockout_after``, at most a day:
    it always ends by itself, and an admin may end it early (``user unlock``).
    """
    period = lock_period(user.failed_attempts, lockout_after(session),
                         timedelta(minutes=whole_setting(session, "lockout_minutes",
                                                          DEFAULT_LOCKOUT_MINUTES)))
    if period is None:
        return None
    last = session.scalar(select(func.max(AuditEvent.at)).where(
        AuditEvent.record_type == "users", AuditEvent.record_id == user.id,
        AuditEvent.action == "auth.failed"))
    if last is None:
        return None
    until: datetime = last + period
    return until if until > utc_now() else None


def lockout_line(session: Session, name: str, failures: int, until: datetime) -> str:
    return (f"{name} is locked out until {lab_time(session, until)} after {failures} wrong "
            f"passphrases in a row; it ends by itself then, or an admin runs "
            f"`prepbook user unlock {name} --reason TEXT`")


def acting(session: Session, name: str, roles: tuple[str, ...] = RECORDERS,
           doing: str = "do this") -> User:
    """The active user ``name``, refused unless their role is one of ``roles``.

    A disabled user can do nothing; neither can one locked out by wrong passphrases.
    A signature checked by ``signed`` just before is written here, in the caller's
    transaction (see ``signed``).
    """
    user = user_named(session, name)
    if not user.active:
        raise Refused(f"user {name!r} is disabled")
    until = locked_until(session, user)
    if until is not None:
        raise Refused(lockout_line(session, name, user.failed_attempts, until))
    if user.role not in roles:
        raise Refused(f"{name} is a {user.role}; only a {' or '.join(roles)} may {doing}")
    _write_pending_signature(session, user)
    return user


class Signature(msgspec.Struct, frozen=True):
    """A passphrase checked for a signed action: who, the stored hash it matched, and
    what the signature means ("reviewed and accepted") and of what ("run R-12")."""

    name: str
    hash_checked: str
    meaning: str
    what: str


# Signatures checked and not yet written, per engine and signer: ``signed`` checks the
# passphrase before the write transaction opens (Argon2 is slow; the writer lock is not
# held meanwhile) and ``acting`` in that transaction writes the "user.signed" event.
_PENDING: weakref.WeakKeyDictionary[Any, dict[str, Signature]] = weakref.WeakKeyDictionary()


def _write_pending_signature(session: Session, user: User) -> None:
    bind = session.get_bind()
    pending = _PENDING.get(bind)
    signature = pending.pop(user.name, None) if pending else None
    if signature is None:
        return
    if user.passphrase_hash != signature.hash_checked:
        raise Refused(f"the passphrase of {user.name} changed while signing; sign again")
    write(session, user.name, "user.signed", user,
          reason=f"{signature.meaning}: {signature.what}" if signature.what
          else signature.meaning)


def check_passphrase(user: User, passphrase: str | None) -> None:
    """Inside a write: refuse a wrong passphrase (the failure is recorded by ``signed``)."""
    if passphrase is None or not passphrase_matches(user.passphrase_hash, passphrase):
        raise Refused(f"wrong passphrase for {user.name}")


def proven(db: Any, name: str, passphrase: str | None, roles: tuple[str, ...] = RECORDERS,
           doing: str = "do this") -> str:
    """The stored hash ``passphrase`` matches for ``name``, or Refused; each failure is
    recorded.

    The slow Argon2 check runs outside any write transaction. A wrong passphrase is
    refused and the failed attempt itself is recorded (``auth.failed``, in a write
    transaction of its own that re-reads the count, so attempts from several processes
    at once are each counted); ``lockout_after`` failures in a row lock the user out for
    a while (``locked_until``). A right passphrase clears the count.
    """
    with db.session(write=False) as s:
        user = acting(s, name, roles, doing)
        stored = user.passphrase_hash or ""
    if passphrase is not None and passphrase_matches(stored, passphrase):
        with db.session() as s:
            user = user_named(s, name)
            if user.failed_attempts:
                user.failed_attempts = 0
                write(s, user.name, "auth.cleared", user, reason="right passphrase")
        return stored
    with db.session() as s:
        user = user_named(s, name)
        user.failed_attempts += 1
        write(s, user.name, "auth.failed", user, reason=f"wrong passphrase ({doing})")
        count = user.failed_attempts
        until = locked_until(s, user)
        locked = lockout_line(s, name, count, until) if until is not None else None
    if locked is not None:
        raise Refused(f"wrong passphrase for {name}; " + locked)
    raise Refused(f"wrong passphrase for {name}")


def signed(db: Any, name: str, passphrase: str | None, roles: tuple[str, ...] = RECORDERS,
           doing: str = "do this", *, meaning: str | None = None, what: str = "") -> Signature:
    """Check a signature before the signed write; the write's own transaction records it.

    The passphrase is checked (and a failure recorded) by ``proven``. The signature is
    then held for ``name`` until the signed action's transaction calls ``acting`` for
    them: there it is confirmed (the stored hash is still the one checked) and written
    as a "user.signed" event whose reason says what it means, "<meaning>: <what>", so
    it commits or rolls back with the action itself.
    """
    stored = proven(db, name, passphrase, roles, doing)
    signature = Signature(name=name, hash_checked=stored, meaning=meaning or f"signed to {doing}",
                          what=what)
    _PENDING.setdefault(db.engine, {})[name] = signature
    return signature


def write(session: Session, actor: str, action: str, row: Base, *, reason: str | None = None,
          performed_at: datetime | None = None) -> None:
    """Add/flush a row and its audit event in the current transaction."""
    write_all(session, actor, action, [row], reason=reason, performed_at=performed_at)


def write_all(session: Session, actor: str, action: str, rows: Sequence[Base], *,
              reason: str | None = None, performed_at: datetime | None = None) -> None:
    """``write`` for several rows of one action (the replicates of a run): flushed
    together and their events chained and sent together, in the order given."""
    for row in rows:
        _forget_facts(session, row)
    session.add_all(rows)
    session.flush()
    audit.record_all(session, actor=actor, action=action, rows=rows, reason=reason,
                     performed_at=performed_at)


def _forget_facts(session: Session, row: Base) -> None:
    """Drop what this transaction remembered that ``row`` (about to be written) changes."""
    if isinstance(row, Setting):
        _memo(session).pop(_SETTINGS, None)
    elif row.__tablename__ in _LIFE_TABLES:
        memo = _memo(session)
        own, runs, done = memo.get(_LIFE), memo.get(_LIFE_RUNS), memo.get(_LIFE_DONE)
        if isinstance(row, Run):
            for facts in (runs, done):
                if facts:
                    facts.pop(row.batch_id, None)
        elif isinstance(row, Batch):
            for facts in (own, runs, done):
                if facts:
                    facts.pop(row.id, None)
        else:  # a lot, instrument or spec may be any batch's
            for facts in (own, runs, done):
                if facts:
                    facts.clear()
    code = getattr(row, "code", None)
    if code is not None and inspect(row).transient:
        # A new coded row is found by code for the rest of the transaction without a
        # query (codes never change once recorded).
        _memo(session)[(type(row), code)] = row


def not_future(moment: datetime | None, what: str, zone: tzinfo = UTC) -> datetime:
    now = utc_now()
    if moment is None:
        return now
    if moment > now:
        raise InvalidInput(f"{what} {clock.shown(moment, zone)} is in the future")
    return moment


LATE_AFTER_HOURS = "72"


def lab_zone(session: Session) -> tzinfo:
    """The lab's time zone: the database's ``timezone`` setting (one for every bench of
    the lab, changed by an admin, audited), else the configuration's ``timezone``
    (option, PREPBOOK_TIMEZONE or the file: this computer's own default), else this
    computer's zone."""
    name = setting(session, "timezone", "")
    if name:
        return clock.zone_named(name, "the lab's timezone setting")
    from prepbook.config import setting as configured

    chosen = configured("timezone").value
    return clock.zone_named(str(chosen), "timezone") if chosen else clock.machine_zone()


def late_after(session: Session) -> timedelta:
    """How long after the work an entry may be made without a reason."""
    return timedelta(hours=int(setting(session, "late_entry_hours", LATE_AFTER_HOURS)))


def lab_time(session: Session, moment: datetime) -> str:
    """A stored time as the lab reads it in a message: wall-clock time with its offset."""
    return clock.shown(moment, lab_zone(session))


def work_time(db: Database, at: str | None, what: str, *, reason: str | None = None) -> datetime:
    """When the work was done, as the record stores it (naive UTC): ``at`` typed in the
    lab's time zone, else now. Not in the future; entered more than the lab's
    ``late_entry_hours`` after it was done, only with a reason (``reason``)."""
    if not at:
        return utc_now()
    with db.session(write=False) as s:
        zone, late = lab_zone(s), late_after(s)
    moment = not_future(parse_datetime(at, "--at", zone), what, zone)
    delay = utc_now() - moment
    if delay > late and not (reason and reason.strip()):
        hours = int(delay.total_seconds() // 3600)
        raise InvalidInput(f"{what} {clock.shown(moment, zone)} is {hours} h ago, more than "
                           f"the lab's {int(late.total_seconds() // 3600)} h: a late entry "
                           "needs a --reason saying why it is entered now")
    return moment


def spec_data(spec: Spec) -> dict[str, Any]:
    return json.loads(spec.data)


def setting(session: Session, key: str, default: str) -> str:
    """A lab setting's value, or ``default`` when the lab has not set it.

    All settings (a handful of rows) are read once per transaction; writing one
    through ``write`` drops that copy.
    """
    memo = _memo(session)
    rows = memo.get(_SETTINGS)
    if rows is None or any(r not in session for r in rows.values()):
        rows = {r.key: r for r in session.scalars(select(Setting))}
        memo[_SETTINGS] = rows
    row = rows.get(key)
    return row.value if row is not None else default


def iso(value: date | datetime | None) -> str | None:
    if value is None:
        return None
    if isinstance(value, datetime):
        return value.isoformat(timespec="minutes")
    return value.isoformat()


__all__ = [
    "Batch",
    "Instrument",
    "Lot",
    "Run",
    "acting",
    "by_code",
    "find_by_code",
    "check_passphrase",
    "iso",
    "lab_zone",
    "late_after",
    "not_future",
    "setting",
    "spec_data",
    "user_named",
    "work_time",
    "write",
]
