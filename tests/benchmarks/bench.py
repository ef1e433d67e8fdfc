"""Speed benchmark: run by hand, never by the test suite (no timed tests).

    python tests/benchmarks/bench.py [--repeat 7] [--ten-year PATH] [--keep DIR]

Measures, in one run and side by side, the targets of the "speed over a decade"
work, each as the median wall time of several runs of a fresh process:

* ``prepbook --help`` and ``prepbook calc normality ... --json`` against
  ``python -c "import typer"`` (target: at most 1.5x);
* ``prepbook status`` and ``prepbook batch show BATCH`` on a ten-year database
  against the same commands on a database holding one batch (target: 1.3x);
* ``prepbook audit verify`` on the ten-year database: events a second (target: at
  least 100,000) and the ratio to a minimal loop that reads the same rows with
  sqlite3 and hashes them with hashlib (target: at most 3x);
* ``prepbook demo --years 10``: wall time and peak memory of the process tree
  (target: under two minutes and 500 MB).

Pass ``--ten-year PATH`` to reuse a database built earlier (its build is then
not timed). The directory ``tests/benchmarks`` is excluded from pytest's
collection (``norecursedirs`` in pyproject.toml).
"""

from __future__ import annotations

import argparse
import json
import os
import shutil
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

# The repository's own prepbook for the in-process parts (building the one-batch database).
sys.path.insert(0, str(Path(__file__).resolve().parents[2]))

TARGET_STARTUP = 1.5
TARGET_SCALE = 1.3
TARGET_EVENTS_PER_S = 100_000
TARGET_VERIFY_VS_LOOP = 3.0
TARGET_DEMO_S = 120.0
TARGET_DEMO_MB = 500.0

CALC = ["calc", "normality", "--standard", "KHP", "--titrant", "NaOH", "--rep", "0.8123:39.80",
        "--rep", "0.8201:40.20", "--rep", "0.8150:39.93", "--json"]

# The minimal verification loop: the same rows, the same payload, sha256 per event.
MINIMAL_LOOP = r'''
import hashlib, json, sqlite3, sys
con = sqlite3.connect(sys.argv[1])
dumps = json.JSONEncoder(separators=(",", ":"), ensure_ascii=False).encode
prev = None
n = 0
for row in con.execute('SELECT seq, at, actor, action, record_type, record_id, "values", '
                       'reason, performed_at, prev_hash, hash FROM audit_events ORDER BY seq'):
    seq, at, actor, action, rtype, rid, values, reason, pat, stored_prev, stored = row
    at = at.replace(" ", "T")
    pat = pat.replace(" ", "T") if pat else None
    payload = dumps([seq, at, actor, action, rtype, rid, values, reason, pat, stored_prev])
    ok = stored == "sha256:" + hashlib.sha256(payload.encode()).hexdigest()
    n += ok
    prev = stored
print(n)
'''


def prepbook_command() -> list[str]:
    script = Path(sys.executable).with_name("prepbook")
    if script.exists():
        return [str(script)]
    found = shutil.which("prepbook")
    return [found] if found else [sys.executable, "-m", "prepbook"]


def median_wall(cmd: list[str], repeat: int, env: dict[str, str]) -> float:
    subprocess.run(cmd, env=env, capture_output=True, check=True)  # warm the file cache
    times = []
    for _ in range(repeat):
        start = time.perf_counter()
        subprocess.run(cmd, env=env, capture_output=True, check=True)
        times.append(time.perf_counter() - start)
    return statistics.median(times)


def peak_rss_run(cmd: list[str], env: dict[str, str]) -> tuple[float, float]:
    """Wall time and peak resident memory (MB) of a command and its children."""
    import psutil

    start = time.perf_counter()
    proc = psutil.Popen(cmd, env=env, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE)
    peak = 0
    while proc.poll() is None:
        try:
            tree = [proc, *proc.children(recursive=True)]
            peak = max(peak, sum(p.memory_info().rss for p in tree))
        except psutil.Error:
            pass
        time.sleep(0.05)
    wall = time.perf_counter() - start
    if proc.returncode != 0:
        raise SystemExit(f"{' '.join(cmd)} failed: {proc.stderr.read().decode()[-2000:]}")
    return wall, peak / 1e6


