"""prepbook audit: the append-only trail and its verification."""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

import typer

from prepbook.cli import output
from prepbook.cli.session import Passphrases, actor, database

if TYPE_CHECKING:
    from prepbook.clock import LabClock
    from prepbook.lab.auditing import AuditEntry

app = typer.Typer(
    help="Read and verify the audit trail.",
    no_args_is_help=True,
    rich_markup_mode=None,
)


@app.command("log")
def log(
    ctx: typer.Context,
    record: str = typer.Option(None, "--record", metavar="RECORD",
                               help="Only this record, e.g. batches or batches#3."),
    actor_name: str = typer.Option(None, "--actor", metavar="NAME", help="Only this actor."),
    since: str = typer.Option(None, "--since", metavar="DATE", help="From this date, YYYY-MM-DD."),
    until: str = typer.Option(None, "--until", metavar="DATE", help="Up to this date, YYYY-MM-DD."),
    limit: str = typer.Option(
        None, "--limit", metavar="N", help="At most this many events (newest)."
    ),
    as_json: bool = typer.Option(False, "--json", help="Print JSON."),
) -> None:
    """List audit events."""
    from prepbook import clock
    from prepbook.lab import auditing, settings

    db = database(ctx)
    events = auditing.log(db, record=record, actor=actor_name, since=since,
                          until=until,
                          limit=None if limit is None else output.whole(limit, "--limit", 1))
    if as_json:
        output.emit_json(events)
        return
    out = output.console()
    title = f"Audit trail (lab time, {clock.zone_name(settings.lab_clock(db).zone)})"
    # When the table does not fit, the narrow form: both times in one column, each on
    # two lines (date, then hour), the record's code above its row id: nothing is cut.
    clk = settings.lab_clock(db)
    tab = _log_table(title, events, clk, narrow=False)
    if output.too_wide(out, tab, wrapped=True):
        tab = _log_table(title, events, clk, narrow=True)
    output.show(out, tab)


def _log_table(title: str, events: list[AuditEntry], clk: LabClock, *, narrow: bool) -> Any:
    sep = "\n" if narrow else " "

    def when(at: str | None) -> str:
        return sep.join(clk.shown(at).split(" ", 1))

    def done(e: AuditEntry) -> str:
        if not e.performed_at:
            return ""
        late = clk.late(e.performed_at, e.at)
        if narrow:
            return f"\ndone{' LATE' if late else ''}\n{when(e.performed_at)}"
        return when(e.performed_at) + (" LATE" if late else "")

    def record(e: AuditEntry) -> str:
        return f"{e.code}{sep}({e.record})" if e.code else e.record

    if narrow:
        return output.table(
            title, ["seq", "entered, done", "actor", "action", "record", "reason"],
            [(e.seq, when(e.at) + done(e), e.actor, e.action, record(e), e.reason or "")
             for e in events], right=(0,), no_wrap=(0, 1, 2, 3, 4))
    return output.table(
        title, ["seq", "entered", "work done", "actor", "action", "record", "reason"],
        [(e.seq, when(e.at), done(e), e.actor, e.action, record(e), e.reason or "")
         for e in events], right=(0,), no_wrap=(0, 1, 2, 3, 4, 5))


@app.command("verify")
def verify(
    ctx: typer.Context,
    codes: list[str] = typer.Option(
        None, "--checkpoint", metavar="CODE",
        help="A checkpoint code from a printed report or label (repeatable)."),
    witness: str = typer.Option(
        None, "--witness", metavar="DIR",
        help="The witness folder (default: witness_folder of the configuration)."),
    thorough: bool = typer.Option(False, "--thorough",
                                  help="Read every page of the file (SQLite integrity_check)."),
    as_json: bool = typer.Option(False, "--json", help="Print JSON."),
    witness_db: str = typer.Option(
        None, "--witness-db", metavar="URL",
        help="The witness database (default: witness_database of the configuration)."),
    keyring: str = typer.Option(
        None, "--keyring", metavar="DIR",
        help="The folder of old audit keys (default: audit_keyring of the configuration)."),
) -> None:
    """Check the hash chain, every row against its last audited state, and the trail
    against every checkpoint in sight."""
    from prepbook.lab import auditing

    db = database(ctx)
    silent = as_json or output.quiet(ctx)
    with output.progress("verifying the audit trail (events, then rows)",
                         None if silent else auditing.verify_size(db), silent=silent) as step:
        rep = auditing.verify_against(db, codes=codes or (), witness=witness,
                                      thorough=thorough, witness_database=witness_db,
                                      keyring=keyring, advance=step)
    if as_json:
        output.emit_json(rep)
    else:
        out = output.console()
        if rep.ok:
            out.print(f"audit trail verified: {rep.events} events, every record matches")
        else:
            out.print(f"[bold]audit trail NOT verified[/bold] ({rep.events} events):")
            for p in rep.problems:
                out.print(f"  - {output.text(p)}")
        if rep.checkpoint:
            out.print(f"checkpoint {rep.checkpoint}; {rep.checkpoints_checked} checkpoint(s) "
                      "held against the trail")
        for note in rep.notes:
            out.print(f"note: {output.text(note)}")
    if not rep.ok:
        raise typer.Exit(1)


