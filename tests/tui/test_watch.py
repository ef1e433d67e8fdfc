"""lab.watch: the cheap change check and a batch's history records and trend."""

from __future__ import annotations

from pathlib import Path

import pytest


@pytest.fixture
def built(tmp_path: Path):
    from prepbook.lab import demo
    from prepbook.store.engine import open_database

    story = demo.build(tmp_path / "d.db")
    # The demo's NaOH batch due for restandardization (its code carries the date it
    # was made, counted back from today, so it is read from the demo, never typed).
    return open_database(str(tmp_path / "d.db")), story.example_batch


def test_head_moves_with_every_write_and_batch_events_are_its_history(built) -> None:
    from prepbook.lab import auditing, batches, watch

    db, due_naoh = built
    head = watch.head_seq(db)
    assert head == auditing.log(db, limit=1)[0].seq
    made = batches.make_batch(db, actor="ines", spec="NaOH-0.1N", volume="1000",
                              solute_mass="4.10")
    assert watch.head_seq(db) == head + 1
    events = watch.batch_events(db, made.batch)
    assert [e.action for e in events] == ["batch.make"]
    naoh = watch.batch_events(db, due_naoh)
    runs = batches.show_batch(db, due_naoh).runs
    # one event per run recorded, per replicate, per review and per status change
    assert sum(e.action == "run.record" for e in naoh) == len(runs)
    assert sum(e.action == "replicate.record" for e in naoh) == sum(
        len(r.replicates or ()) for r in runs)
    assert [e.seq for e in naoh] == sorted(e.seq for e in naoh)


def test_trend_points_are_the_runs_factors_and_the_window_is_the_specs(built) -> None:
    from prepbook.lab import batches, specs, watch

    db, code = built
    t = watch.batch_trend(db, code)
    shown = batches.show_batch(db, code)
    assert [p.factor for p in t.points] == [r.factor for r in shown.runs]
    spec = next(s for s in specs.list_specs(db) if s.code == shown.spec)
    assert t.window == (spec.factor_low, spec.factor_high)
    # the demo's NaOH loses strength to carbon dioxide: the fitted slope is negative
    assert t.trend.slope_ci_percent_per_30d is not None
    assert t.trend.slope_ci_percent_per_30d[1] < 0


def test_a_batch_s_events_come_in_one_session_and_one_query_of_the_trail(built) -> None:
    """The audit tab used to open one session (and one query) per record of the batch:
    38 for the largest demo batch. Now: one session, one query of audit_events, and the
    same events as asking `audit log` record by record."""
    from sqlalchemy import event

    from prepbook.lab import auditing, watch

    db, due_naoh = built
    statements: list[str] = []
    sessions_opened: list[int] = []

    def seen(conn, cursor, statement, params, context, executemany) -> None:  # noqa: ANN001
        statements.append(statement)

    def began(conn) -> None:  # noqa: ANN001
        sessions_opened.append(1)

    event.listen(db.engine, "before_cursor_execute", seen)
    event.listen(db.engine, "begin", began)
    try:
        events = watch.batch_events(db, due_naoh)
    finally:
        event.remove(db.engine, "before_cursor_execute", seen)
        event.remove(db.engine, "begin", began)
    assert sum("audit_events" in s for s in statements) == 1
    assert len(sessions_opened) == 1
    one_by_one = {e.seq for rec in {f"{e.record_type}#{e.record_id}" for e in events}
                  for e in auditing.log(db, record=rec)}
    assert [e.seq for e in events] == sorted(one_by_one)
    assert len(events) > 20
