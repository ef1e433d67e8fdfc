"""Building the demo lab: an invented scenario, entered through the same services
a bench would use, with its dates counted back from today."""

from __future__ import annotations

import tomllib
from dataclasses import dataclass, replace
from datetime import UTC, date, datetime, timedelta
from importlib import resources
from pathlib import Path
from typing import Any

from prepbook.errors import InvalidInput, Refused

DEMO_FILE = "lab.toml"


def scenario() -> dict[str, Any]:
    text = resources.files("prepbook.demo_lab").joinpath(DEMO_FILE).read_text(encoding="utf-8")
    return tomllib.loads(text)


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


def build(path: Path, *, replace: bool = False) -> dict[str, Any]:
    """Build the demo lab into a new SQLite file at ``path`` and return its board."""
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
    for ins in data["instrument"]:
        instruments.add_instrument(
            db, actor=admin["name"], code=ins["code"], kind=ins["kind"],
            due=(today + timedelta(days=ins["due_day"])).date().isoformat(),
            capacity=ins.get("capacity"), tolerance=ins.get("tolerance"),
            readability=ins.get("readability"))
    for lot in data["lot"]:
        lots.add_lot(
            db, actor=admin["name"], material=lot["material"], code=lot["code"],
            purity=lot["purity"], purity_u=lot.get("purity_u"),
            expires=(today + timedelta(days=lot["expires_day"])).date().isoformat(),
            certificate=lot.get("certificate"),
            dried=((today + timedelta(days=lot["dried_day"])).date().isoformat()
                   if "dried_day" in lot else None))
    codes: dict[str, str] = {}
    run_count = 0
    for b in data["batch"]:
        made = _moment(today, b["day"], b.get("time", "09:00"))
        res = batches.make_batch(
            db, actor=b["by"], spec=b["spec"], volume=b["volume"],
            solute_mass=b.get("solute_mass"), stock_volume=b.get("stock_volume"),
            from_batch=codes[b["from_batch"]] if "from_batch" in b else None,
            aliquot=b.get("aliquot"), flask=b.get("flask"), balance=b.get("balance"),
            notes=b.get("notes"), at=made.isoformat(timespec="minutes"))
        codes[b["key"]] = res["batch"]
        for r in b.get("run", []):
            when = _moment(today, r["day"], r.get("time", "10:00"))
            out = runs.standardize(
                db, actor=r["by"], batch=res["batch"], replicates=list(r["reps"]),
                lot=r.get("lot"), against=codes[r["against"]] if "against" in r else None,
                balance=r.get("balance"), burette=r.get("burette"), temperature=r.get("temp"),
                blank=r.get("blank"), indicator=r.get("indicator"),
                at=when.isoformat(timespec="minutes"))
            run_count += 1
            rv = r.get("review")
            if rv:
                signed = min(when + timedelta(hours=5), now)
                runs.review(db, actor=rv["by"], run=out["run"],
                            accept=rv["decision"] == "accept", reason=rv.get("reason"),
                            passphrase=users[rv["by"]]["passphrase"],
                            at=signed.isoformat(timespec="minutes"))
    from prepbook.lab import auditing

    verified = auditing.verify(db)
    items = board.board(db)
    story = [
        "users (demo passphrases): " + ", ".join(
            f"{u['name']} ({u['role']}, {u['passphrase']})" for u in data["user"]),
        "sodium hydroxide " + codes["naoh_a"] + " has lost strength to carbon dioxide "
        "over eleven weeks and is due for restandardization",
        "hydrochloric acid " + codes["hcl_01"] + " was diluted from the 1 N stock "
        + codes["hcl_stock"] + " and standardized against sodium hydroxide " + codes["naoh_b"],
        "a thiosulfate run was rejected and repeated; permanganate " + codes["kmno4"]
        + " is past its shelf life; an EDTA run awaits review",
    ]
    return {
        "lab": data["lab"],
        "database": target,
        "batches": len(codes),
        "runs": run_count,
        "events": verified["events"],
        "verified": verified["ok"],
        "story": story,
        "board": items,
        "example_batch": codes["naoh_a"],
    }


# --- A synthetic history: years of a busy lab, for trying the tool at scale ----------
#
# ``build_history`` simulates a laboratory working day by day (Monday to Friday) over
# the last N years and enters everything through the same services a bench uses:
# users, lots and instruments, then batches made (from solids, from concentrates and
# by dilution of a stock), standardized against primary-standard lots or against
# another titrant, reviewed by a second person (some rejected and repeated), drawn
# from for analyses, and retired when used up or at the end of their shelf life.
# Everything is invented: people, codes, certificates and every reading, which are
# drawn from a seeded random generator around a "true" strength that drifts the way
# each titrant does (sodium hydroxide takes up carbon dioxide, thiosulfate decays,
# permanganate settles after preparation). Instruments have one code per yearly
# calibration period, so each year's instruments stay apart in the record.
#
# Speed: the service calls of one simulated week share one transaction
# (``store.bulk.GroupedDatabase``); each write keeps its own audit event.

