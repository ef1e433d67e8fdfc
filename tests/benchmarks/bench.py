"""Speed benchmark: run by hand, never by the test suite (no timed tests).

    python tests/benchmarks/bench.py [--repeat 7] [--cache DIR] [--years 10]

Measures, in one run and side by side with the targets, each timing the median wall
time of several runs of a fresh process:

* ``prepbook --help`` and ``prepbook calc normality ... --json`` against
  ``python -c "import typer"`` (targets: at most 1.5x and 1.6x);
* the synthetic decade (``synthetic.py``), built through the services and the ordinary
  write path: its counts (target: at least 4,000 batches, 25,000 runs, 75,000
  replicates, 100,000 uses), build time and peak memory (target: under 5 minutes and
  500 MB). It is built once per schema and kept in ``--cache`` (default
  ``~/.cache/prepbook-bench``); a reused file shows the figures of its own build;
* ``prepbook status`` and ``prepbook batch show BATCH`` on the decade against the same
  commands on a database holding one batch (target: 1.3x);
* ``prepbook trend BATCH`` against ``prepbook batch show BATCH`` of the same batch of the
  decade (target: at most 1.5x; before this work a trend took 1.2 s, 0.8 s of it
  importing scipy);
* ``prepbook audit verify`` on the decade against a bare sqlite3 + json + hashlib loop
  over the same rows: every event hashed, every audited row written as JSON
  (``verify_bench.measure``; target: at most 1.5x).

The directory ``tests/benchmarks`` is excluded from pytest's collection (``--ignore``
in pyproject.toml).
"""

from __future__ import annotations

import argparse
import json
import os
import sqlite3
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

# The repository's own prepbook and tests for the in-process parts.
sys.path.insert(0, str(Path(__file__).resolve().parents[2]))

TARGET_SCALE = 1.3
TARGET_BUILD_S = 300.0
TARGET_BUILD_MB = 500.0
TARGET_COUNTS = {"batches": 4_000, "runs": 25_000, "replicates": 75_000, "uses": 100_000}
TARGET_TREND = 1.5
TARGET_VERIFY = 1.5

def median_wall(cmd: list[str], repeat: int, env: dict[str, str]) -> float:
    subprocess.run(cmd, env=env, capture_output=True, check=True)  # warm the file cache
    times = []
    for _ in range(repeat):
        start = time.perf_counter()
        subprocess.run(cmd, env=env, capture_output=True, check=True)
        times.append(time.perf_counter() - start)
    return statistics.median(times)


# Invented passphrases of the one-batch database, long enough for the passphrase policy
# and without their user's name in them.
ADA, BEN = "quartz-ladle-5521", "copper-valve-8830"


def one_batch_database(path: Path) -> str:
    """A database holding one batch, standardized and accepted, made through the services."""
    from prepbook.lab import batches, instruments, lots, people, runs, setup
    from prepbook.lab.database import open_database

    setup.initialize(str(path), actor="ada")
    db = open_database(str(path))
    people.add_user(db, actor="ada", name="ada", role="admin", passphrase=ADA,
                    actor_passphrase=None)
    people.add_user(db, actor="ada", name="ben", role="reviewer", passphrase=BEN,
                    actor_passphrase=ADA)
    instruments.add_instrument(db, actor="ada", code="BAL-1", kind="balance", due="2099-01-01",
                               capacity="220", tolerance="0.0002", readability="0.0001")
    instruments.add_instrument(db, actor="ada", code="BUR-1", kind="burette", due="2099-01-01",
                               capacity="50", tolerance="0.05", readability="0.01")
    lots.add_lot(db, actor="ada", material="KHP", code="KHP-1", purity="99.98", purity_u="0.05",
                 expires="2099-01-01", certificate="invented", dried="2020-01-01")
    code = batches.make_batch(db, actor="ada", spec="NaOH-0.1N", volume="1000",
                              solute_mass="4.0400", balance="BAL-1").batch
    run = runs.standardize(db, actor="ada", batch=code, lot="KHP-1", balance="BAL-1",
                           burette="BUR-1", replicates=["0.8123:39.80", "0.8201:40.15",
                                                        "0.8150:39.90"])
    runs.review(db, actor="ben", run=run.run, accept=True, reason=None,
                passphrase=BEN)
    batches.use_batch(db, actor="ada", code=code, volume="20", purpose="bench")
    db.dispose()
    return code


def show_candidate(pb: list[str], db: Path, env: dict[str, str]) -> str:
    """A batch in service on the ten-year board with the longest history of runs."""
    board = json.loads(subprocess.run([*pb, "--db", str(db), "status", "--json"], env=env,
                                      capture_output=True, check=True, text=True).stdout)
    best, most = None, -1
    for item in board:
        if item["state"] != "in-service":
            continue
        shown = json.loads(subprocess.run([*pb, "--db", str(db), "batch", "show", item["batch"],
                                           "--json"], env=env, capture_output=True, check=True,
                                          text=True).stdout)
        if len(shown["runs"]) > most:
            best, most = item["batch"], len(shown["runs"])
    assert best is not None, "no batch in service on the ten-year board"
    return best


