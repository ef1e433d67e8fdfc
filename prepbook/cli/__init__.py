"""Command line of prepbook: thin Typer commands over the services.

Each command group lives in its own module and is joined to the root app in
``prepbook.cli.app``. Modules here import only Typer and prepbook's light
modules at start-up; services, SQLAlchemy, Rich, pandas and the rest are
imported inside the commands that need them.
"""

from __future__ import annotations


def main() -> None:
    """Console-script entry point."""
    from prepbook.cli.app import app

    try:
        app(prog_name="prepbook")
    finally:
        _before_exit()


def _before_exit() -> None:
    """Spare a command that opened no database the interpreter's last garbage collection.

    Why: at exit Python collects every object one last time, 15-25 ms of processor time
    for ``--help`` or ``calc normality`` (measured against a run without this), only to
    hand memory back to an operating system that takes it back anyway. ``gc.freeze()``
    exempts the objects that exist now. It is done only when SQLAlchemy was never
    imported: a database connection must still be closed properly at exit (SQLite then
    folds its write-ahead log into the file), and nothing else a command leaves open
    needs the collector (files are closed by ``with``; standard output is flushed by the
    interpreter regardless).
    """
    import sys

    if "sqlalchemy" not in sys.modules:
        import gc

        gc.freeze()