SYNTHETIC_LAB = "Brackwater Regional Laboratory (synthetic history, invented)"
_ADMIN = "edda"
_TECHNICIANS = ("mara", "jonas", "lior", "keiko", "dmitri", "sanna", "tobi", "ruth")
_REVIEWERS = ("halvard", "nadia", "quentin")
_PURPOSES = ("alkalinity", "acidity", "chloride", "hardness", "dissolved oxygen",
             "oxidizability", "free chlorine", "assay", "sulfite", "ammonium")


def _passphrase(name: str) -> str:
    return f"synthetic-{name}"


@dataclass(frozen=True)
class _LineKind:
    """One kind of titrant the lab keeps in service, and how it behaves."""

    spec: str
    count: int  # bottles of it in service at once (one per bench)
    standard: str | None  # primary standard, or None: secondary against ``against``
    drift_per_day: float  # relative change of the true strength per day
    early_drift: float = 0.0  # extra relative change per day during the first 10 days
    against: str | None = None  # spec of the titrant used as reference (secondary)
    stock: str | None = None  # spec of the stock it is diluted from
    concentrate: bool = False
    cadence_days: int = 7  # restandardization, at most the spec's interval
    uses_per_day: float = 2.0
    blank: str | None = None


_KINDS = (
    _LineKind("NaOH-0.1N", 6, "KHP", -0.00035, cadence_days=3, uses_per_day=1.8),
    _LineKind("KOH-0.1N", 2, "KHP", -0.00030, cadence_days=3, uses_per_day=1.5),
    _LineKind("Na2S2O3-0.1N", 5, "KIO3", -0.00015, cadence_days=3, uses_per_day=1.8,
              blank="0.03"),
    _LineKind("KMnO4-0.1N", 2, "Na2C2O4", -0.00003, early_drift=-0.0009, cadence_days=7,
              uses_per_day=1.5, blank="0.02"),
    _LineKind("HCl-1N", 1, "Na2CO3", 0.0, concentrate=True, cadence_days=30,
              uses_per_day=0.5),
    _LineKind("HCl-0.1N", 4, None, 0.00001, against="NaOH-0.1N", stock="HCl-1N",
              cadence_days=5, uses_per_day=1.6),
    _LineKind("H2SO4-0.1N", 1, "Na2CO3", 0.0, concentrate=True, cadence_days=14,
              uses_per_day=1.3),
    _LineKind("AgNO3-0.1N", 2, "NaCl", -0.00002, cadence_days=4, uses_per_day=1.6),
    _LineKind("EDTA-0.05M", 2, "Zn", -0.00001, cadence_days=4, uses_per_day=1.6),
)


@dataclass
class _Bottle:
    """The simulator's view of one batch: its code and its (unknown to the lab) truth."""

    code: str
    kind: _LineKind
    made: datetime
    expires: date
    true_n0: float
    left_ml: float
    last_accepted: date | None = None
    replaced: bool = False

    def true_n(self, when: datetime) -> float:
        days = (when - self.made).total_seconds() / 86400
        early = min(days, 10.0)
        return self.true_n0 * (1 + self.kind.drift_per_day * days
                               + self.kind.early_drift * early)


