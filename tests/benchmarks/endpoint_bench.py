"""Endpoint error on modelled titration curves: the old derivative method against the
new finder, at three noise levels and two step patterns, fine and coarse.

Run: python tests/benchmarks/endpoint_bench.py [--seeds N] [--steps fine|coarse|all]
     [--move]

"fine" is every 0.1 mL and uneven 0.03-0.3 mL; "coarse" every 0.5 mL and uneven
0.2-0.8 mL (a manual titration logged by hand), both with the finder's default span.

The curves are computed from the equilibrium model with known equivalence volumes
(tests/chem/model_curves.py): sodium carbonate titrated with HCl (two endpoints, a row
each), acetic acid and a strong acid titrated with NaOH. For each condition the
absolute error |found - Ve| in mL over N seeded curves is summarised by its median and
its worst. With ``--move`` each seed also moves the equivalence volumes across half a
millilitre (``model_curves.moved``), so where an endpoint falls between two readings
varies as well as the noise: an error that only looks small for one placing shows.
"old" is ``prepbook.chem.curves.endpoint`` (one inflection per call: for carbonate's
first endpoint it is given the search window 0 mL .. midway between the two endpoints,
the help a user would have to give it); "new" is
``prepbook.chem.inflections.find_endpoints`` over the whole curve, which must find
every endpoint by itself (a curve where it finds another count is counted as "missed").
"""

from __future__ import annotations

import argparse
import statistics
import sys
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[2]))

from prepbook.chem.curves import endpoint  # noqa: E402
from prepbook.chem.inflections import find_endpoints  # noqa: E402
from prepbook.errors import InvalidInput  # noqa: E402
from tests.chem.model_curves import (  # noqa: E402
    CASES,
    COARSE_PATTERNS,
    NOISE_LEVELS,
    STEP_PATTERNS,
    Case,
    curve,
    moved,
)


def _old(case: Case, v: list[float], ph: list[float]) -> list[float | None]:
    found: list[float | None] = []
    for i, _ in enumerate(case.equivalence_ml):
        window = None
        if len(case.equivalence_ml) > 1:
            edges = [0.0] + [(a + b) / 2 for a, b in zip(case.equivalence_ml,
                                                          case.equivalence_ml[1:], strict=False)]
            edges.append(case.end_ml)
            window = (edges[i], edges[i + 1])
        try:
            found.append(endpoint(v, ph, search_ml=window).equivalence_ml)
        except InvalidInput:
            found.append(None)
    return found


def _new(case: Case, v: list[float], ph: list[float]) -> list[float | None]:
    try:
        report = find_endpoints(v, ph, sample_ml=case.sample_ml)
    except InvalidInput:
        return [None] * len(case.equivalence_ml)
    if len(report.inflections) != len(case.equivalence_ml):
        return [None] * len(case.equivalence_ml)
    return [item.volume_ml for item in report.inflections]


def _cells(errors: list[float], missed: int) -> str:
    median = f"{statistics.median(errors):.4f}" if errors else "-"
    worst = f"{max(errors):.4f}" if errors else "-"
    return f"{median:>10} {worst:>9} {missed:>6}"


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--seeds", type=int, default=30)
    parser.add_argument("--steps", choices=("fine", "coarse", "all"), default="all")
    parser.add_argument("--move", action="store_true",
                        help="move the equivalence volumes across 0.5 mL with the seed")
    args = parser.parse_args()
    seeds = args.seeds
    patterns = {"fine": STEP_PATTERNS, "coarse": COARSE_PATTERNS,
                "all": STEP_PATTERNS + COARSE_PATTERNS}[args.steps]
    placing = "moved across 0.5 mL" if args.move else "fixed"
    print(f"endpoint error, mL (|found - Ve|), {seeds} seeded curves per row, "
          f"equivalence volumes {placing}")
    header = (f"{'curve':<22} {'steps':<19} {'noise pH':>8} | {'old median':>10} "
              f"{'old worst':>9} {'missed':>6} | {'new median':>10} {'new worst':>9} "
              f"{'missed':>6}")
    print(header)
    print("-" * len(header))
    started = time.perf_counter()
    for base in CASES:
        for pattern in patterns:
            for noise in NOISE_LEVELS:
                count = len(base.equivalence_ml)
                errors: dict[str, list[list[float]]] = {
                    m: [[] for _ in range(count)] for m in ("old", "new")}
                missed = {m: [0] * count for m in ("old", "new")}
                for seed in range(seeds):
                    case = moved(base, seed) if args.move else base
                    v, ph = curve(case, pattern, noise, seed)
                    for name, method in (("old", _old), ("new", _new)):
                        for i, (found, true) in enumerate(zip(
                                method(case, v, ph), case.equivalence_ml, strict=True)):
                            if found is None:
                                missed[name][i] += 1
                            else:
                                errors[name][i].append(abs(found - true))
                for i in range(count):
                    label = base.name if count == 1 else f"{base.name} #{i + 1}"
                    print(f"{label:<22} {pattern:<19} {noise:>8.3f} | "
                          f"{_cells(errors['old'][i], missed['old'][i])} | "
                          f"{_cells(errors['new'][i], missed['new'][i])}")
    print(f"({time.perf_counter() - started:.1f} s)")


if __name__ == "__main__":
    main()
