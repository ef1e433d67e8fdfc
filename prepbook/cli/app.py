"""The root Typer app: global options, the command groups, and the one place
where a ``PrepbookError`` becomes a message on stderr and an exit status.

The root is lazy. ``COMMANDS`` names every command and group with the module that
defines it and its short help (listed whole, wrapped to the terminal); a command
module is imported, and Typer converts its commands, only when that command is
invoked (or its own ``--help`` is asked for). ``prepbook --help`` lists the table's
short help and imports none of the modules. ``tests/cli/test_lazy_root.py`` checks
the table against the real commands, so it cannot drift from them.
"""

from __future__ import annotations

import importlib
import sys
from collections.abc import Iterator, Mapping, MutableMapping
from typing import Any, NamedTuple, cast

import typer
from typer.core import TyperCommand, TyperGroup

from prepbook.cli.context import DEFAULT_DB, Invocation
from prepbook.errors import InvalidInput, PrepbookError


class Entry(NamedTuple):
    """One command of the root: where it is defined, and its short help as listed."""

    name: str
    module: str  # under prepbook.cli
    attribute: str  # a function (a command) or a typer.Typer (a group)
    group: bool
    short_help: str


# In the order `prepbook --help` lists them (commands, then groups, as Typer adds them).
COMMANDS: tuple[Entry, ...] = (
    Entry("init", "setup", "init", False,
          "Create or upgrade the database and load the built-in catalog (safe to repeat)."),
    Entry("demo", "demo", "demo", False,
          "Build the demo lab (an invented scenario) in a fresh database and print its board."),
    Entry("login", "login", "login", False,
          "Log in: open a session for this account on this database (asks the passphrase)."),
    Entry("logout", "login", "logout", False,
          "Log out: end a session of this account on this database."),
    Entry("whoami", "login", "whoami", False,
          "The sessions of this account on this database: person, role, until when."),
    Entry("standardize", "standardize", "standardize", False,
          "Standardize a batch against a primary-standard lot or a standardized batch."),
    Entry("review", "review", "review", False,
          "Accept or reject a run awaiting review, signed with your passphrase."),
    Entry("revoke", "revoke", "revoke", False,
          "Withdraw an accepted result (reviewer or admin, signed): the batch falls back to "
          "its previous accepted standardization, or out of service; uses since are flagged."),
    Entry("correct", "corrections", "correct", False,
          "Correct one replicate (signed): a new version, the run recomputed and back to "
          "review."),
    Entry("exclude", "corrections", "exclude", False,
          "Exclude one replicate (signed, with a reason); the run is recomputed and reviewed "
          "again."),
    Entry("status", "board", "status", False,
          "The board: every batch not retired, the ones needing action first."),
    Entry("trend", "history", "trend", False,
          "Accepted history of a batch, its drift, slope and when it will leave its window."),
    Entry("trace", "history", "trace", False,
          "The chain upward (lots, certificates, stock, instruments) and downward "
          "(dilutions, uses)."),
    Entry("use", "batches", "use", False,
          "Record a use of a batch in service (kept so a bad batch's impact can be traced)."),
    Entry("assay", "assay", "assay", False,
          "Titrate a sample with a batch in service and record its result (and the use)."),
    Entry("impact", "impact", "impact", False,
          "The sample results a corrected, withdrawn or drifted titrant value changes, "
          "recomputed."),
    Entry("label", "labels", "label", False,
          "Print a bottle label as PDF (recorded), or list outdated labels with --stale."),
    Entry("report", "report", "report", False,
          "Write a batch's traceability report: preparation, every standardization, chart, "
          "reviews, corrections, uses, labels and the audit chain's head hash."),
    Entry("export", "exports", "export", False,
          "Export one table (units in the column names, ISO 8601 dates, formulas made "
          "inert)."),
    Entry("schema", "schema", "schema", False,
          "Print the JSON Schema of a command's --json document, or list the commands "
          "that have one."),
    Entry("tui", "tui", "tui", False,
          "Open the full-screen app: board, batches, recording, review desk and audit trail."),
    Entry("backup", "maintenance", "backup", False,
          "Copy a SQLite database consistently, even while it is in use (on PostgreSQL: says "
          "how to use pg_dump)."),
    Entry("user", "users", "app", True,
          "Add and list users (technician, reviewer, admin); passphrases, roles, lockouts."),
    Entry("lot", "lots", "app", True, "Add and list primary-standard lots."),
    Entry("instrument", "instruments", "app", True,
          "Add and list instruments, record their calibration, connect and read balances."),
    Entry("spec", "specs", "app", True, "List solution specs and add the lab's own."),
    Entry("batch", "batches", "app", True, "Make batches and show their history."),
    Entry("audit", "audit", "app", True, "Read and verify the audit trail."),
    Entry("settings", "settings", "app", True,
          "Show and change lab-wide settings (`prepbook settings` shows them)."),
    Entry("config", "config", "app", True,
          "Show the settings and where the configuration file is."),
    Entry("calc", "calc", "app", True,
          "Compute without a database: normality, preparation, corrections, curves."),
)


