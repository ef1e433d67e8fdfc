"""prepbook label: a PDF label for a titrant bottle or a primary-standard lot, and the
labels that no longer match the record."""

from __future__ import annotations

from typing import TYPE_CHECKING

import typer

from prepbook.cli import output
from prepbook.cli.session import actor, database
from prepbook.errors import InvalidInput

if TYPE_CHECKING:
    from prepbook.lab.database import Database
    from prepbook.lab.labels import LabelPrinted


def print_label(db: Database, *, actor: str, code: str, output: str | None = None,
                size: str | None = None, copies: int = 1, sheet: str | None = None,
                lot: bool = False, replace: bool = False,
                colour: bool = True) -> LabelPrinted:
    """Draw the PDF label of a batch (or, with ``lot``, of a lot), write it to ``output``
    (default label-CODE.pdf) and record the print."""
    from prepbook.lab import labels
    from prepbook.render.label_files import label_job

    job = label_job(output, labels.default_file_name(code), size=size, copies=copies,
                    sheet=sheet, replace=replace, colour=colour)
    return labels.print_label(db, actor=actor, code=code, size=job.size.name,
                              sheet=job.sheet_name, copies=copies, file=job.file,
                              deliver=job.deliver, lot=lot)


def label(
    ctx: typer.Context,
    code: str = typer.Argument(None, metavar="CODE", help="Batch code (or lot code with --lot).",
                               show_default=False),
    out_file: str = typer.Option(None, "-o", "--output", metavar="FILE",
                                 help="PDF file to write (default label-CODE.pdf).",
                                 show_default=False),
    size: str = typer.Option(None, "--size", metavar="SIZE",
                             help="Label stock, WxH with mm or in: 100x50mm, "
                             "89x36mm, 70x37mm (default), 62x29mm, 4x2in, 2.625x1in.",
                             show_default=False),
    copies: str = typer.Option("1", "--copies", metavar="N", help="How many labels."),
    sheet: str = typer.Option(None, "--sheet", metavar="PAPER",
                              help="Lay the labels out on a4 or letter "
                              "sheets instead of one label per page.", show_default=False),
    lot: bool = typer.Option(False, "--lot", help="CODE is a primary-standard lot."),
    replace: bool = typer.Option(False, "--replace", help="Overwrite the PDF if it exists."),
    stale: bool = typer.Option(False, "--stale", help="List bottles whose label no longer "
                               "matches the current factor or dates (prints nothing)."),
    send: bool = typer.Option(False, "--print", help="Also send the PDF to the default "
                              "printer (lp or lpr; Windows: its print verb)."),
    printer: str = typer.Option(None, "--printer", metavar="NAME", help="The printer for "
                                "--print (default: the system's default).", show_default=False),
    black_border: bool = typer.Option(False, "--black-border", help="Draw the GHS "
                                      "pictograms with a black border (printers without "
                                      "colour)."),
    as_json: bool = typer.Option(False, "--json", help="Print JSON."),
) -> None:
    """Print a bottle label as PDF (recorded), or list outdated labels with --stale."""
    from prepbook.lab import labels

    if stale:
        if code is not None:
            raise InvalidInput("--stale lists every bottle; give no CODE with it")
        from prepbook.lab import settings

        db = database(ctx)
        rows = labels.stale_labels(db)
        if as_json:
            output.emit_json(rows)
            return
        out = output.console()
        if not rows:
            out.print("every labelled bottle matches the record")
            return
        out.print(output.table(
            f"Labels to replace: {len(rows)}",
            ["batch", "label printed", "by", "shows run", "factor", "why"],
            [(r.batch, settings.lab_clock(db).shown(r.printed_at), r.printed_by, r.shown.run or "-",
              output.fixed(r.shown.factor, 4), "; ".join(r.reasons)) for r in rows],
            no_wrap=(0, 1)))
        return
    if code is None:
        raise InvalidInput("give a batch code (or a lot code with --lot), or --stale")
    if printer is not None and not send:
        raise InvalidInput("--printer names the printer for --print; give --print too")
    from pathlib import Path

    from prepbook.render import printing

    if send:  # no print command: say so before anything is written or recorded
        printing.check(printer)
    res = print_label(database(ctx), actor=actor(ctx), code=code, output=out_file, size=size,
                      copies=output.whole(copies, "--copies", 1), sheet=sheet, lot=lot,
                      replace=replace, colour=not black_border)
    queued = printing.send(Path(res.file), printer) if send else None
    if as_json:
        output.emit_json(res)
        return
    out = output.console()
    shows = f", factor {res.factor:.4f} from run {res.run}" if res.factor else ""
    n = res.copies
    out.print(f"{n} {res.kind} label{'s' if n != 1 else ''} for [bold]{res.code}[/bold] "
              f"({res.size}{', on ' + res.sheet + ' sheets' if res.sheet else ''}"
              f"{shows}) written to {output.escape(res.file)}")
    for note in res.notes:
        out.print(f"note: {output.escape(note)}")
    if queued is not None:
        out.print(f"printing: {output.escape(queued)}")
