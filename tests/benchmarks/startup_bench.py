"""Start-up benchmark: run by hand, never by the test suite (no timed tests).

    python tests/benchmarks/startup_bench.py [--repeat 20]

Times fresh processes of ``prepbook --help`` and ``prepbook calc normality ... --json``
against ``python -c "import typer"`` (the floor any Typer program starts from) and
prints them side by side with their targets: ``--help`` at most 1.5x, ``calc
normality --json`` at most 1.6x. The three commands take turns, run after run, so a
machine that slows down part way through slows all three alike; each figure is the
median.
"""

from __future__ import annotations

import argparse
import os
import shutil
import statistics
import subprocess
import sys
import time
from pathlib import Path

TARGETS = {"help": 1.5, "calc": 1.6}

CALC = ["calc", "normality", "--standard", "KHP", "--titrant", "NaOH",
        "--rep", "0.4084:20.05", "--rep", "0.4110:20.17", "--rep", "0.4097:20.12", "--json"]


def prepbook_command() -> list[str]:
    """The console script installed beside this interpreter, as a user runs it."""
    script = Path(sys.executable).with_name("prepbook")
    if script.exists():
        return [str(script)]
    found = shutil.which("prepbook")
    return [found] if found else [sys.executable, "-m", "prepbook"]


def measure(repeat: int = 20) -> dict[str, float]:
    """Median wall times in ms of ``typer`` (the import alone), ``help`` and ``calc``,
    and the ratios ``help_x`` and ``calc_x`` of the last two to the first."""
    env = {**os.environ, "COLUMNS": "100", "PREPBOOK_USER": "ada"}
    env.pop("PREPBOOK_DB", None)
    pb = prepbook_command()
    commands = {"typer": [sys.executable, "-c", "import typer"],
                "help": [*pb, "--help"],
                "calc": [*pb, *CALC]}
    times: dict[str, list[float]] = {name: [] for name in commands}
    for cmd in commands.values():  # once untimed: the file cache is warm for all
        subprocess.run(cmd, env=env, capture_output=True, check=True)
    for _ in range(repeat):
        for name, cmd in commands.items():
            start = time.perf_counter()
            subprocess.run(cmd, env=env, capture_output=True, check=True)
            times[name].append(time.perf_counter() - start)
    result = {name: statistics.median(ts) * 1000 for name, ts in times.items()}
    result["help_x"] = result["help"] / result["typer"]
    result["calc_x"] = result["calc"] / result["typer"]
    return result


def main() -> None:
    parser = argparse.ArgumentParser(description=(__doc__ or "").splitlines()[0])
    parser.add_argument("--repeat", type=int, default=20, help="runs of each command")
    args = parser.parse_args()
    m = measure(args.repeat)
    print(f"start-up: median of {args.repeat} runs each; Python {sys.version.split()[0]}")
    print(f"  python -c 'import typer'        {m['typer']:6.1f} ms")
    for name, label in (("help", "prepbook --help"), ("calc", "prepbook calc normality --json")):
        ratio, target = m[f"{name}_x"], TARGETS[name]
        verdict = "met" if ratio <= target else "NOT MET"
        print(f"  {label:31} {m[name]:6.1f} ms  {ratio:4.2f}x  (target <= {target}x: {verdict})")


if __name__ == "__main__":
    main()
