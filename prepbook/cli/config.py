"""prepbook config: the configuration file, and where each setting comes from."""

from __future__ import annotations

import sys

import typer

from prepbook.cli import output
from prepbook.cli.context import invocation

app = typer.Typer(
    rich_markup_mode=None,
    no_args_is_help=True,
    help="Show the settings and where the configuration file is.",
)


@app.command("show")
def show(
    ctx: typer.Context,
    as_json: bool = typer.Option(False, "--json", help="Print JSON instead of a table."),
) -> None:
    """Show each setting, its value and where it came from (option, environment, file,
    default)."""
    from prepbook import config

    settings = config.resolve(invocation(ctx).given)
    path = config.config_path()
    if as_json:
        output.emit_json({"file": str(path), "file_exists": path.is_file(),
                          "settings": [{"name": s.name, "value": s.value, "source": s.source,
                                        "origin": s.origin or None} for s in settings]})
        return
    out = output.console()
    out.print(output.escape(f"configuration file: {path}"
                            + ("" if path.is_file() else " (none there)")))
    rows = [(s.name, "-" if s.value is None else str(s.value),
             s.source + (f" ({s.origin})" if s.source != "file" and s.origin else ""))
            for s in settings]
    out.print(output.table(None, ["setting", "value", "from"], rows, no_wrap=[0]))


@app.command("path")
def path(ctx: typer.Context) -> None:
    """Print where the configuration file is read from (PREPBOOK_CONFIG, else the
    platform's configuration folder)."""
    from prepbook import config

    where = config.config_path()
    sys.stdout.write(f"{where}\n")
    if not where.is_file() and not invocation(ctx).quiet:
        sys.stderr.write("no file there yet: create it (TOML) to change a default\n")