class _History:
    def __init__(self, db: Any, years: float, scale: float, seed: int) -> None:
        import random

        self.db = db
        self.rng = random.Random(seed)
        now = datetime.now(UTC).replace(tzinfo=None)
        self.now = now
        self.today = now.replace(hour=0, minute=0, second=0, microsecond=0)
        self.start = self.today - timedelta(days=round(365.25 * years))
        self.kinds = [replace(k, count=max(1, round(k.count * scale))) for k in _KINDS]
        self.lines: list[list[_Bottle | None]] = [[None] * k.count for k in self.kinds]
        self.counts = {"batches": 0, "runs": 0, "rejected": 0, "uses": 0, "retired": 0}
        self.period_year: int | None = None
        self.sample_no = 0

    # -- things that change once a year: instruments (recalibrated) and lots ---------
    def new_period(self, day: datetime) -> None:
        from prepbook.lab import instruments, lots

        year = day.year if self.period_year is None else self.period_year + 1
        self.period_year = year
        due = (day + timedelta(days=365)).date().isoformat()
        for k in (1, 2):
            instruments.add_instrument(self.db, actor=_ADMIN, code=f"BAL-{k}/C{year}",
                                       kind="balance", due=due, capacity="220",
                                       tolerance="0.0002", readability="0.0001")
        for k in range(1, 5):
            instruments.add_instrument(self.db, actor=_ADMIN, code=f"BUR-50-{k}/C{year}",
                                       kind="burette", due=due, capacity="50",
                                       tolerance="0.05", readability="0.01")
        for k in range(1, 4):
            instruments.add_instrument(self.db, actor=_ADMIN, code=f"VF-1000-{k}/C{year}",
                                       kind="flask", due=due, capacity="1000",
                                       tolerance="0.30", readability=None)
        instruments.add_instrument(self.db, actor=_ADMIN, code=f"PIP-25-1/C{year}",
                                   kind="pipette", due=due, capacity="25", tolerance="0.03",
                                   readability=None)
        expires = (day + timedelta(days=730)).date().isoformat()
        for material in sorted({k.standard for k in self.kinds if k.standard}):
            purity = f"{self.rng.uniform(99.90, 99.99):.2f}"
            lots.add_lot(self.db, actor=_ADMIN, material=material,
                         code=f"SY-{material}-{year}", purity=purity, purity_u="0.05",
                         expires=expires, certificate=f"CoA {material}/{year} (invented)",
                         dried=day.date().isoformat())

    def instruments(self) -> tuple[str, str, str]:
        y = self.period_year
        return (f"BAL-{self.rng.randint(1, 2)}/C{y}", f"BUR-50-{self.rng.randint(1, 4)}/C{y}",
                f"VF-1000-{self.rng.randint(1, 3)}/C{y}")

    # -- the chemistry of invented readings ------------------------------------------
    def _equivalent_weight(self, standard: str, solute: str) -> tuple[float, float]:
        from prepbook.catalog import loader
        from prepbook.chem import formula

        std = loader.find_material(standard)
        std_rx, _ = loader.reaction_for_pair(std, loader.find_material(solute))
        return formula.molar_mass(std.formula).value_g_per_mol / std_rx.n, std_rx.n

    def direct_reps(self, bottle: _Bottle, when: datetime, purity: float,
                    spoil: bool) -> list[str]:
        from prepbook.catalog import loader

        solute = loader.find_spec(bottle.kind.spec).solute
        ew, _ = self._equivalent_weight(bottle.kind.standard or "", solute)
        n_true = bottle.true_n(when)
        reps = []
        spoiled = self.rng.randrange(3) if spoil else -1
        for i in range(3):
            target_ml = self.rng.uniform(34.0, 44.0)
            mass = round(n_true * target_ml * ew / 1000 / purity, 4)
            volume = 1000 * mass * purity / (ew * n_true) * (1 + self.rng.gauss(0, 0.0004))
            if i == spoiled:
                volume *= 1.009  # over-titrated past the endpoint
            blank = float(bottle.kind.blank or 0)
            reps.append(f"{mass:.4f}:{volume + blank:.2f}")
        return reps

    def secondary_reps(self, bottle: _Bottle, ref: _Bottle, when: datetime,
                       spoil: bool) -> list[str]:
        ratio = ref.true_n(when) / bottle.true_n(when)
        spoiled = self.rng.randrange(3) if spoil else -1
        out = []
        for i in range(3):
            volume = 25.0 * ratio * (1 + self.rng.gauss(0, 0.0004))
            if i == spoiled:
                volume *= 1.009
            out.append(f"25.00:{volume:.2f}")
        return out

    # -- one batch's life --------------------------------------------------------------
    def make(self, line: int, slot: int, day: datetime) -> _Bottle | None:
        from prepbook.catalog import loader
        from prepbook.lab import batches, calcs

        kind = self.kinds[line]
        spec = loader.find_spec(kind.spec)
        analyst = self.rng.choice(_TECHNICIANS)
        made = day.replace(hour=8, minute=self.rng.randrange(0, 50))
        balance, _, flask = self.instruments()
        args: dict[str, Any] = {"flask": flask}
        if kind.stock is not None:
            stock = self.in_service_bottle(kind.stock, made)
            if stock is None:
                return None
            aliquot = round(1000 * spec.nominal / stock.true_n(made), 1)
            args.update(from_batch=stock.code, aliquot=f"{aliquot:.1f}")
            stock.left_ml -= aliquot
        elif kind.concentrate:
            from prepbook.chem import formula

            reagent = loader.find_reagent(spec.solute)
            rx_n = loader.find_material(spec.solute).reaction().n
            ml = (spec.nominal * formula.molar_mass(reagent.formula).value_g_per_mol
                  / rx_n / (reagent.density_g_per_ml * reagent.mass_fraction))
            args["stock_volume"] = f"{ml * (1 + self.rng.gauss(0, 0.004)):.1f}"
        else:
            mass = calcs.solid(spec.solute, normality_text=str(spec.nominal),
                               volume_text="1000")["mass_g"]
            args.update(solute_mass=f"{mass * (1 + self.rng.gauss(0.01, 0.004)):.4f}",
                        balance=balance)
        res = batches.make_batch(self.db, actor=analyst, spec=kind.spec, volume="1000",
                                 at=made.isoformat(timespec="minutes"), **args)
        # What was really made: the theoretical strength, off by a little (a hygroscopic
        # solid, a concentrate of uncertain strength, a flask slightly off).
        n0 = res["theoretical_normality"] * (1 + self.rng.gauss(-0.006 if kind.spec.startswith(
            ("NaOH", "KOH")) else 0.0, 0.003))
        bottle = _Bottle(code=res["batch"], kind=kind, made=made,
                         expires=date.fromisoformat(res["expires"]), true_n0=n0,
                         left_ml=1000.0)
        self.counts["batches"] += 1
        self.standardize(bottle, made + timedelta(minutes=40))
        return bottle

    def in_service_bottle(self, spec: str, when: datetime) -> _Bottle | None:
        for kind, slots in zip(self.kinds, self.lines, strict=True):
            if kind.spec != spec:
                continue
            for b in slots:
                if b is not None and b.last_accepted is not None and not b.replaced \
                        and b.expires >= when.date() and b.left_ml > 150 \
                        and (when.date() - b.last_accepted).days < 7:
                    return b
        return None

    def standardize(self, bottle: _Bottle, when: datetime) -> None:
        from prepbook.lab import runs

        kind = bottle.kind
        for attempt in range(3):
            at = when + timedelta(minutes=50 * attempt)
            analyst = self.rng.choice(_TECHNICIANS)
            spoil = attempt == 0 and self.rng.random() < 0.03
            balance, burette, _ = self.instruments()
            temp = f"{self.rng.uniform(19.5, 23.5):.1f}"
            if kind.standard is not None:
                lot = f"SY-{kind.standard}-{self.period_year}"
                purity = self.lot_purity(lot)
                out = runs.standardize(
                    self.db, actor=analyst, batch=bottle.code, lot=lot, balance=balance,
                    burette=burette, temperature=temp, blank=kind.blank,
                    replicates=self.direct_reps(bottle, at, purity, spoil),
                    at=at.isoformat(timespec="minutes"))
            else:
                ref = self.in_service_bottle(kind.against or "", at)
                if ref is None:
                    return
                out = runs.standardize(
                    self.db, actor=analyst, batch=bottle.code, against=ref.code,
                    burette=burette, temperature=temp,
                    replicates=self.secondary_reps(bottle, ref, at, spoil),
                    at=at.isoformat(timespec="minutes"))
                ref.left_ml -= 75
            self.counts["runs"] += 1
            bottle.left_ml -= 3 * 40
            reviewer = self.rng.choice(_REVIEWERS)
            accept = out["verdict"] == "pass"
            reason = None if accept else "; ".join(
                c["message"] for c in out["checks"] if not c["passed"]
                and c["severity"] == "fail")[:900] or "failed its checks"
            runs.review(self.db, actor=reviewer, run=out["run"], accept=accept,
                        reason=reason, passphrase=_passphrase(reviewer),
                        at=(at + timedelta(minutes=30)).isoformat(timespec="minutes"))
            if accept:
                bottle.last_accepted = at.date()
                return
            self.counts["rejected"] += 1

    def lot_purity(self, lot: str) -> float:
        cache = self.__dict__.setdefault("_purities", {})
        if lot not in cache:
            from prepbook.lab import lots

            cache.update({x.code: float(x.purity_percent) / 100
                          for x in lots.list_lots(self.db)})
        return cache[lot]  # type: ignore[no-any-return]

    def retire(self, bottle: _Bottle, day: datetime, why: str) -> None:
        from prepbook.lab import history

        who = self.rng.choice(_TECHNICIANS)
        history.retire(self.db, actor=who, code=bottle.code, reason=why,
                       passphrase=_passphrase(who),
                       at=day.replace(hour=8, minute=0).isoformat(timespec="minutes"))
        self.counts["retired"] += 1

    def use(self, bottle: _Bottle, when: datetime) -> None:
        from prepbook.lab import batches

        self.sample_no += 1
        ml = self.rng.uniform(5, 30)
        batches.use_batch(self.db, actor=self.rng.choice(_TECHNICIANS), code=bottle.code,
                          volume=f"{ml:.1f}",
                          purpose=f"{self.rng.choice(_PURPOSES)}, sample "
                                  f"W{when:%y}-{self.sample_no:06d}",
                          at=when.isoformat(timespec="minutes"))
        bottle.left_ml -= ml
        self.counts["uses"] += 1

    # -- one working day ---------------------------------------------------------------
    def day(self, day: datetime) -> None:
        for line, kind in enumerate(self.kinds):
            for slot in range(kind.count):
                b = self.lines[line][slot]
                if b is None or b.left_ml < 150 or (b.expires - day.date()).days < 5:
                    new = self.make(line, slot, day)
                    if new is not None:
                        if b is not None:
                            self.retire(b, day, "used up" if b.left_ml < 150
                                        else "end of shelf life")
                        self.lines[line][slot] = b = new
                if b is None:
                    continue
                if b.last_accepted is None or \
                        (day.date() - b.last_accepted).days >= kind.cadence_days:
                    self.standardize(b, day.replace(hour=9, minute=self.rng.randrange(60)))
                if b.last_accepted is None:
                    continue
                n = int(kind.uses_per_day) + (self.rng.random() < kind.uses_per_day % 1)
                for _ in range(n):
                    when = day.replace(hour=self.rng.randint(11, 16),
                                       minute=self.rng.randrange(60))
                    self.use(b, when)


