"""Building the demo lab: an invented scenario, entered through the same services
a bench would use, with its dates counted back from today."""

from __future__ import annotations

import tomllib
from collections.abc import Callable
from datetime import UTC, datetime, timedelta
from importlib import resources
from pathlib import Path
from typing import Any

import msgspec

from prepbook.errors import Refused
from prepbook.lab.board import BatchLife, InstrumentWarning

DEMO_FILE = "lab.toml"

# Samples titrated with the demo's batches (invented IDs): batch key, day, time, analyst,
# sample, analyte, aliquot mL, titrant volumes mL, limit in the reported unit.
DEMO_ASSAYS = (
    ("naoh_a", -44, "11:10", "ines", "VIN-2610-17", "acetic-acid", "2",
     ("16.21", "16.28"), "4.5:5.5"),
    ("naoh_a", -30, "14:20", "tomas", "VIN-2611-02", "acetic-acid", "2",
     ("17.02", "16.95"), "4.5:5.5"),
    ("naoh_a", -20, "10:40", "ines", "ACD-2611-09", "HCl", "25", ("24.31", "24.38"),
     "3.40:3.60"),
    ("agno3", -12, "11:30", "ines", "WTR-2611-21", "chloride", "100", ("6.88", "6.93"),
     ":250"),
    ("naoh_b", -1, "15:05", "tomas", "VIN-2612-01", "acetic-acid", "2",
     ("16.48", "16.55"), "4.5:5.5"),
)



class DemoLab(msgspec.Struct, frozen=True):
    """The demo lab just built: where, how much, the story it tells and its board."""

    lab: str
    database: str
    batches: int
    runs: int
    events: int
    verified: bool
    story: tuple[str, ...]
    board: tuple[BatchLife, ...]
    example_batch: str
    instruments: tuple[InstrumentWarning, ...] = ()  # the board's, once each

# The demo writes weeks of invented history at once: each entry says so (a late entry).
INVENTED = "demo lab: invented history, entered all at once"

def scenario() -> dict[str, Any]:
    text = resources.files("prepbook.demo_lab").joinpath(DEMO_FILE).read_text(encoding="utf-8")
    return tomllib.loads(text)


def steps() -> int:
    """How many steps ``build`` reports to its ``advance``: one per user, instrument, lot,
    batch, standardization and sample titration, and three to finish (the weighed batch,
    the verification of the trail, the board)."""
    data = scenario()
    return (len(data["user"]) + len(data["instrument"]) + len(data["lot"])
            + sum(1 + len(b.get("run", [])) for b in data["batch"]) + len(DEMO_ASSAYS) + 3)


def _moment(today: datetime, day: int, clock: str = "09:00") -> datetime:
    hh, mm = (int(x) for x in clock.split(":"))
    return (today + timedelta(days=day)).replace(hour=hh, minute=mm, second=0, microsecond=0)


def _move_aside(path: Path, replace: bool) -> None:
    """Refuse an existing file, or with ``replace`` rename it (and its WAL) aside."""
    if path.exists():
        if not replace:
            raise Refused(f"{path} already exists; the demo builds a new database "
                          "(pass --replace to move the old file aside, or choose another --db)")
        stamp = datetime.now(UTC).strftime("%Y%m%dT%H%M%S")
        for suffix in ("", "-wal", "-shm"):
            old = Path(f"{path}{suffix}")
            if old.exists():
                old.rename(f"{path}.old-{stamp}{suffix}")


