"""Replicate statistics and Grubbs' outlier test.

Why: a volumetric solution's strength is the mean of replicate titrations, accepted
on their spread (Ph. Eur. 4.2.2: RSD not over 0.2 %). An outlier is *flagged* by a
published test and never dropped: excluding a replicate happens only when the caller
names its index (and records a reason elsewhere).

Grubbs' test is two-sided, G = max|x_i - mean| / s, with the critical value

    G_crit = (n-1)/sqrt(n) * sqrt(t^2 / (n-2+t^2)),  t = t_{1-alpha/(2n), n-2}

(ISO 5725-2, Grubbs 1969). To keep scipy off the start-up path the critical values
for n = 3..100 at alpha 0.05 and 0.01 are read from ``grubbs_critical.csv`` shipped
with this package (generated once from the formula above with scipy; the tests
recompute every row with scipy and check n = 3..10 against ISO 5725-2). Other n or
alpha fall back to scipy.
"""

from __future__ import annotations

import csv
import math
import statistics
from collections.abc import Collection, Sequence
from functools import lru_cache
from pathlib import Path

import msgspec

from prepbook.errors import InvalidInput

GRUBBS_TABLE = "grubbs_critical.csv"
TABLE_ALPHAS = (0.05, 0.01)
TABLE_N = (3, 100)


class OutlierFlag(msgspec.Struct, frozen=True):
    """A replicate that Grubbs' test flags (it stays in the data)."""

    index: int  # 1-based position among the values given
    value: float
    statistic: float  # G
    critical: float  # G_crit at the alpha used
    test: str = "Grubbs"
    alpha: float = 0.05


class ReplicateStats(msgspec.Struct, frozen=True):
    """Mean and spread of the included replicates."""

    n: int
    mean: float
    sd: float | None  # sample SD (n-1); None for one value
    rsd_percent: float | None
    values: tuple[float, ...]  # the included values, in order
    outlier: OutlierFlag | None  # index refers to the original (1-based) position


def _check_values(values: Sequence[float]) -> tuple[float, ...]:
    out = []
    for i, v in enumerate(values, start=1):
        if isinstance(v, bool) or not isinstance(v, (int, float)) or not math.isfinite(v):
            raise InvalidInput(f"value {i} ({v!r}) is not a finite number")
        out.append(float(v))
    return tuple(out)


def sample_sd(values: Sequence[float]) -> float | None:
    """Sample standard deviation (n-1 divisor); None when fewer than two values."""
    vals = _check_values(values)
    return statistics.stdev(vals) if len(vals) >= 2 else None


def rsd_percent(values: Sequence[float]) -> float | None:
    """Relative standard deviation in percent of the mean; None for one value."""
    vals = _check_values(values)
    sd = sample_sd(vals)
    if sd is None:
        return None
    mean = statistics.fmean(vals)
    if mean == 0:
        raise InvalidInput("RSD is undefined for a mean of zero")
    return 100.0 * sd / abs(mean)


def _check_alpha(alpha: float) -> None:
    if not (isinstance(alpha, (int, float)) and 0 < alpha < 1):
        raise InvalidInput(f"significance level alpha {alpha!r} must lie between 0 and 1")


def grubbs_critical_exact(n: int, alpha: float = 0.05) -> float:
    """Two-sided Grubbs critical value from Student's t (scipy, imported here)."""
    if not isinstance(n, int) or n < 3:
        raise InvalidInput(f"Grubbs' test needs at least 3 values, not {n!r}")
    _check_alpha(alpha)
    from scipy import stats as sps

    t = float(sps.t.ppf(1.0 - alpha / (2.0 * n), n - 2))
    return (n - 1) / math.sqrt(n) * math.sqrt(t * t / (n - 2 + t * t))


@lru_cache(maxsize=1)
def _table() -> dict[tuple[int, float], float]:
    # Package data beside this module, read as a plain file (importlib.resources would
    # import zipfile and tempfile at start-up for the same bytes).
    text = Path(__file__).with_name(GRUBBS_TABLE).read_text(encoding="utf-8")
    table: dict[tuple[int, float], float] = {}
    for row in csv.DictReader(text.splitlines()):
        n = int(row["n"])
        for alpha in TABLE_ALPHAS:
            table[(n, alpha)] = float(row[f"alpha_{alpha}"])
    return table


def grubbs_critical(n: int, alpha: float = 0.05) -> float:
    """Two-sided Grubbs critical value: the shipped table when it covers (n, alpha)."""
    if not isinstance(n, int) or isinstance(n, bool) or n < 3:
        raise InvalidInput(f"Grubbs' test needs at least 3 values, not {n!r}")
    _check_alpha(alpha)
    for tabled in TABLE_ALPHAS:
        if math.isclose(alpha, tabled) and TABLE_N[0] <= n <= TABLE_N[1]:
            return _table()[(n, tabled)]
    return grubbs_critical_exact(n, alpha)


def grubbs(values: Sequence[float], alpha: float = 0.05) -> OutlierFlag | None:
    """Flag the value farthest from the mean if G exceeds the critical value."""
    vals = _check_values(values)
    if len(vals) < 3:
        raise InvalidInput(f"Grubbs' test needs at least 3 values, not {len(vals)}")
    sd = statistics.stdev(vals)
    if sd == 0:
        return None  # all equal: nothing stands out
    mean = statistics.fmean(vals)
    deviations = [abs(v - mean) for v in vals]
    worst = max(range(len(vals)), key=lambda i: deviations[i])  # first of ties
    g = deviations[worst] / sd
    critical = grubbs_critical(len(vals), alpha)
    if g > critical:
        return OutlierFlag(index=worst + 1, value=vals[worst], statistic=g,
                           critical=critical, alpha=alpha)
    return None


def check_excluded(count: int, excluded: Collection[int]) -> frozenset[int]:
    """Validate 1-based indices to exclude; refuse excluding everything."""
    chosen = set()
    for idx in excluded:
        if isinstance(idx, bool) or not isinstance(idx, int) or not 1 <= idx <= count:
            raise InvalidInput(
                f"cannot exclude replicate {idx!r}: replicates are numbered 1 to {count}"
            )
        chosen.add(idx)
    if count == 0:
        raise InvalidInput("no replicates given")
    if len(chosen) >= count:
        raise InvalidInput("no replicate left after exclusion")
    return frozenset(chosen)


def replicate_stats(
    values: Sequence[float], excluded: Collection[int] = (), alpha: float = 0.05
) -> ReplicateStats:
    """Mean, sample SD, RSD and Grubbs flag of the values not excluded (1-based)."""
    vals = _check_values(values)
    skip = check_excluded(len(vals), excluded)
    kept_index = [i for i in range(1, len(vals) + 1) if i not in skip]
    kept = tuple(vals[i - 1] for i in kept_index)
    mean = statistics.fmean(kept)
    sd = statistics.stdev(kept) if len(kept) >= 2 else None
    rsd = None
    if sd is not None:
        if mean == 0:
            raise InvalidInput("RSD is undefined for a mean of zero")
        rsd = 100.0 * sd / abs(mean)
    flag = None
    if len(kept) >= 3:
        found = grubbs(kept, alpha)
        if found is not None:
            flag = OutlierFlag(
                index=kept_index[found.index - 1], value=found.value,
                statistic=found.statistic, critical=found.critical, alpha=alpha,
            )
    return ReplicateStats(n=len(kept), mean=mean, sd=sd, rsd_percent=rsd, values=kept,
                          outlier=flag)
