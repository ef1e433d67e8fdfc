"""A synthetic decade of a busy lab, the benchmarks' fixture, written through the services.

    python tests/benchmarks/synthetic.py PATH [--years 10] [--scale 1.0]

builds it into a new SQLite file at PATH and prints, as JSON, its counts, the build's
wall and CPU time and the process's peak resident memory. ``cached(folder)`` builds it
once per schema and builder: the file is named after the Alembic head revision and the
builder's edition (``BUILDER``), so a change of either builds a new one and an old file
is simply never read again.

The simulated lab works day by day (Monday to Friday) over the last N years and enters
everything through the same public services, and the same write path, a bench uses:
users, lots and instruments, then batches made (from solids, from concentrates and by
dilution of a stock), standardized against primary-standard lots or against another
titrant, reviewed by a second person (some rejected and repeated), drawn from for
analyses, and retired when used up or at the end of their shelf life. The service calls
of one simulated week share one transaction (``Database.one_transaction``: one commit
instead of a few thousand, each call still checked and audited on its own).

Everything is invented: people, codes, certificates and every reading, drawn from a
seeded random generator around a "true" strength that drifts the way each titrant does
(sodium hydroxide takes up carbon dioxide, thiosulfate decays, permanganate settles
after preparation). Instruments have one code per yearly calibration period. The users'
passphrases are hashed with a cheap Argon2 cost (``FIXTURE_COST``), passed explicitly:
they are public, and the history verifies one at each of its ~30,000 signatures.
"""

from __future__ import annotations

import argparse
import json
import random
import subprocess
import sys
import time
from dataclasses import dataclass, replace
from datetime import UTC, date, datetime, timedelta
from pathlib import Path
from typing import Any

if __name__ == "__main__":  # run as a script: the repository's own prepbook
    sys.path.insert(0, str(Path(__file__).resolve().parents[2]))

from prepbook.catalog import loader
from prepbook.chem import formula
from prepbook.lab import (
    batches,
    history,
    instruments,
    lots,
    people,
    preparing,
    runs,
    settings,
    setup,
)
from prepbook.lab.database import Database, open_database
from prepbook.lab.security import HashCost

# Cheap Argon2 parameters for the invented users only; never for a real user.
FIXTURE_COST = HashCost(time_cost=1, memory_kib=8, parallelism=1)
_ADMIN = "edda"
# The builder's edition, in the cached file's name with the schema's revision: a change
# to what the simulated lab does (not only to the schema) builds a new history.
BUILDER = 2
# A decade written at once: every entry is a late one, and says so.
HISTORY = "synthetic history, entered all at once"
_TECHNICIANS = ("mara", "jonas", "lior", "keiko", "dmitri", "sanna", "tobi", "ruth")
_REVIEWERS = ("halvard", "nadia", "quentin")
_PURPOSES = ("alkalinity", "acidity", "chloride", "hardness", "dissolved oxygen",
             "oxidizability", "free chlorine", "assay", "sulfite", "ammonium")


def _titrant_ml(reps: list[str]) -> float:
    """The titrant the replicates ("AMOUNT:VOLUME") draw from the batch, mL."""
    return sum(float(r.split(":")[1]) for r in reps)


