"""The standardization form takes masses from a (simulated) balance and curves from files.

The balance is prepbook's simulated one on a loopback socket; the curves are meter
exports computed for the masses (``lab.demo_readings.khp_curve``). The volume a curve
must give is the stoichiometric one, V = 1000 m P / (M N), with M(KHP) from `molmass`
(its own NIST atomic weights): the direct-standardization equation of EURACHEM/CITAC
CG4 Example A2 without f_rep; the tolerance of 0.05 mL is a Class A 50 mL burette's
(ISO 385).
"""

from __future__ import annotations

from collections.abc import Iterator
from pathlib import Path

import pytest

from tests.conftest import row_counts
from tests.tui.test_app import SIZE, make_app, on_board, record_confirmed, shown, type_into

pytest.importorskip("textual")

MASSES = ["0.8085", "0.8116"]
NORMALITY = 0.1003  # the invented strength the curves are computed for
BALANCE = "BAL-A2"


@pytest.fixture
def simulated(lab: Path) -> Iterator:
    """The demo's balance connected to a simulated balance on a loopback socket."""
    from prepbook.devices.profiles import find_profile
    from prepbook.devices.simulator import SimulatedBalance, SocketServer
    from prepbook.lab import balances
    from prepbook.store.engine import open_database

    balance = SimulatedBalance(find_profile("mark-first"), MASSES)
    server = SocketServer(balance).start()
    try:
        balances.connect(open_database(str(lab)), actor="ines", code=BALANCE,
                         port=server.url, profile="mark-first")
        yield balance
    finally:
        server.stop()


def _purity(path: Path, lot: str) -> float:
    from prepbook.lab import lots
    from prepbook.store.engine import open_database

    return next(float(lt.purity_percent) for lt in lots.list_lots(open_database(str(path)))
                if lt.code == lot) / 100


def _ve(mass: str, purity: float) -> float:
    from molmass import Formula

    return 1000 * float(mass) * purity / (Formula("KHC8H4O4").mass * NORMALITY)


async def _open_form(pilot, batch: str) -> None:
    await on_board(pilot, batch, "s")
    pilot.app.screen.query_one("#balance").value = BALANCE
    await pilot.pause()


async def _read_balance(pilot, row: int) -> None:
    pilot.app.screen.query_one(f"#m{row}").focus()
    await pilot.press("ctrl+b")
    await pilot.app.workers.wait_for_complete()
    await pilot.pause()


async def _attach(pilot, row: int, path: Path) -> None:
    pilot.app.screen.query_one(f"#v{row}").focus()
    await pilot.press("ctrl+t")
    await pilot.pause()
    await type_into(pilot, "f-file", str(path))
    await pilot.press("enter")
    await pilot.pause(0.4)  # the preview follows


@pytest.mark.asyncio
async def test_masses_from_the_balance_and_volumes_from_curves_are_recorded_as_such(
        lab: Path, due_naoh: str, simulated, tmp_path: Path) -> None:
    from prepbook.lab import replicate_curves, replicate_sources
    from prepbook.lab.demo_readings import khp_curve
    from prepbook.store.engine import open_database

    app = make_app(lab, "ines")
    async with app.run_test(size=SIZE) as pilot:
        await pilot.pause()
        await _open_form(pilot, due_naoh)
        form = app.screen
        lot = str(form.query_one("#source").value).partition(":")[2]
        purity = _purity(lab, lot)
        files = []
        for i, mass in enumerate(MASSES, start=1):
            path = tmp_path / f"curve{i}.csv"
            path.write_bytes(b"Meter export\r\n" + khp_curve(float(mass), purity, NORMALITY,
                                                             seed=i))
            files.append(path)
        await type_into(pilot, "temp", "21.0")
        # replicate 1: mass from the balance, volume typed and checked against its curve
        await _read_balance(pilot, 1)
        assert form.query_one("#m1").value == MASSES[0]
        assert "B" in shown(form.query_one("#src1"))
        await _attach(pilot, 1, files[0])
        assert "C" in shown(form.query_one("#src1"))
        await type_into(pilot, "v1", f"{_ve(MASSES[0], purity):.2f}")
        # replicate 2: mass from the balance, volume the curve's endpoint (none typed)
        await _read_balance(pilot, 2)
        await _attach(pilot, 2, files[1])
        await pilot.pause(0.5)
        assert form.last is not None and len(form.last.replicates) == 2
        curve_check = [c for c in form.last.checks if "curve" in c.name]
        assert curve_check and all(c.passed for c in curve_check)
        run = await record_confirmed(pilot)
        assert run is not None
        await pilot.press("ctrl+b")  # a recorded run takes no more readings
        await pilot.pause()
        assert "a recorded run takes no more" in shown(form.query_one("#reading"))

    db = open_database(str(lab))
    readings = replicate_sources.of_batch(db, due_naoh)[run]
    rows = {r.position: r for r in readings.sources}
    assert [rows[i].amount_source for i in (1, 2)] == ["balance", "balance"]
    assert all(rows[i].balance == BALANCE and MASSES[i - 1] in (rows[i].raw or "")
               for i in (1, 2))
    assert rows[1].volume_source == "typed" and rows[2].volume_source == "curve"
    assert abs(float(rows[2].volume_ml_text) - _ve(MASSES[1], purity)) <= 0.05
    for i, path in enumerate(files, start=1):  # stored byte for byte
        assert replicate_curves.load(db, run, i) == path.read_bytes()


