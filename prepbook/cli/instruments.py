"""prepbook instrument: balances, burettes and glassware with calibration dates."""

from __future__ import annotations

import typer

from prepbook.cli import output
from prepbook.cli.session import actor, database

app = typer.Typer(
    help="Add and list instruments, record their calibration, connect and read balances.",
    no_args_is_help=True,
    rich_markup_mode=None,
)


@app.command("add")
def add(
    ctx: typer.Context,
    code: str = typer.Argument(..., metavar="CODE", help="Instrument code, as on its tag."),
    kind: str = typer.Option(
        ..., "--kind", metavar="KIND",
        help="balance, burette, flask, pipette, thermometer or meter."
    ),
    due: str = typer.Option(..., "--due", metavar="DATE", help="Calibration due date, YYYY-MM-DD."),
    capacity: str = typer.Option(None, "--capacity", metavar="G|ML", help="Capacity (g or mL)."),
    tolerance: str = typer.Option(
        None, "--tolerance", metavar="G|ML", help="Tolerance, +/- (g or mL)."
    ),
    readability: str = typer.Option(
        None, "--readability", metavar="G|ML", help="Readability (g or mL)."
    ),
    as_json: bool = typer.Option(False, "--json", help="Print the instrument as JSON."),
) -> None:
    """Record an instrument."""
    from prepbook.lab import instruments

    ins = instruments.add_instrument(database(ctx), actor=actor(ctx), code=code, kind=kind,
                                     due=due, capacity=capacity, tolerance=tolerance,
                                     readability=readability)
    if as_json:
        output.emit_json(ins)
        return
    out = output.console()
    out.print(f"{ins.kind} [bold]{ins.code}[/bold], calibration due {ins.due}")
    if ins.overdue:
        out.print("[bold]warning:[/bold] its calibration is already overdue")


@app.command("list")
def list_(ctx: typer.Context,
          as_json: bool = typer.Option(False, "--json", help="Print JSON.")) -> None:
    """List instruments with capacity, tolerance and calibration due date."""
    from prepbook.lab import instruments

    rows = instruments.list_instruments(database(ctx))
    if as_json:
        output.emit_json(rows)
        return
    output.console().print(output.table(
        "Instruments", ["code", "kind", "capacity", "tolerance", "readability", "due"],
        [(r.code, r.kind, r.capacity, r.tolerance, r.readability,
          r.due + (" (overdue)" if r.overdue else "")) for r in rows]))


@app.command("calibrate")
def calibrate(
    ctx: typer.Context,
    code: str = typer.Argument(..., metavar="CODE", help="Instrument code, as on its tag."),
    calibrated: str = typer.Option(
        ..., "--calibrated", metavar="DATE",
        help="When it was calibrated, YYYY-MM-DD (not in the future)."
    ),
    due: str = typer.Option(
        ..., "--due", metavar="DATE", help="Next calibration due date, YYYY-MM-DD."
    ),
    certificate: str = typer.Option(
        None, "--certificate", metavar="TEXT",
        help="The calibration certificate's number or reference."
    ),
    as_json: bool = typer.Option(False, "--json", help="Print the instrument as JSON."),
) -> None:
    """Record a recalibration: the new due date (the old one stays in the audit trail)."""
    from prepbook.lab import instruments

    ins = instruments.calibrate_instrument(database(ctx), actor=actor(ctx), code=code,
                                           calibrated=calibrated, due=due,
                                           certificate=certificate)
    if as_json:
        output.emit_json(ins)
        return
    output.console().print(
        f"{ins.kind} [bold]{ins.code}[/bold] calibrated {ins.calibrated}, "
        f"now due {ins.due} (was due {ins.previous_due})")


@app.command("connect")
def connect(
    ctx: typer.Context,
    code: str = typer.Argument(..., metavar="BALANCE", help="Balance code, as on its tag."),
    port: str = typer.Option(
        ..., "--port", metavar="PORT",
        help="Serial port (/dev/ttyUSB0, COM3) or pyserial URL (socket://HOST:PORT)."
    ),
    profile: str = typer.Option(
        ..., "--profile", metavar="NAME", help="Print-line profile (see `instrument profiles`)."
    ),
    as_json: bool = typer.Option(False, "--json", help="Print the connection as JSON."),
) -> None:
    """Record how a balance is reached: its port and print-line profile."""
    from prepbook.lab import balances

    c = balances.connect(database(ctx), actor=actor(ctx), code=code, port=port,
                         profile=profile)
    if as_json:
        output.emit_json(c)
        return
    output.console().print(
        f"balance [bold]{c.balance}[/bold] on {c.port}, profile {c.profile} "
        f"({c.speed} baud, {c.data_bits} data bits, parity {c.parity}, "
        f"{c.stop_bits:g} stop bit(s)); connection {c.connection_version}")


@app.command("profiles")
def profiles_(as_json: bool = typer.Option(False, "--json", help="Print JSON.")) -> None:
    """List the balance print-line profiles (shipped, and the lab's own file's)."""
    from prepbook.lab import balances

    rows = balances.profiles()
    if as_json:
        output.emit_json(rows)
        return
    output.console().print(output.table(
        "Balance profiles", ["name", "line", "parity", "from", "what it reads"],
        [(p.name, f"{p.speed} {p.data_bits}-{p.stop_bits:g}", p.parity, p.source,
          p.description) for p in rows]))