def build(path: Path, *, replace: bool = False,
          advance: Callable[[int], None] = lambda n: None) -> DemoLab:
    """Build the demo lab into a new SQLite file at ``path`` and return its board;
    ``advance(1)`` after each of its ``steps()`` (for a progress bar)."""
    from prepbook.lab import batches, board, instruments, lots, people, runs, setup
    from prepbook.store.engine import open_database

    path = path.expanduser()
    _move_aside(path, replace)
    data = scenario()
    now = datetime.now(UTC).replace(tzinfo=None)
    today = now.replace(hour=0, minute=0, second=0, microsecond=0)
    target = str(path)
    users = {u["name"]: u for u in data["user"]}
    admin = next(u for u in data["user"] if u["role"] == "admin")
    setup.initialize(target, actor=admin["name"])
    db = open_database(target)
    for u in data["user"]:
        people.add_user(db, actor=admin["name"], name=u["name"], role=u["role"],
                        passphrase=u["passphrase"], actor_passphrase=admin["passphrase"])
        advance(1)
    for ins in data["instrument"]:
        instruments.add_instrument(
            db, actor=admin["name"], code=ins["code"], kind=ins["kind"],
            due=(today + timedelta(days=ins["due_day"])).date().isoformat(),
            capacity=ins.get("capacity"), tolerance=ins.get("tolerance"),
            readability=ins.get("readability"))
        advance(1)
    for lot in data["lot"]:
        lots.add_lot(
            db, actor=admin["name"], material=lot["material"], code=lot["code"],
            purity=lot["purity"], purity_u=lot.get("purity_u"),
            expires=(today + timedelta(days=lot["expires_day"])).date().isoformat(),
            certificate=lot.get("certificate"),
            dried=((today + timedelta(days=lot["dried_day"])).date().isoformat()
                   if "dried_day" in lot else None))
        advance(1)
    codes: dict[str, str] = {}
    run_count = 0
    for b in data["batch"]:
        made = _moment(today, b["day"], b.get("time", "09:00"))
        res = batches.make_batch(
            db, actor=b["by"], spec=b["spec"], volume=b["volume"],
            solute_mass=b.get("solute_mass"), stock_volume=b.get("stock_volume"),
            from_batch=codes[b["from_batch"]] if "from_batch" in b else None,
            aliquot=b.get("aliquot"), flask=b.get("flask"), balance=b.get("balance"),
            notes=b.get("notes"), at=made.isoformat(timespec="minutes"),
            late_reason=INVENTED)
        codes[b["key"]] = res.batch
        advance(1)
        for r in b.get("run", []):
            when = _moment(today, r["day"], r.get("time", "10:00"))
            out = runs.standardize(
                db, actor=r["by"], batch=res.batch, replicates=list(r["reps"]),
                lot=r.get("lot"), against=codes[r["against"]] if "against" in r else None,
                balance=r.get("balance"), burette=r.get("burette"), temperature=r.get("temp"),
                blank=r.get("blank"), indicator=r.get("indicator"),
                at=when.isoformat(timespec="minutes"), late_reason=INVENTED)
            run_count += 1
            advance(1)
            rv = r.get("review")
            if rv and out.run is not None:
                signed = min(when + timedelta(hours=5), now)
                runs.review(db, actor=rv["by"], run=out.run,
                            accept=rv["decision"] == "accept", reason=rv.get("reason"),
                            passphrase=users[rv["by"]]["passphrase"],
                            at=signed.isoformat(timespec="minutes"), late_reason=INVENTED)
    _record_assays(db, today, codes, users, advance)
    from prepbook.lab import auditing, demo_readings

    weighed, weighed_run = demo_readings.weighed_batch(
        db, actor=admin["name"], analyst="ines", lot="FH-KHP-2291", balance="BAL-A2",
        burette="BUR-50-07", made_at=_moment(today, -3, "08:40"),
        titrated_at=_moment(today, -2, "10:15"), late_reason=INVENTED)
    codes["naoh_weighed"] = weighed
    run_count += 1
    advance(1)
    verified = auditing.verify(db)
    advance(1)
    view = board.board_view(db)
    advance(1)
    story = [
        "users (demo passphrases): " + ", ".join(
            f"{u['name']} ({u['role']}, {u['passphrase']})" for u in data["user"]),
        "sodium hydroxide " + codes["naoh_a"] + " has lost strength to carbon dioxide "
        "over eleven weeks and is due for restandardization",
        "hydrochloric acid " + codes["hcl_01"] + " was diluted from the 1 N stock "
        + codes["hcl_stock"] + " and standardized against sodium hydroxide " + codes["naoh_b"],
        "a thiosulfate run was rejected and repeated; permanganate " + codes["kmno4"]
        + " is past its shelf life; an EDTA run awaits review",
        "sodium hydroxide " + weighed + " was weighed on balance BAL-A2 over its serial line "
        "(a simulated balance) and its endpoints come from stored titration curves (run "
        + weighed_run + "); to read the balance yourself, start `prepbook instrument "
        f"simulate-balance --port {demo_readings.TRY_PORT}` and run `prepbook instrument "
        "read BAL-A2`",
        "a silver nitrate reading was corrected after a water sample was titrated with it: "
        "prepbook impact " + codes["agno3"] + " shows the chloride result recomputed",
    ]
    return DemoLab(lab=data["lab"], database=target, batches=len(codes), runs=run_count,
                   events=verified.events, verified=verified.ok, story=tuple(story),
                   board=view.batches, example_batch=codes["naoh_a"],
                   instruments=view.instruments)


def _record_assays(db: Any, today: datetime, codes: dict[str, str],
                   users: dict[str, Any], advance: Callable[[int], None]) -> None:
    """The demo's sample titrations, each with the batch's value in force that day; then
    a burette reading of the silver nitrate standardization is found misread by one
    small division and corrected after a water sample was titrated with it
    (``prepbook impact`` shows the chloride result recomputed)."""
    from prepbook.lab import assays, batches, runs

    for key, day, clock, who, sample, analyte, aliquot, volumes, limit in DEMO_ASSAYS:
        assays.assay(db, actor=who, batch=codes[key], sample=sample, analyte=analyte,
                     aliquot=aliquot, replicates=list(volumes), limit=limit,
                     at=_moment(today, day, clock).isoformat(timespec="minutes"),
                     late_reason=INVENTED)
        advance(1)
    shown = batches.show_batch(db, codes["agno3"])
    run = shown.runs[-1].run
    runs.correct(db, actor="ines", run=run, replicate=2, volume="35.81",
                 reason="burette misread by one small division (35.81 on the bench sheet, "
                 "typed 35.86)",
                 passphrase=users["ines"]["passphrase"])
    runs.review(db, actor="priya", run=run, accept=True, reason="reading checked on the sheet",
                passphrase=users["priya"]["passphrase"])