def build_history(path: Path, *, years: float, replace: bool = False, scale: float = 1.0,
                  seed: int = 20261201) -> dict[str, Any]:
    """Build ``years`` of a busy lab's synthetic history into a new SQLite file.

    ``scale`` multiplies the number of bottles kept in service (1.0: a busy lab
    keeping 25 bottles in service, about 530 batches, 2,600 standardizations and
    10,500 uses a year); a fraction of a year and a small scale make a small
    history for tests.
    """
    from prepbook.lab import auditing, board, people, setup
    from prepbook.lab.security import synthetic_demo_hashing
    from prepbook.store.bulk import GroupedDatabase

    if not 0 < years <= 50:
        raise InvalidInput("--years must be above 0 and at most 50")
    if not 0 < scale <= 4:
        raise InvalidInput("scale must be above 0 and at most 4")
    path = path.expanduser()
    _move_aside(path, replace)
    target = str(path)
    setup.initialize(target, actor=_ADMIN)
    db = GroupedDatabase(target)
    try:
        with synthetic_demo_hashing(), db.group():
            people.add_user(db, actor=_ADMIN, name=_ADMIN, role="admin",
                            passphrase=_passphrase(_ADMIN), actor_passphrase=None)
            for name, role in [*((t, "technician") for t in _TECHNICIANS),
                               *((r, "reviewer") for r in _REVIEWERS)]:
                people.add_user(db, actor=_ADMIN, name=name, role=role,
                                passphrase=_passphrase(name),
                                actor_passphrase=_passphrase(_ADMIN))
        sim = _History(db, years, scale, seed)
        day = sim.start.replace(hour=0)
        # Through yesterday: every event of a simulated day is then in the past, whatever
        # the hour the history is built at.
        while day.date() < sim.today.date():
            week_end = day + timedelta(days=7)
            with db.group():
                if sim.period_year is None or day >= datetime(sim.period_year + 1,
                                                              sim.start.month, 1):
                    sim.new_period(day)
                while day < week_end and day.date() < sim.today.date():
                    if day.weekday() < 5:
                        sim.day(day)
                    day += timedelta(days=1)
        verified = auditing.verify(db)
        items = board.board(db)
    finally:
        db.dispose()
    c = sim.counts
    return {
        "lab": SYNTHETIC_LAB,
        "database": target,
        "years": years,
        "batches": c["batches"],
        "runs": c["runs"],
        "rejected": c["rejected"],
        "uses": c["uses"],
        "retired": c["retired"],
        "events": verified["events"],
        "verified": verified["ok"],
        "story": [
            "users (synthetic, passphrase synthetic-<name>): "
            + ", ".join((_ADMIN, *_TECHNICIANS, *_REVIEWERS)),
            f"{years} year(s) from {sim.start:%Y-%m-%d}: {c['batches']} batches, "
            f"{c['runs']} standardizations ({c['rejected']} rejected and repeated), "
            f"{c['uses']} uses, {c['retired']} batches retired",
        ],
        "board": items,
        "example_batch": items[0]["batch"] if items else None,
    }
