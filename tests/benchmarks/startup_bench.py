"""Start-up benchmark: run by hand, never by the test suite (no timed tests).

    python tests/benchmarks/startup_bench.py [--repeat 20]

Times fresh processes of ``prepbook --help`` and ``prepbook calc normality ... --json``
against ``python -c "import typer"`` (the floor any Typer program starts from) and
prints them side by side with their targets: ``--help`` at most 1.5x, ``calc
normality --json`` at most 1.6x. The three commands take turns, run after run, so a
machine that slows down part way through slows all three alike; each figure is the
median. Beside the wall time it gives the processor time (user + system) of each
process, which other work on a busy machine disturbs less (Unix: the ``resource``
module).
"""

from __future__ import annotations

import argparse
import os
import resource
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


def _cpu() -> float:
    used = resource.getrusage(resource.RUSAGE_CHILDREN)
    return used.ru_utime + used.ru_stime


def measure(repeat: int = 20) -> dict[str, float]:
    """Median wall times in ms of ``typer`` (the import alone), ``help`` and ``calc``,
    their median processor times (``typer_cpu``...), and the ratios of the last two to
    the first (``help_x``, ``calc_x``; ``help_cpu_x``, ``calc_cpu_x``)."""
    env = {**os.environ, "COLUMNS": "100", "PREPBOOK_USER": "ada"}
    env.pop("PREPBOOK_DB", None)
    # As installed for a user: the untimed first run may write the modules' bytecode.
    env.pop("PYTHONDONTWRITEBYTECODE", None)
    pb = prepbook_command()
    commands = {"typer": [sys.executable, "-c", "import typer"],
                "help": [*pb, "--help"],
                "calc": [*pb, *CALC]}
    times: dict[str, list[float]] = {name: [] for name in commands}
    cpu: dict[str, list[float]] = {name: [] for name in commands}
    for cmd in commands.values():  # once untimed: the file cache is warm for all
        subprocess.run(cmd, env=env, capture_output=True, check=True)
    for _ in range(repeat):
        for name, cmd in commands.items():
            start, start_cpu = time.perf_counter(), _cpu()
            subprocess.run(cmd, env=env, capture_output=True, check=True)
            times[name].append(time.perf_counter() - start)
            cpu[name].append(_cpu() - start_cpu)
    result = {name: statistics.median(ts) * 1000 for name, ts in times.items()}
    result |= {f"{name}_cpu": statistics.median(ts) * 1000 for name, ts in cpu.items()}
    for name in ("help", "calc"):
        result[f"{name}_x"] = result[name] / result["typer"]
        result[f"{name}_cpu_x"] = result[f"{name}_cpu"] / result["typer_cpu"]
    return result


def report(repeat: int) -> None:
    """Print the start-up figures side by side with their targets."""
    load = os.getloadavg()  # other work on the machine: the wall times suffer most
    m = measure(repeat)
    after = os.getloadavg()
    print(f"start-up: median of {repeat} runs each; Python {sys.version.split()[0]}; "
          f"{os.cpu_count()} CPUs, load average {load[0]:.2f} before, {after[0]:.2f} after")
    print(f"  {'':31} {'wall':<15}  {'processor':<15}")
    label = "python -c 'import typer'"
    print(f"  {label:31} {m['typer']:6.1f} ms {'':5}  {m['typer_cpu']:6.1f} ms")
    for name, label in (("help", "prepbook --help"), ("calc", "prepbook calc normality --json")):
        target = TARGETS[name]
        verdict = "met" if m[f"{name}_x"] <= target else "NOT MET"
        print(f"  {label:31} {m[name]:6.1f} ms {m[f'{name}_x']:4.2f}x  "
              f"{m[f'{name}_cpu']:6.1f} ms {m[f'{name}_cpu_x']:4.2f}x  "
              f"(target <= {target}x of the wall time: {verdict})", flush=True)


def main() -> None:
    parser = argparse.ArgumentParser(description=(__doc__ or "").splitlines()[0])
    parser.add_argument("--repeat", type=int, default=20, help="runs of each command")
    report(parser.parse_args().repeat)


if __name__ == "__main__":
    main()