@pytest.mark.asyncio
async def test_a_typed_volume_far_from_the_curve_fails_the_curve_check(
        lab: Path, due_naoh: str, tmp_path: Path) -> None:
    from prepbook.lab.demo_readings import khp_curve

    app = make_app(lab, "ines")
    async with app.run_test(size=SIZE) as pilot:
        await pilot.pause()
        await _open_form(pilot, due_naoh)
        form = app.screen
        purity = _purity(lab, str(form.query_one("#source").value).partition(":")[2])
        path = tmp_path / "curve.csv"
        path.write_bytes(khp_curve(float(MASSES[0]), purity, NORMALITY, seed=3))
        await type_into(pilot, "temp", "21.0")
        await type_into(pilot, "m1", MASSES[0])  # typed, not read
        await _attach(pilot, 1, path)
        await type_into(pilot, "v1", f"{_ve(MASSES[0], purity) + 1.0:.2f}")  # 1 mL off
        await pilot.pause(0.5)
        assert form.last is not None
        failed = [c for c in form.last.checks if "curve" in c.name and not c.passed]
        assert failed, [c.name for c in form.last.checks]
        assert "B" not in shown(form.query_one("#src1"))


@pytest.mark.asyncio
@pytest.mark.parametrize(("mode", "said"), [
    ("unstable", "not stable"), ("wrong-unit", "not grams"), ("overload", "overload")])
async def test_a_reading_that_cannot_be_taken_is_one_line_and_nothing_is_read(
        lab: Path, due_naoh: str, simulated, mode: str, said: str) -> None:
    simulated.set(mode=mode)
    app = make_app(lab, "ines")
    before = row_counts(lab)
    async with app.run_test(size=SIZE) as pilot:
        await pilot.pause()
        await _open_form(pilot, due_naoh)
        await _read_balance(pilot, 1)
        form = app.screen
        line = shown(form.query_one("#reading"))
        assert "nothing read" in line and said in line, line
        assert form.query_one("#reading").has_class("refusal")
        assert form.query_one("#m1").value == "" and not form.weighed
    assert row_counts(lab) == before


@pytest.mark.asyncio
async def test_a_balance_that_does_not_answer_is_one_line(
        lab: Path, due_naoh: str, simulated) -> None:
    from prepbook.lab import settings
    from prepbook.store.engine import open_database
    from tests.conftest import passphrase_of

    settings.set_value(open_database(str(lab)), actor="oren", key="balance_timeout_s",
                       value="1", reason="a short wait for the test",
                       passphrase=passphrase_of(lab, "oren"))
    simulated.set(mode="silent")
    app = make_app(lab, "ines")
    async with app.run_test(size=SIZE) as pilot:
        await pilot.pause()
        await _open_form(pilot, due_naoh)
        await _read_balance(pilot, 1)
        line = shown(app.screen.query_one("#reading"))
        assert "no reading from the balance" in line and "1 s" in line, line
        assert app.screen.query_one("#m1").value == ""


@pytest.mark.asyncio
async def test_a_mass_read_then_changed_by_hand_is_typed(
        lab: Path, due_naoh: str, simulated) -> None:
    app = make_app(lab, "ines")
    async with app.run_test(size=SIZE) as pilot:
        await pilot.pause()
        await _open_form(pilot, due_naoh)
        await _read_balance(pilot, 1)
        form = app.screen
        assert 1 in form.weighed
        form.query_one("#m1").focus()
        await pilot.press("end", "5")
        await pilot.pause()
        assert 1 not in form.weighed and "B" not in shown(form.query_one("#src1"))
        # a row that has a mass is not read over
        form.query_one("#m1").focus()
        await pilot.press("ctrl+b")
        await pilot.pause()
        assert "already has a mass" in shown(form.query_one("#reading"))
        assert form.query_one("#m1").value == MASSES[0] + "5"
