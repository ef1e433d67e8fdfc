"""Rerun a whole write when another bench's write got in its way.

Each service is one transaction, so rerunning it after a rollback is safe: it
reads everything again (the new rows of the other bench included) and either
writes a consistent record or refuses with its ordinary message.

What counts as a collision (and nothing else does):

- PostgreSQL ``unique_violation`` (SQLSTATE 23505). Write transactions queue on
  one advisory lock (``Database.hold_writer_lock``), so two of them should never
  compute the same next code; a writer that does not take the lock (a script on
  the same server) still could, and the rerun then counts the other row and moves
  on. A unique violation that is a real duplicate (the same lot code typed on two
  benches) is found by the service's own check on the rerun and refused with its
  usual message.
- PostgreSQL ``serialization_failure`` (40001) and ``deadlock_detected`` (40P01).
- SQLite ``database is locked`` / ``busy`` once the busy timeout has run out.

Any other error is passed on untouched; after the last attempt a collision
becomes a ``DatabaseError`` ("nothing was written, try again"), never a traceback.
"""

from __future__ import annotations

import functools
import logging
import random
import time
from collections.abc import Callable
from typing import ParamSpec, TypeVar

from prepbook.errors import DatabaseError

P = ParamSpec("P")
T = TypeVar("T")

log = logging.getLogger(__name__)  # shown with `prepbook -v`

ATTEMPTS = 5
_RETRY_SQLSTATES = {"23505", "40001", "40P01"}
_SQLITE_BUSY = ("database is locked", "database is busy", "database table is locked")


def is_collision(exc: BaseException) -> bool:
    """True when ``exc`` is a write that lost a race with another one (see the module)."""
    from sqlalchemy.exc import DBAPIError

    if not isinstance(exc, DBAPIError):
        return False
    orig = exc.orig
    sqlstate = getattr(orig, "sqlstate", None) or getattr(orig, "pgcode", None)
    if sqlstate in _RETRY_SQLSTATES:
        return True
    if sqlstate is None and type(orig).__module__.startswith("sqlite3"):
        message = str(orig).lower()
        return any(text in message for text in _SQLITE_BUSY)
    return False


def call(fn: Callable[P, T], *args: P.args, **kwargs: P.kwargs) -> T:
    """``fn(*args, **kwargs)``, rerun up to ``ATTEMPTS`` times while it collides."""
    for attempt in range(1, ATTEMPTS + 1):
        try:
            return fn(*args, **kwargs)
        except Exception as exc:
            if not is_collision(exc):
                raise
            if attempt == ATTEMPTS:
                reason = str(getattr(exc, "orig", exc)).splitlines()[0]
                raise DatabaseError(
                    f"another bench was writing the same record at the same moment "
                    f"({attempt} attempts, last: {reason}); nothing was written, try again"
                ) from exc
            # A short, growing, jittered pause so the benches do not collide in step.
            pause = random.uniform(0, 0.02 * 2**attempt)
            log.info("write conflict on %s (attempt %d of %d: %s); rerunning in %.0f ms",
                     getattr(fn, "__name__", "a write"), attempt, ATTEMPTS,
                     str(getattr(exc, "orig", exc)).splitlines()[0], pause * 1000)
            time.sleep(pause)
    raise AssertionError("unreachable")  # pragma: no cover


def on_conflict(fn: Callable[P, T]) -> Callable[P, T]:
    """Decorator form of :func:`call`, for a service function that is one transaction."""

    @functools.wraps(fn)
    def wrapper(*args: P.args, **kwargs: P.kwargs) -> T:
        return call(fn, *args, **kwargs)

    return wrapper
