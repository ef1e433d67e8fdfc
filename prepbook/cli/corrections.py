"""prepbook correct / exclude: new versions of a replicate, never an edit."""

from __future__ import annotations

from typing import TYPE_CHECKING

import typer

from prepbook.cli import output
from prepbook.cli.session import Passphrases, actor, database
from prepbook.cli.standardize import render_result

if TYPE_CHECKING:
    from prepbook.lab.runs import RunResult


def correct(
    ctx: typer.Context,
    run: str = typer.Argument(..., metavar="RUN", help="Run code."),
    replicate_text: str = typer.Option(
        ..., "--replicate", metavar="N", help="Replicate number (from 1)."
    ),
    mass: str = typer.Option(None, "--mass", metavar="G", help="Corrected mass of standard, g."),
    aliquot: str = typer.Option(
        None, "--aliquot", metavar="ML", help="Corrected aliquot, mL (secondary)."
    ),
    volume: str = typer.Option(
        None, "--volume", metavar="ML", help="Corrected titrant volume, mL."
    ),
    reason: str = typer.Option(
        ..., "--reason", metavar="TEXT", help="Why the reading is corrected."
    ),
    passphrase_stdin: bool = typer.Option(
        False, "--passphrase-stdin", help="Read your passphrase from standard input."
    ),
    as_json: bool = typer.Option(False, "--json", help="Print the recomputed run as JSON."),
) -> None:
    """Correct one replicate (signed): a new version, the run recomputed and back to review."""
    from prepbook.errors import InvalidInput
    from prepbook.lab import runs

    replicate = output.whole(replicate_text, "--replicate", minimum=1)
    if mass is not None and aliquot is not None:
        raise InvalidInput("give --mass (direct) or --aliquot (secondary), not both")
    secret = Passphrases(passphrase_stdin).get(f"Passphrase of {actor(ctx)}")
    res = runs.correct(database(ctx), actor=actor(ctx), run=run, replicate=replicate,
                       mass=mass if mass is not None else aliquot, volume=volume,
                       reason=reason, passphrase=secret)
    _show(res, as_json, f"replicate {replicate} corrected")


def exclude(
    ctx: typer.Context,
    run: str = typer.Argument(..., metavar="RUN", help="Run code."),
    replicate_text: str = typer.Option(
        ..., "--replicate", metavar="N", help="Replicate number (from 1)."
    ),
    reason: str = typer.Option(..., "--reason", metavar="TEXT", help="Why it is excluded."),
    passphrase_stdin: bool = typer.Option(
        False, "--passphrase-stdin", help="Read your passphrase from standard input."
    ),
    as_json: bool = typer.Option(False, "--json", help="Print the recomputed run as JSON."),
) -> None:
    """Exclude one replicate (signed, with a reason); the run is recomputed and reviewed again."""
    from prepbook.lab import runs

    replicate = output.whole(replicate_text, "--replicate", minimum=1)
    secret = Passphrases(passphrase_stdin).get(f"Passphrase of {actor(ctx)}")
    res = runs.exclude(database(ctx), actor=actor(ctx), run=run, replicate=replicate,
                       reason=reason, passphrase=secret)
    _show(res, as_json, f"replicate {replicate} excluded")


def _show(res: RunResult, as_json: bool, what: str) -> None:
    if as_json:
        output.emit_json(res.to_json())
        return
    out = output.console()
    out.print(f"run [bold]{res.run}[/bold]: {what}; it was {res.previous_status} and "
              f"now awaits review again")
    render_result(out, res)