def load(entry: Entry) -> TyperCommand | TyperGroup:
    """The command for ``entry``, converted by Typer exactly as ``app.command(name)`` or
    ``app.add_typer(..., name=name)`` on the root would convert it."""
    target = getattr(importlib.import_module(f"prepbook.cli.{entry.module}"), entry.attribute)
    holder = typer.Typer(rich_markup_mode=app.rich_markup_mode, add_completion=False,
                         pretty_exceptions_short=app.pretty_exceptions_short)
    if entry.group:
        holder.add_typer(target, name=entry.name)
    else:
        holder.command(entry.name)(target)
    converted = typer.main.get_command(holder)
    if entry.group:  # a group is converted inside a root holding it alone
        assert isinstance(converted, TyperGroup)
        converted = converted.commands[entry.name]
    assert isinstance(converted, TyperCommand | TyperGroup)
    return converted


class _LazyCommands(Mapping[str, TyperCommand | TyperGroup]):
    """The root's name -> command mapping: names from ``COMMANDS``, each command loaded
    on first access. Membership, order and ``len`` need no import. Read-only: a new
    command goes into ``COMMANDS``."""

    def __init__(self, entries: tuple[Entry, ...]) -> None:
        self._entries = {e.name: e for e in entries}
        self._loaded: dict[str, TyperCommand | TyperGroup] = {}

    def __getitem__(self, name: str) -> TyperCommand | TyperGroup:
        if name not in self._loaded:
            self._loaded[name] = load(self._entries[name])  # KeyError: no such command
        return self._loaded[name]

    def __iter__(self) -> Iterator[str]:
        return iter(self._entries)

    def __len__(self) -> int:
        return len(self._entries)

    def __contains__(self, name: object) -> bool:
        return name in self._entries


_COMMAND_KEY = "prepbook.command"


class _Root(TyperGroup):
    """Root group: commands loaded on demand, and prepbook's own errors turned into
    exit status 1."""

    def __init__(self, **attrs: Any) -> None:
        super().__init__(**attrs)
        # Typer declares ``commands`` mutable, but reads the root's only: nothing adds a
        # command to it after this (a new one goes into COMMANDS).
        self.commands = cast("MutableMapping[str, Any]", _LazyCommands(COMMANDS))

    def list_commands(self, ctx: Any) -> list[str]:
        return list(self.commands)  # the names alone: TyperGroup's would load every command

    def format_commands(self, ctx: Any, formatter: Any) -> None:
        # The listing shows each command's short help from the table, whole: the
        # formatter wraps it to the width (Click's own listing would cut it with "...").
        rows = [(e.name, e.short_help) for e in COMMANDS]
        with formatter.section("Commands"):
            formatter.write_dl(rows)

    def resolve_command(self, ctx: Any, args: list[str]) -> Any:
        """As Click resolves it; the command's full name (``batch show``) is kept in
        ``ctx.meta`` for the -v log, found by following ``args`` down the groups."""
        name, command, rest = super().resolve_command(ctx, args)
        path, inner, words = [name], command, rest
        while isinstance(inner, TyperGroup) and words and words[0] in inner.commands:
            path.append(words[0])
            inner, words = inner.commands[words[0]], words[1:]
        ctx.meta[_COMMAND_KEY] = " ".join(str(p) for p in path)
        return name, command, rest

    def invoke(self, ctx: Any) -> Any:
        try:
            return super().invoke(ctx)
        except PrepbookError as exc:
            _refuse(str(exc) or exc.__class__.__name__, exc.exit_code)
        except OSError as exc:  # the disk or a file under a command, not a bug
            where = f" {exc.filename}" if exc.filename else ""
            _refuse(f"cannot read or write{where}: {exc.strerror or exc}", 1)
        except typer.TyperException as exc:  # a usage error; Typer prints it (exit 2)
            if getattr(exc, "option_name", None) in _ROOT_OPTIONS:
                name = getattr(exc, "option_name", "")
                exc.message = (f"{name} is an option of prepbook itself: put it before the "
                               f"command (prepbook {name} ... COMMAND)")
            raise
        except Exception as exc:
            # The database said no to something the services did not foresee: its first
            # line, not a traceback (the store names the usual ones itself).
            if not type(exc).__module__.startswith("sqlalchemy"):
                raise
            cause = getattr(exc, "orig", None) or exc
            first = (str(cause).splitlines() or [type(cause).__name__])[0]
            _refuse(f"the database refused: {first}", 1)