def one_batch_database(path: Path) -> str:
    """A database holding one batch, standardized and accepted, made through the services."""
    from prepbook.lab import batches, instruments, lots, people, runs, setup
    from prepbook.store.engine import open_database

    setup.initialize(str(path), actor="ada")
    db = open_database(str(path))
    people.add_user(db, actor="ada", name="ada", role="admin", passphrase="bench-ada-1",
                    actor_passphrase=None)
    people.add_user(db, actor="ada", name="ben", role="reviewer", passphrase="bench-ben-1",
                    actor_passphrase="bench-ada-1")
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
    runs.review(db, actor="ben", run=run["run"], accept=True, reason=None,
                passphrase="bench-ben-1")
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
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeat", type=int, default=7, help="runs per median")
    parser.add_argument("--ten-year", type=Path, help="reuse this ten-year database")
    parser.add_argument("--keep", type=Path, help="build the databases in this directory")
    parser.add_argument("--years", type=int, default=10)
    args = parser.parse_args()

    work = args.keep or Path(tempfile.mkdtemp(prefix="prepbook-bench-"))
    work.mkdir(parents=True, exist_ok=True)
    env = {**os.environ, "COLUMNS": "120", "PREPBOOK_USER": "ada"}
    env.pop("PREPBOOK_DB", None)
    env.pop("PREPBOOK_AUDIT_KEY_FILE", None)
    pb = prepbook_command()
    r = args.repeat
    lines: list[str] = []

    def say(text: str) -> None:
        print(text, flush=True)
        lines.append(text)

    say(f"prepbook benchmark: median of {r} runs each; {os.cpu_count()} CPUs; "
        f"Python {sys.version.split()[0]}")

    # -- start-up -----------------------------------------------------------------
    typer_s = median_wall([sys.executable, "-c", "import typer"], r, env)
    help_s = median_wall([*pb, "--help"], r, env)
    calc_s = median_wall([*pb, *CALC], r, env)
    say(f"start-up   python -c 'import typer'      {typer_s * 1000:7.1f} ms")
    say(f"           prepbook --help                {help_s * 1000:7.1f} ms  "
        f"{help_s / typer_s:4.2f}x  (target <= {TARGET_STARTUP}x: "
        f"{verdict(help_s / typer_s <= TARGET_STARTUP)})")
    say(f"           prepbook calc normality --json {calc_s * 1000:7.1f} ms  "
        f"{calc_s / typer_s:4.2f}x  (target <= {TARGET_STARTUP}x: "
        f"{verdict(calc_s / typer_s <= TARGET_STARTUP)})")

    # -- the ten-year database --------------------------------------------------------
    if args.ten_year is not None:
        big = args.ten_year
        say(f"ten-year   reusing {big} (its build not timed here)")
    else:
        big = work / "ten-year.db"
        for suffix in ("", "-wal", "-shm"):
            Path(f"{big}{suffix}").unlink(missing_ok=True)
        wall, mb = peak_rss_run([*pb, "demo", "--db", str(big), "--years", str(args.years)], env)
        say(f"demo       prepbook demo --years {args.years}       {wall:7.1f} s   "
            f"(target < {TARGET_DEMO_S:.0f} s: {verdict(wall < TARGET_DEMO_S)}), peak memory "
            f"{mb:6.1f} MB (target < {TARGET_DEMO_MB:.0f} MB: {verdict(mb < TARGET_DEMO_MB)})")
    import sqlite3

    con = sqlite3.connect(big)
    counts = {t: con.execute(f"SELECT count(*) FROM {t}").fetchone()[0]  # noqa: S608
              for t in ("batches", "runs", "replicates", "uses", "audit_events")}
    retired = con.execute("SELECT count(*) FROM batches WHERE retired_at IS NOT NULL").fetchone()
    con.close()
    say("ten-year   " + ", ".join(f"{v} {k}" for k, v in counts.items())
        + f"; {retired[0]} batches retired")

    small = work / "one-batch.db"
    for suffix in ("", "-wal", "-shm"):
        Path(f"{small}{suffix}").unlink(missing_ok=True)
    small_code = one_batch_database(small)
    big_code = show_candidate(pb, big, env)

    for label, extra in (("status", []), ("status --json", ["--json"])):
        s1 = median_wall([*pb, "--db", str(small), "status", *extra], r, env)
        s10 = median_wall([*pb, "--db", str(big), "status", *extra], r, env)
        say(f"board      {label:<16} one batch {s1 * 1000:6.1f} ms, ten years "
            f"{s10 * 1000:6.1f} ms  {s10 / s1:4.2f}x  (target <= {TARGET_SCALE}x: "
            f"{verdict(s10 / s1 <= TARGET_SCALE)})")
    for label, extra in (("batch show", []), ("batch show --json", ["--json"])):
        s1 = median_wall([*pb, "--db", str(small), "batch", "show", small_code, *extra], r, env)
        s10 = median_wall([*pb, "--db", str(big), "batch", "show", big_code, *extra], r, env)
        say(f"show       {label:<17} one batch {s1 * 1000:6.1f} ms, ten years "
            f"{s10 * 1000:6.1f} ms  {s10 / s1:4.2f}x  (target <= {TARGET_SCALE}x: "
            f"{verdict(s10 / s1 <= TARGET_SCALE)})  [{big_code}]")

    # -- audit verify -------------------------------------------------------------------
    verify_cmd = [*pb, "--db", str(big), "audit", "verify", "--json"]
    report = json.loads(subprocess.run(verify_cmd, env=env, capture_output=True, text=True,
                                       check=True).stdout)
    assert report["ok"], report["problems"]
    events = report["events"]
    v_s = median_wall(verify_cmd, r, env)
    loop_s = median_wall([sys.executable, "-c", MINIMAL_LOOP, str(big)], r, env)
    say(f"verify     prepbook audit verify          {v_s * 1000:7.1f} ms for {events} events: "
        f"{events / v_s:,.0f} events/s (target >= {TARGET_EVENTS_PER_S:,}: "
        f"{verdict(events / v_s >= TARGET_EVENTS_PER_S)})")
    say(f"           minimal sqlite3+hashlib loop   {loop_s * 1000:7.1f} ms  "
        f"verify/loop {v_s / loop_s:4.2f}x  (target <= {TARGET_VERIFY_VS_LOOP}x: "
        f"{verdict(v_s / loop_s <= TARGET_VERIFY_VS_LOOP)})")
    if args.keep is None and args.ten_year is None:
        shutil.rmtree(work, ignore_errors=True)
    else:
        say(f"databases kept in {work}")


if __name__ == "__main__":
    main()