def verdict(ok: bool) -> str:
    return "met" if ok else "NOT MET"


def main() -> None:
    parser = argparse.ArgumentParser(description=(__doc__ or "").splitlines()[0])
    parser.add_argument("--repeat", type=int, default=7, help="runs per median")
    parser.add_argument("--cache", type=Path, default=Path.home() / ".cache" / "prepbook-bench",
                        help="where the synthetic decade is kept between runs")
    parser.add_argument("--years", type=float, default=10)
    args = parser.parse_args()

    from tests.benchmarks import startup_bench, synthetic, verify_bench

    env = {**os.environ, "COLUMNS": "120", "PREPBOOK_USER": "ada"}
    env.pop("PREPBOOK_DB", None)
    env.pop("PREPBOOK_AUDIT_KEY_FILE", None)
    pb = startup_bench.prepbook_command()
    r = args.repeat
    print(f"prepbook benchmark: median of {r} runs each; {os.cpu_count()} CPUs; "
          f"Python {sys.version.split()[0]}", flush=True)

    # -- start-up -----------------------------------------------------------------
    startup_bench.report(max(r, 10))

    # -- the synthetic decade -------------------------------------------------------------
    big, built = synthetic.cached(args.cache, years=args.years)
    print(f"decade     {big}")
    print(f"           built in {built['seconds']:.0f} s ({built['cpu_seconds']:.0f} s CPU; "
          f"target < {TARGET_BUILD_S:.0f} s: {verdict(built['seconds'] < TARGET_BUILD_S)}), "
          f"peak memory {built['peak_mb']:.0f} MB (target < {TARGET_BUILD_MB:.0f} MB: "
          f"{verdict(built['peak_mb'] < TARGET_BUILD_MB)})")
    con = sqlite3.connect(big)
    counts = {t: con.execute(f"SELECT count(*) FROM {t}").fetchone()[0]  # noqa: S608
              for t in (*TARGET_COUNTS, "audit_events")}
    con.close()
    print("           " + ", ".join(f"{v:,} {k}" for k, v in counts.items())
          + f"; {built['retired']:,} batches retired (target: at least "
          + ", ".join(f"{v:,} {k}" for k, v in TARGET_COUNTS.items()) + ": "
          + verdict(all(counts[k] >= v for k, v in TARGET_COUNTS.items())) + ")", flush=True)

    # -- the board and one batch, on one batch and on the decade -------------------------
    with tempfile.TemporaryDirectory(prefix="prepbook-bench-") as work:
        small = Path(work) / "one-batch.db"
        small_code = one_batch_database(small)
        big_code = show_candidate(pb, big, env)
        for label, extra in (("status", []), ("status --json", ["--json"])):
            s1 = median_wall([*pb, "--db", str(small), "status", *extra], r, env)
            s10 = median_wall([*pb, "--db", str(big), "status", *extra], r, env)
            print(f"board      {label:<16} one batch {s1 * 1000:6.1f} ms, ten years "
                  f"{s10 * 1000:6.1f} ms  {s10 / s1:4.2f}x  (target <= {TARGET_SCALE}x: "
                  f"{verdict(s10 / s1 <= TARGET_SCALE)})", flush=True)
        for label, extra in (("batch show", []), ("batch show --json", ["--json"])):
            s1 = median_wall([*pb, "--db", str(small), "batch", "show", small_code, *extra],
                             r, env)
            s10 = median_wall([*pb, "--db", str(big), "batch", "show", big_code, *extra],
                              r, env)
            print(f"show       {label:<17} one batch {s1 * 1000:6.1f} ms, ten years "
                  f"{s10 * 1000:6.1f} ms  {s10 / s1:4.2f}x  (target <= {TARGET_SCALE}x: "
                  f"{verdict(s10 / s1 <= TARGET_SCALE)})  [{big_code}]", flush=True)
        shown = median_wall([*pb, "--db", str(big), "batch", "show", big_code], r, env)
        trend = median_wall([*pb, "--db", str(big), "trend", big_code], r, env)
        print(f"trend      trend {big_code} {trend * 1000:6.1f} ms, batch show "
              f"{shown * 1000:6.1f} ms  {trend / shown:4.2f}x  (target <= {TARGET_TREND}x: "
              f"{verdict(trend / shown <= TARGET_TREND)})", flush=True)

    # -- audit verify -------------------------------------------------------------------
    m = verify_bench.measure(big)
    print(f"verify     {m['events']:,} events, ok {m['verify_ok']}: verify {m['verify_s']:.2f} s; "
          f"bare loop over the events {m['bare_events_s']:.2f} s ({m['ratio_events']:.2f}x), "
          f"over the events and every audited row {m['bare_s']:.2f} s ({m['ratio']:.2f}x; "
          f"target <= {TARGET_VERIFY}x: {verdict(m['ratio'] <= TARGET_VERIFY)})")


if __name__ == "__main__":
    main()
