"""prepbook calc: computations without a database."""

from __future__ import annotations

import typer

app = typer.Typer(help="Compute without a database: normality, preparation, corrections, curves.",
                  no_args_is_help=True)