def passphrase(name: str) -> str:
    """An invented user's passphrase (public: the history is a benchmark's fixture)."""
    return f"synthetic-{'-'.join(name)}"  # never containing the name (the policy)


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
    _LineKind("AgNO3-0.1N", 2, "NaCl", -0.00002, cadence_days=3, uses_per_day=1.6),
    _LineKind("EDTA-0.05M", 2, "Zn", -0.00001, cadence_days=3, uses_per_day=1.6),
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
    def __init__(self, db: Database, years: float, scale: float, seed: int) -> None:
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
        self.purity: dict[str, float] = {}  # lot code -> purity as a fraction

    # -- things that change once a year: instruments (recalibrated) and lots ---------
    def new_period(self, day: datetime) -> None:
        year = day.year if self.period_year is None else self.period_year + 1
        self.period_year = year
        # The history is entered today, all at once, and prepbook checks a lot's expiry
        # and an instrument's calibration when a run is entered as well as when it was
        # done (a backdated entry cannot bring an expired lot back into use). So the
        # invented lots and calibrations stay valid through the day of entry; otherwise
        # every run older than its lot's shelf life fails and is rejected.
        entered = self.today + timedelta(days=30)
        due = max(day + timedelta(days=365), entered).date().isoformat()
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
        expires = max(day + timedelta(days=730), entered).date().isoformat()
        for material in sorted({k.standard for k in self.kinds if k.standard}):
            purity = f"{self.rng.uniform(99.90, 99.99):.2f}"
            self.purity[f"SY-{material}-{year}"] = float(purity) / 100
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
        std = loader.find_material(standard)
        std_rx, _ = loader.reaction_for_pair(std, loader.find_material(solute))
        return formula.molar_mass(std.formula).value_g_per_mol / std_rx.n, std_rx.n

    def direct_reps(self, bottle: _Bottle, when: datetime, purity: float,
                    spoil: bool) -> list[str]:
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
            reagent = loader.find_reagent(spec.solute)
            rx_n = loader.find_material(spec.solute).reaction().n
            ml = (spec.nominal * formula.molar_mass(reagent.formula).value_g_per_mol
                  / rx_n / (reagent.density_g_per_ml * reagent.mass_fraction))
            args["stock_volume"] = f"{ml * (1 + self.rng.gauss(0, 0.004)):.1f}"
        else:
            mass = preparing.solid(spec.solute, normality_text=str(spec.nominal),
                               volume_text="1000").mass_g
            args.update(solute_mass=f"{mass * (1 + self.rng.gauss(0.01, 0.004)):.4f}",
                        balance=balance)
        res = batches.make_batch(self.db, actor=analyst, spec=kind.spec, volume="1000",
                                 at=made.isoformat(timespec="minutes"), late_reason=HISTORY,
                                 **args)
        # What was really made: the theoretical strength, off by a little (a hygroscopic
        # solid, a concentrate of uncertain strength, a flask slightly off).
        n0 = res.theoretical_normality * (1 + self.rng.gauss(-0.006 if kind.spec.startswith(
            ("NaOH", "KOH")) else 0.0, 0.003))
        bottle = _Bottle(code=res.batch, kind=kind, made=made,
                         expires=date.fromisoformat(res.expires), true_n0=n0,
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
        kind = bottle.kind
        for attempt in range(3):
            at = when + timedelta(minutes=50 * attempt)
            analyst = self.rng.choice(_TECHNICIANS)
            spoil = attempt == 0 and self.rng.random() < 0.03
            balance, burette, _ = self.instruments()
            temp = f"{self.rng.uniform(19.5, 23.5):.1f}"
            if kind.standard is not None:
                lot = f"SY-{kind.standard}-{self.period_year}"
                reps = self.direct_reps(bottle, at, self.purity[lot], spoil)
                if _titrant_ml(reps) > bottle.left_ml - 5:
                    return  # too little left: the bottle is replaced on a later day
                out = runs.standardize(
                    self.db, actor=analyst, batch=bottle.code, lot=lot, balance=balance,
                    burette=burette, temperature=temp, blank=kind.blank, replicates=reps,
                    at=at.isoformat(timespec="minutes"), late_reason=HISTORY)
            else:
                ref = self.in_service_bottle(kind.against or "", at)
                if ref is None:
                    return
                reps = self.secondary_reps(bottle, ref, at, spoil)
                if _titrant_ml(reps) > bottle.left_ml - 5 or ref.left_ml < 80:
                    return
                out = runs.standardize(
                    self.db, actor=analyst, batch=bottle.code, against=ref.code,
                    burette=burette, temperature=temp, replicates=reps,
                    at=at.isoformat(timespec="minutes"), late_reason=HISTORY)
                ref.left_ml -= 75  # the three 25 mL aliquots of the reference
            self.counts["runs"] += 1
            bottle.left_ml -= _titrant_ml(reps)
            reviewer = self.rng.choice(_REVIEWERS)
            accept = out.verdict == "pass"
            reason = None if accept else "; ".join(
                c.message for c in out.checks if not c.passed
                and c.severity == "fail")[:900] or "failed its checks"
            runs.review(self.db, actor=reviewer, run=str(out.run), accept=accept,
                        reason=reason, passphrase=passphrase(reviewer),
                        at=(at + timedelta(minutes=30)).isoformat(timespec="minutes"),
                        late_reason=HISTORY)
            if accept:
                bottle.last_accepted = at.date()
                return
            self.counts["rejected"] += 1

    def retire(self, bottle: _Bottle, day: datetime, why: str) -> None:
        who = self.rng.choice(_TECHNICIANS)
        history.retire(self.db, actor=who, code=bottle.code, reason=why,
                       passphrase=passphrase(who),
                       at=day.replace(hour=8, minute=0).isoformat(timespec="minutes"))
        self.counts["retired"] += 1

    def use(self, bottle: _Bottle, when: datetime) -> None:
        ml = self.rng.uniform(5, 30)
        if ml > bottle.left_ml - 5:
            return  # the bottle is nearly empty: it is replaced on the next day
        self.sample_no += 1
        batches.use_batch(self.db, actor=self.rng.choice(_TECHNICIANS), code=bottle.code,
                          volume=f"{ml:.1f}",
                          purpose=f"{self.rng.choice(_PURPOSES)}, sample "
                                  f"W{when:%y}-{self.sample_no:06d}",
                          at=when.isoformat(timespec="minutes"), late_reason=HISTORY)
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


def build(path: Path, *, years: float = 10, scale: float = 1.0,
          seed: int = 20261201) -> dict[str, int]:
    """Build ``years`` of the lab's history into a new SQLite file at ``path``.

    ``scale`` multiplies the bottles kept in service (1.0: 25 bottles, about 450
    batches, 2,600 standardizations and 10,500 uses a year); a fraction of a year and
    a small scale make a small history for tests. Returns what was written.
    """
    if path.exists():
        raise FileExistsError(f"{path} exists; the synthetic history needs a new file")
    setup.initialize(str(path), actor=_ADMIN)
    db = open_database(str(path))
    try:
        with db.one_transaction():
            for name, role in [(_ADMIN, "admin"), *((t, "technician") for t in _TECHNICIANS),
                               *((r, "reviewer") for r in _REVIEWERS)]:
                people.add_user(db, actor=_ADMIN, name=name, role=role,
                                passphrase=passphrase(name), hash_cost=FIXTURE_COST,
                                actor_passphrase=None if name == _ADMIN else passphrase(_ADMIN))
            # The simulator's clock is UTC, and so are the times it types: the lab says
            # so, as a lab sets its zone, so the history is the same on any machine.
            settings.set_value(db, actor=_ADMIN, key="timezone", value="UTC",
                               reason="the simulated lab keeps its clocks in UTC",
                               passphrase=passphrase(_ADMIN))
        sim = _History(db, years, scale, seed)
        day = sim.start.replace(hour=0)
        # Through yesterday: every event of a simulated day is then in the past.
        while day.date() < sim.today.date():
            week_end = day + timedelta(days=7)
            with db.one_transaction():
                if sim.period_year is None or day >= datetime(sim.period_year + 1,
                                                              sim.start.month, 1):
                    sim.new_period(day)
                while day < week_end and day.date() < sim.today.date():
                    if day.weekday() < 5:
                        sim.day(day)
                    day += timedelta(days=1)
    finally:
        db.dispose()
    return dict(sim.counts)


def cached(folder: Path, *, years: float = 10,
           scale: float = 1.0) -> tuple[Path, dict[str, Any]]:
    """The history for this schema under ``folder`` and what its build printed (counts,
    seconds, peak MB); built first, in a fresh process of this script, if not there."""
    from prepbook.store.migrate import HEAD_REVISION

    path = folder / f"history-{years:g}y-{scale:g}x-b{BUILDER}-{HEAD_REVISION}.db"
    stats = path.with_suffix(".json")
    if not (path.exists() and stats.exists()):
        folder.mkdir(parents=True, exist_ok=True)
        part = path.with_name(path.name + ".part")
        for suffix in ("", "-wal", "-shm"):
            Path(f"{part}{suffix}").unlink(missing_ok=True)
        out = subprocess.run([sys.executable, __file__, str(part), "--years", f"{years:g}",
                              "--scale", f"{scale:g}"], check=True, capture_output=True,
                             text=True).stdout
        for suffix in ("-wal", "-shm", ""):  # only a finished history gets the name
            if Path(f"{part}{suffix}").exists():
                Path(f"{part}{suffix}").rename(f"{path}{suffix}")
        stats.write_text(out, encoding="utf-8")
    return path, json.loads(stats.read_text(encoding="utf-8"))


def peak_rss_mb() -> float:
    """This process's peak resident memory so far (Unix; kilobytes on Linux)."""
    import resource

    peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
    return peak / (1 << 20 if sys.platform == "darwin" else 1 << 10)


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("path", type=Path)
    parser.add_argument("--years", type=float, default=10)
    parser.add_argument("--scale", type=float, default=1.0)
    args = parser.parse_args()
    start, cpu = time.perf_counter(), time.process_time()
    counts = build(args.path, years=args.years, scale=args.scale)
    print(json.dumps({**counts, "seconds": round(time.perf_counter() - start, 1),
                      "cpu_seconds": round(time.process_time() - cpu, 1),
                      "peak_mb": round(peak_rss_mb(), 1)}))


if __name__ == "__main__":
    main()