# The root's own options, which a user may put after the command by mistake.
_ROOT_OPTIONS = ("--db", "--user", "--verbose", "-v", "--quiet", "-q")


def _refuse(message: str, code: int) -> None:
    """The one place an error becomes a line on stderr and an exit status. The message
    is folded to one line, control characters shown as "?"."""
    line = " ".join(message.split())
    line = "".join(ch if ch.isprintable() else "?" for ch in line)
    sys.stderr.write(f"prepbook: {line}\n")
    raise typer.Exit(code) from None


app = typer.Typer(
    # No Rich markup: help is plain text, and Typer never imports its Rich helpers.
    rich_markup_mode=None,
    cls=_Root,
    name="prepbook",
    help=(
        "Prepare, standardize and label volumetric solutions (titrants), "
        "with an audited record of every batch.\n\n"
        "Each setting is taken from the first of: a command-line option, an environment "
        "variable, the configuration file (`prepbook config path` shows where), the default "
        "(`prepbook config show` says which gave each)."
    ),
    no_args_is_help=True,
    # --install-completion and --show-completion, as Typer offers them.
    add_completion=True,
    context_settings={"help_option_names": ["-h", "--help"]},
)


def _show_version(value: bool) -> None:
    if value:
        from importlib.metadata import PackageNotFoundError, version

        try:
            number = version("prepbook")
        except PackageNotFoundError:  # run from a checkout that was never installed
            from prepbook import __version__ as number
        sys.stdout.write(f"prepbook {number}\n")
        raise typer.Exit()


def _start_logging(ctx: typer.Context, verbosity: int) -> None:
    """-v: what the program does, as log lines on stderr (logger ``prepbook``); -q: only
    errors. Undone when the command ends (the tests run many commands in one process)."""
    import logging

    logger = logging.getLogger("prepbook")
    level = logger.level
    handler = None
    if verbosity > 0:
        handler = logging.StreamHandler(sys.stderr)
        handler.setFormatter(logging.Formatter("prepbook: %(message)s"))
        logger.addHandler(handler)
        logger.setLevel(logging.INFO)
    else:
        logger.setLevel(logging.ERROR)

    def stop() -> None:
        logger.setLevel(level)
        if handler is not None:
            logger.removeHandler(handler)

    ctx.call_on_close(stop)
    command = ctx.meta.get(_COMMAND_KEY)
    if command:
        logger.info("command started: prepbook %s", command)


@app.callback()
def _root(
    ctx: typer.Context,
    db: str = typer.Option(
        None,
        "--db",
        metavar="PATH|URL",
        envvar="PREPBOOK_DB",
        help=f"Database: a file path (SQLite) or an SQLAlchemy URL [default: the "
             f"configuration file's, else ./{DEFAULT_DB}].",
        show_default=False,
    ),
    user: str = typer.Option(
        None,
        "--user",
        metavar="NAME",
        envvar="PREPBOOK_USER",
        help="Acting user: one of the people logged in here (`prepbook login`); needed "
             "only when several are.",
        show_default=False,
    ),
    verbose: bool = typer.Option(
        False, "--verbose", "-v",
        help="Say on stderr what the program is doing (database, retries, each command).",
    ),
    quiet: bool = typer.Option(
        False, "--quiet", "-q", help="Say nothing on stderr but errors.",
    ),
    version: bool = typer.Option(
        False, "--version", callback=_show_version, is_eager=True, expose_value=False,
        help="Print prepbook's version and exit.",
    ),
) -> None:
    if verbose and quiet:
        raise InvalidInput("-v (--verbose) and -q (--quiet) cannot be used together")
    verbosity = 1 if verbose else -1 if quiet else 0
    source = ctx.get_parameter_source("db")
    from_env = getattr(source, "name", None) == "ENVIRONMENT"
    ctx.obj = Invocation(db_given=db or None, user_given=user or None,
                         db_source="environment" if from_env else "option",
                         verbosity=verbosity)
    if verbosity:
        _start_logging(ctx, verbosity)
