"""The root Typer app: global options, the command groups, and the one place
where a ``PrepbookError`` becomes a message on stderr and an exit status."""

from __future__ import annotations

import sys
from typing import Any

import typer
from typer.core import TyperGroup

from prepbook.cli.context import DEFAULT_DB, Invocation, current_user
from prepbook.errors import PrepbookError


class _Root(TyperGroup):
    """Root group that turns prepbook's own errors into exit status 1."""

    def invoke(self, ctx: Any) -> Any:
        try:
            return super().invoke(ctx)
        except PrepbookError as exc:
            message = " ".join(str(exc).split()) or exc.__class__.__name__
            sys.stderr.write(f"prepbook: {message}\n")
            raise typer.Exit(exc.exit_code) from None


app = typer.Typer(
    cls=_Root,
    name="prepbook",
    help=(
        "Prepare, standardize and label volumetric solutions (titrants), "
        "with an audited record of every batch."
    ),
    no_args_is_help=True,
    add_completion=False,
    context_settings={"help_option_names": ["-h", "--help"]},
)


@app.callback()
def _root(
    ctx: typer.Context,
    db: str = typer.Option(
        None,
        "--db",
        envvar="PREPBOOK_DB",
        help=f"Database: a file path (SQLite, default ./{DEFAULT_DB}) or an SQLAlchemy URL.",
        show_default=False,
    ),
    user: str = typer.Option(
        None,
        "--user",
        envvar="PREPBOOK_USER",
        help="Who is acting (default: your login name).",
        show_default=False,
    ),
) -> None:
    ctx.obj = Invocation(db=db or DEFAULT_DB, user=user or current_user())


def _register() -> None:
    # Each group's module imports only Typer at start-up; its work is imported lazily.
    from prepbook.cli import (
        audit,
        batches,
        board,
        calc,
        corrections,
        demo,
        exports,
        history,
        instruments,
        labels,
        lots,
        maintenance,
        report,
        review,
        settings,
        setup,
        specs,
        standardize,
        tui,
        users,
    )

    app.command("init")(setup.init)
    app.command("demo")(demo.demo)
    app.add_typer(users.app, name="user")
    app.add_typer(lots.app, name="lot")
    app.add_typer(instruments.app, name="instrument")
    app.add_typer(specs.app, name="spec")
    app.add_typer(batches.app, name="batch")
    app.command("standardize")(standardize.standardize)
    app.command("review")(review.review)
    app.command("correct")(corrections.correct)
    app.command("exclude")(corrections.exclude)
    app.command("status")(board.status)
    app.command("trend")(history.trend)
    app.command("trace")(history.trace)
    app.add_typer(audit.app, name="audit")
    app.add_typer(settings.app, name="settings")
    app.command("use")(batches.use)
    app.add_typer(calc.app, name="calc")
    app.command("label")(labels.label)
    app.command("report")(report.report)
    app.command("export")(exports.export)
    app.command("tui")(tui.tui)
    app.command("backup")(maintenance.backup)


_register()
