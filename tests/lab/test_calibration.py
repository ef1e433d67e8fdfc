"""Recalibrating an instrument: a new due date, the old one kept in the audit trail,
the board's overdue warning gone, and bad dates refused with nothing written."""

from __future__ import annotations

from datetime import UTC, datetime, timedelta

import pytest

from prepbook.errors import InvalidInput, NotFound, Refused
from prepbook.lab import auditing, board, instruments
from prepbook.store.engine import open_database
from tests.cli.test_bench_flow import _make_batch, _standardize, bench  # noqa: F401
from tests.conftest import Cli, row_counts


def _day(n: int) -> str:
    return (datetime.now(UTC).date() + timedelta(days=n)).isoformat()


@pytest.fixture
def overdue_lab(bench: Cli, monkeypatch: pytest.MonkeyPatch) -> Cli:  # noqa: F811
    """A batch in service whose burette's calibration ran out yesterday (the run done and
    entered yesterday, on the burette's due date: calibration is checked on both days)."""
    bench.ok("instrument", "add", "BUR-9", "--kind", "burette", "--due", _day(-1),
             "--capacity", "50", "--tolerance", "0.05", user="ben")
    batch = _make_batch(bench)
    args = ["standardize", batch, "--lot", "KHP-0001", "--balance", "BAL-1", "--burette",
            "BUR-9", "--at", f"{_day(-1)}T10:00"]
    for rep in ("0.8085:39.16", "0.8116:39.29", "0.8596:41.67"):
        args += ["--rep", rep]
    entered = datetime.fromisoformat(f"{_day(-1)}T10:05")
    with monkeypatch.context() as m:
        m.setattr("prepbook.lab.runs.utc_now", lambda: entered)
        run = bench.json(*args, user="ben")
    bench.ok("review", run["run"], "--accept", "--passphrase-stdin", user="cleo",
             input="cleo-passphrase\n")
    return bench


def _warnings(db: object) -> list[str]:
    """Every warning of every batch on the board, its instruments' included."""
    view = board.board_view(db)  # type: ignore[arg-type]
    return [w for item in view.batches for w in view.warnings_of(item)]


def test_calibration_moves_the_due_date_and_clears_the_warning(overdue_lab: Cli) -> None:
    db = open_database(str(overdue_lab.db))
    try:
        assert any("BUR-9 calibration overdue" in w for w in _warnings(db))
        res = instruments.calibrate_instrument(db, actor="ben", code="BUR-9",
                                               calibrated=_day(0), due=_day(365),
                                               certificate="CAL-2026-118 (invented)")
        assert res.due == _day(365)
        assert res.previous_due == _day(-1)
        assert res.overdue is False
        assert not any("BUR-9" in w for w in _warnings(db))
        listed = {i.code: i for i in instruments.list_instruments(db)}
        assert listed["BUR-9"].due == _day(365)
        # The earlier due date is in the trail, and the row still matches its last event.
        events = auditing.log(db, record="instruments")
        calibrations = [e for e in events if e.action == "instrument.calibrate"]
        assert len(calibrations) == 1
        assert f"was due {_day(-1)}" in calibrations[0].reason
        assert "CAL-2026-118" in calibrations[0].reason
        assert auditing.verify(db).ok
    finally:
        db.dispose()


@pytest.mark.parametrize(("calibrated", "due", "error", "words"), [
    (1, 365, InvalidInput, "in the future"),
    (0, 0, InvalidInput, "must be after the calibration"),
    (0, -5, InvalidInput, "must be after the calibration"),
    (0, -1, InvalidInput, "must be after the calibration"),
])
def test_bad_calibration_dates_are_refused_and_write_nothing(
        overdue_lab: Cli, calibrated: int, due: int, error: type[Exception], words: str) -> None:
    before = row_counts(overdue_lab.db)
    db = open_database(str(overdue_lab.db))
    try:
        with pytest.raises(error, match=words):
            instruments.calibrate_instrument(db, actor="ben", code="BUR-9",
                                             calibrated=_day(calibrated), due=_day(due))
    finally:
        db.dispose()
    assert row_counts(overdue_lab.db) == before


def test_same_due_date_and_unknown_instrument_are_refused(overdue_lab: Cli) -> None:
    before = row_counts(overdue_lab.db)
    db = open_database(str(overdue_lab.db))
    try:
        with pytest.raises(Refused, match="nothing to record"):
            instruments.calibrate_instrument(db, actor="ben", code="BAL-1",
                                             calibrated=_day(0), due=_day(200))
        with pytest.raises(NotFound, match="BUR-1"):
            instruments.calibrate_instrument(db, actor="ben", code="BUR-l",
                                             calibrated=_day(0), due=_day(30))
    finally:
        db.dispose()
    assert row_counts(overdue_lab.db) == before


def test_calibrate_on_the_command_line(overdue_lab: Cli) -> None:
    res = overdue_lab.json("instrument", "calibrate", "BUR-9", "--calibrated", _day(0),
                           "--due", _day(180), "--certificate", "CAL-7 (invented)", user="ben")
    assert (res["due"], res["previous_due"], res["certificate"]) == (
        _day(180), _day(-1), "CAL-7 (invented)")
    listed = {i["code"]: i["due"] for i in overdue_lab.json("instrument", "list")}
    assert listed["BUR-9"] == _day(180)
    before = row_counts(overdue_lab.db)
    bad = overdue_lab.refused("instrument", "calibrate", "BUR-9", "--calibrated", "2026-13-01",
                              "--due", _day(30), user="ben")
    assert "calibration date" in bad.output
    assert row_counts(overdue_lab.db) == before


def test_a_calibration_from_before_the_instrument_was_entered_is_recorded(
        overdue_lab: Cli) -> None:
    # The certificate of a burette in use for months is entered today: its date is
    # earlier than the record of the instrument, which is fine.
    res = overdue_lab.json("instrument", "calibrate", "BUR-9", "--calibrated", _day(-90),
                           "--due", _day(275), user="ben")
    assert (res["calibrated"], res["due"]) == (_day(-90), _day(275))
