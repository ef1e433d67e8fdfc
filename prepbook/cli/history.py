"""prepbook trend / trace: a batch's drift over time and its chain of traceability."""

from __future__ import annotations

import typer

from prepbook.cli import output
from prepbook.cli.session import database


def trend(
    ctx: typer.Context,
    code: str = typer.Argument(..., metavar="BATCH", help="Batch code."),
    as_json: bool = typer.Option(False, "--json", help="Print JSON."),
) -> None:
    """Accepted history of a batch, its drift, slope and when it will leave its window."""
    from prepbook.cli.chart import trend_chart
    from prepbook.lab import history, settings

    db = database(ctx)
    t = history.trend(db, code)
    if as_json:
        output.emit_json(t)
        return
    out = output.console()
    clk = settings.lab_clock(db)
    out.print(f"[bold]{t.batch}[/bold] ({output.text(t.spec)}): factor window "
              f"{t.window[0]:.3f}-{t.window[1]:.3f}, drift limit "
              f"{t.drift_limit_percent:g} % between standardizations")
    rows = [(h.run, clk.shown(h.performed_at), output.sig(h.normality_20c, 5),
             output.fixed(h.factor, 4),
             "" if h.change_percent is None else f"{h.change_percent:+.3f} %"
             + (" BEYOND LIMIT" if h.beyond_drift_limit else ""))
            for h in t.history]
    output.show(out, output.table("Accepted standardizations",
                                  ["run", "when", "N 20 C", "factor", "change"], rows,
                                  right=(2, 3, 4), no_wrap=range(5)))
    if t.slope_percent_per_30d is not None and t.slope_ci_percent_per_30d is not None:
        lo, hi = t.slope_ci_percent_per_30d
        out.print(f"slope {t.slope_percent_per_30d:+.3f} % per 30 days "
                  f"(95 % CI {lo:+.3f} to {hi:+.3f})")
        if t.forecast_leaves_window:
            out.print(f"at this slope the factor leaves its window on "
                      f"[bold]{t.forecast_leaves_window}[/bold]")
    if t.note:
        out.print(output.text(t.note))
    for line in trend_chart(t):
        out.print(output.escape(line), highlight=False)


def trace(
    ctx: typer.Context,
    code: str = typer.Argument(..., metavar="BATCH", help="Batch code."),
    as_json: bool = typer.Option(False, "--json", help="Print JSON."),
) -> None:
    """The chain upward (lots, certificates, stock, instruments) and downward (dilutions, uses)."""
    from prepbook.lab import history, settings

    db = database(ctx)
    t = history.trace(db, code)
    if as_json:
        output.emit_json(t)
        return
    out = output.console()
    clk = settings.lab_clock(db)
    up, down = t.upward, t.downward
    p = up.preparation
    out.print(f"[bold]{t.batch}[/bold] ({output.text(t.spec)}) made {clk.shown(p.made_at)} by "
              f"{p.made_by} "
              f"({p.method})")
    if p.solute_lot:
        certificate = p.solute_lot.certificate
        out.print(f"  solute lot {p.solute_lot.code}"
                  + (f" (certificate {output.text(certificate)})" if certificate else
                     " (no certificate recorded)"))
    for key, ins in (("flask", p.flask), ("balance", p.balance)):
        if ins:
            out.print(f"  {key} {ins.code}, calibration due {ins.due}"
                      + (" (OVERDUE now)" if ins.overdue_now else ""))
    for a in up.stock_chain:
        out.print(f"  from stock {a.batch} ({output.text(a.spec)}), standardized by "
                  f"{a.standardized_by or '-'}"
                  + (f", lot {a.lot.code}" if a.lot else ""))
    out.print("[bold]Standardizations[/bold]")
    for r in up.standardizations:
        src = (f"lot {r.lot.code} (purity {r.lot.purity_percent} %, certificate "
               f"{output.text(r.lot.certificate or '-')}, expires {r.lot.expires})" if r.lot
               else f"against {r.reference_batch}")
        inst = ", ".join(f"{i.kind} {i.code} due {i.due}"
                         for i in (r.balance, r.burette) if i)
        out.print(f"  {r.run} {r.status} {clk.shown(r.performed_at)} by {r.analyst}: "
                  f"{output.text(src)}"
                  + (f"; {inst}" if inst else "")
                  + (f"; {', '.join(r.reviewers)}" if r.reviewers else ""))
    out.print("[bold]Downward[/bold]")
    for c in down.diluted_into:
        out.print(f"  diluted into {c.batch} ({output.text(c.spec)}) {clk.shown(c.made_at)}")
    for ref in down.reference_for:
        out.print(f"  reference for run {ref.run} of {ref.batch} ({ref.status})")
    out.print(f"  {len(down.uses)} use(s)")
    for made in down.assays:
        out.print(f"  assay {made.assay} {made.performed_at}: sample {output.escape(made.sample)}, "
                  f"{output.sig(made.result, 5)} {output.escape(made.unit)} (run {made.run})")
    if t.uses_needing_review:
        out.print(f"[bold]{len(t.uses_needing_review)} use(s) need review:[/bold]")
        for u in t.uses_needing_review:
            out.print(f"  {clk.shown(u.used_at)} by {u.used_by} ({output.text(u.purpose or '-')}): "
                      f"{output.text(u.why)}")