@app.command("checkpoint")
def checkpoint(
    ctx: typer.Context,
    as_json: bool = typer.Option(False, "--json", help="Print JSON."),
) -> None:
    """Sign a checkpoint of the trail now and append it to the witness folder."""
    from prepbook.lab import auditing

    made = auditing.checkpoint(database(ctx))
    if as_json:
        output.emit_json(made)
        return
    where = f"witnessed in {made.witness_file}" if made.witness_file else (
        "kept in the database only (no witness_folder set)")
    output.console().print(f"Checkpoint {made.checkpoint}: {made.events} events, "
                           f"at {made.made_at[:16].replace('T', ' ')} UTC; {where}")


@app.command("signing-key")
def signing_key(
    path: str = typer.Argument(..., metavar="PATH",
                               help="Where to write the new private key (never overwritten)."),
) -> None:
    """Make the lab's checkpoint-signing key pair (keep PATH away from the database)."""
    from prepbook.lab import auditing

    made = auditing.new_signing_key(path)
    output.console().print(
        f"signing key written to {made.file} (readable by its owner only); public key "
        f"{made.public_key}. Name it in signing_key_file of the configuration or in "
        "PREPBOOK_SIGNING_KEY_FILE; its public key is recorded at the first checkpoint.")


@app.command("witness-db")
def witness_db(
    url: str = typer.Argument(..., metavar="URL",
                              help="The witness database: a PostgreSQL URL or a SQLite file."),
) -> None:
    """Make the checkpoint table of a witness database (run as its owner, once)."""
    from prepbook.lab import auditing

    shown = auditing.make_witness_database(url)
    output.console().print(
        f"witness table prepbook_witness_checkpoints ready in {shown}. Name it in "
        "witness_database of the configuration or in PREPBOOK_WITNESS_DATABASE; give the "
        "benches' account INSERT on it only (see the README).")


@app.command("rotate-key")
def rotate_key(
    ctx: typer.Context,
    audit_key: str = typer.Option(None, "--audit-key", metavar="FILE",
                                  help="The new audit key file."),
    signing_key: str = typer.Option(None, "--signing-key", metavar="FILE",
                                    help="The new signing key file (`audit signing-key`)."),
    reason: str = typer.Option(..., "--reason", metavar="TEXT",
                               help="Why the key changes (kept in the audit trail)."),
    passphrase_stdin: bool = typer.Option(
        False, "--passphrase-stdin", help="Read your passphrase from standard input."),
    as_json: bool = typer.Option(False, "--json", help="Print JSON."),
) -> None:
    """Hand the lab's audit key or signing key over to a new one (admin; signed with
    your passphrase, on a bench that holds the key in use)."""
    from prepbook.lab import auditing

    secret = Passphrases(passphrase_stdin).get(f"Passphrase of {actor(ctx)}")
    changed = auditing.rotate_key(database(ctx), actor=actor(ctx), passphrase=secret,
                                  reason=reason, audit_key=audit_key, signing_key=signing_key)
    if as_json:
        output.emit_json(changed)
        return
    out = output.console()
    for c in changed:
        out.print(f"the {c.kind} key is now {c.new_key[:16]} (was {c.old_key[:16]}) from "
                  f"event #{c.after_event + 1} on, by {c.made_by}")
        if c.kind == "audit":
            out.print("  set PREPBOOK_AUDIT_KEY_FILE to the new key on every bench, and keep "
                      "the old key's file in the audit keyring folder (audit_keyring) for "
                      "`audit verify`")
        else:
            out.print(f"  first checkpoint of the new key: {c.checkpoint}; set "
                      "signing_key_file to the new key where checkpoints are made")
