"""prepbook schema: the JSON Schema of a command's ``--json`` document."""

from __future__ import annotations

import typer

from prepbook.cli import output


def schema(
    words: list[str] | None = typer.Argument(
        None, metavar="[COMMAND ...]", show_default=False,
        help="The command, as typed after prepbook (`batch show`)."),
    every: bool = typer.Option(False, "--all", help="Every command's schema."),
    out_dir: str | None = typer.Option(
        None, "-o", "--out", metavar="DIR", show_default=False,
        help="Write the schemas into this folder, one COMMAND.schema.json each "
             "(`batch-show.schema.json`), instead of printing them."),
    replace: bool = typer.Option(False, "--replace", help="Overwrite files that exist."),
) -> None:
    """Print the JSON Schema of a command's --json document, or list the commands that
    have one. The schemas are JSON Schema draft 2020-12; a document may gain keys in a
    later version, but a key is never renamed or dropped."""
    from pathlib import Path

    from prepbook.errors import InvalidInput
    from prepbook.render import json_schemas

    known = json_schemas.commands()
    command = " ".join(words or [])
    if every and command:
        raise InvalidInput("give a command or --all, not both")
    if command and command not in known:
        raise InvalidInput(f"no --json document for {command!r}; "
                           "`prepbook schema` lists the commands that have one")
    chosen = known if every else [command] if command else []
    if not chosen:
        if out_dir is not None:
            raise InvalidInput("--out needs a command or --all")
        typer.echo("\n".join(known))
        return
    if out_dir is not None:
        written = json_schemas.write(Path(out_dir), chosen, replace=replace)
        typer.echo(f"wrote {len(written)} schema{'s' * (len(written) != 1)} to {out_dir}")
        return
    if every:
        output.print_json({c: json_schemas.schema(c) for c in chosen})
    else:
        output.print_json(json_schemas.schema(command))
