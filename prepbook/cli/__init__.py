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

    app(prog_name="prepbook")