@app.command("read")
def read(
    ctx: typer.Context,
    code: str = typer.Argument(..., metavar="BALANCE", help="Balance code, as on its tag."),
    timeout: str = typer.Option(
        None, "--timeout", metavar="S",
        help="Seconds to wait for the printed line (default: the lab's balance_timeout_s)."
    ),
    as_json: bool = typer.Option(False, "--json", help="Print the reading as JSON."),
) -> None:
    """Read one stable net mass (g) from a balance; nothing is recorded."""
    from prepbook.inputs import parse_number
    from prepbook.lab import balances

    wait = parse_number(timeout, "--timeout (s)", positive=True).value if timeout else None
    w = balances.read_mass(database(ctx), code, timeout_s=wait)
    if as_json:
        output.emit_json({"balance": w.balance, "mass_g": float(w.mass_text),
                          "mass_text": w.mass_text, "unit": w.unit, "raw": w.raw,
                          "read_at": w.read_at.isoformat(timespec="seconds"),
                          "port": w.port, "profile": w.profile})
        return
    output.console().print(f"balance [bold]{w.balance}[/bold]: {w.mass_text} {w.unit} "
                           f"(stable), printed as {w.raw!r}", highlight=False)


@app.command("simulate-balance")
def simulate_balance(
    port: str = typer.Option(
        "pty", "--port", metavar="PTY|N",
        help="Serve on a pseudo-terminal (pty, Linux/macOS) or on loopback TCP port N "
        "(0: any free port; open it as socket://127.0.0.1:N)."
    ),
    profile: str = typer.Option("mark-first", "--profile", metavar="NAME",
                                help="Print-line profile to speak."),
    mass: list[str] = typer.Option(
        None, "--mass", metavar="G", help="Mass printed (g); repeat for a list used in turn."
    ),
    mode: str = typer.Option(
        "stable", "--mode", metavar="MODE",
        help="stable, unstable, wrong-unit, overload, noisy or silent."
    ),
    seconds: str = typer.Option(None, "--for", metavar="S",
                                help="Stop after S seconds (default: until Ctrl-C)."),
) -> None:
    """Serve a simulated balance, to try readings without hardware."""
    import time

    from prepbook.devices.simulator import PtyServer, SimulatedBalance, SocketServer
    from prepbook.errors import InvalidInput
    from prepbook.inputs import parse_number
    from prepbook.lab import balances

    chosen = next((p for p in balances.loaded_profiles() if p.name == profile), None)
    if chosen is None:
        raise InvalidInput(f"no balance profile {profile!r}; see `prepbook instrument profiles`")
    masses = [parse_number(m, "--mass (g)", positive=True).text for m in (mass or ["39.1602"])]
    balance = SimulatedBalance(chosen, masses, mode)
    limit = parse_number(seconds, "--for (s)", positive=True).value if seconds else None
    if port == "pty":
        server: PtyServer | SocketServer = PtyServer(balance)
    else:
        number = parse_number(port, "--port", non_negative=True, maximum=65535)
        if not number.text.isdigit():
            raise InvalidInput(f"--port {port!r} is 'pty' or a TCP port number")
        try:
            server = SocketServer(balance, int(number.text))
        except OSError as exc:
            raise InvalidInput(f"cannot listen on 127.0.0.1:{number.text}: "
                               f"{exc.strerror or exc}") from None
    server.start()
    out = output.console(stderr=True)
    print(server.url, flush=True)
    out.print(f"simulated balance ({chosen.name}, {mode}, {' '.join(masses)} g) at "
              f"{server.url}; Ctrl-C stops it", highlight=False)
    try:
        start = time.monotonic()
        while limit is None or time.monotonic() - start < limit:
            time.sleep(0.1)
    except KeyboardInterrupt:
        pass
    finally:
        server.stop()


@app.command("curve")
def curve(
    ctx: typer.Context,
    run: str = typer.Argument(..., metavar="RUN", help="Run code."),
    replicate_text: str = typer.Option(..., "--replicate", metavar="N",
                                       help="Replicate number (from 1)."),
    out: str = typer.Option(..., "-o", "--output", metavar="FILE",
                            help="File to write the stored curve to (not overwritten)."),
) -> None:
    """Write a replicate's stored titration curve, exactly as it was recorded."""
    from pathlib import Path

    from prepbook.errors import InvalidInput
    from prepbook.lab import replicate_curves

    replicate = output.whole(replicate_text, "--replicate", minimum=1)
    content = replicate_curves.load(database(ctx), run, replicate)
    target = Path(out).expanduser()
    try:
        with target.open("xb") as handle:
            handle.write(content)
    except FileExistsError:
        raise InvalidInput(f"{target} already exists; choose another --output") from None
    except OSError as exc:
        raise InvalidInput(f"cannot write {target}: {exc.strerror or exc}") from None
    output.console().print(f"curve of run {run} replicate {replicate} written to {target} "
                           f"({len(content)} bytes)", highlight=False)
