"""What the root options give every command: the database target, the acting user and
how much to say on stderr."""

from __future__ import annotations

import os
from typing import NamedTuple

import typer

from prepbook.config import DEFAULT_DB, Setting, Source

__all__ = ["DEFAULT_DB", "Invocation", "current_user", "invocation"]


class Invocation(NamedTuple):
    """The root options of one run. ``db_given`` is ``--db`` or PREPBOOK_DB as given
    (``db_source`` says which); without it :attr:`db` comes from the configuration file
    or the default, read only when a command asks. ``user_given`` is as given (``--user``
    or PREPBOOK_USER); ``user`` falls back to the login name, looked up only when a command
    needs it (a NamedTuple rather than a dataclass: every command builds one at start-up).
    ``verbosity``: -1 with ``-q``, 0 normally, 1 with ``-v``."""

    db_given: str | None = None
    user_given: str | None = None
    db_source: Source = "option"
    verbosity: int = 0

    @property
    def given(self) -> dict[str, Setting]:
        """The settings the command line gave, for :func:`prepbook.config.resolve`."""
        if self.db_given is None:
            return {}
        origin = "--db" if self.db_source == "option" else "PREPBOOK_DB"
        return {"database": Setting("database", self.db_given, self.db_source, origin)}

    @property
    def db(self) -> str:
        from prepbook.config import setting

        chosen = setting("database", self.given)
        if self.verbosity > 0:
            import logging

            logging.getLogger("prepbook.cli").info(
                "database %s (from %s%s)", chosen.value, chosen.source,
                f" {chosen.origin}" if chosen.origin else "")
        return str(chosen.value)

    @property
    def quiet(self) -> bool:
        """True with ``-q``: say nothing on stderr that is not an error."""
        return self.verbosity < 0

    @property
    def user(self) -> str:
        return self.user_given or current_user()


def current_user() -> str:
    import getpass  # only when no user was named

    try:
        return getpass.getuser()
    except (KeyError, OSError):  # no login name (some containers, Windows services)
        return os.environ.get("USERNAME") or os.environ.get("USER") or "unknown"


def invocation(ctx: typer.Context) -> Invocation:
    """The root options of this run, wherever in the command tree we are."""
    root = ctx.find_root()
    obj = root.obj
    if isinstance(obj, Invocation):
        return obj
    return Invocation(db_given=os.environ.get("PREPBOOK_DB") or None,
                      user_given=os.environ.get("PREPBOOK_USER") or None,
                      db_source="environment")
