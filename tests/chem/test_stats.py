"""Replicate statistics and Grubbs' test against ISO 5725-2, scipy.stats and numpy."""

from __future__ import annotations

import csv
import math
from importlib import resources

import numpy as np
import pytest
from scipy import stats as sps

from prepbook.chem import stats
from prepbook.errors import InvalidInput

# ISO 5725-2, Grubbs' test, two-sided 95 % critical values, n = 3..10 (REFERENCES.md)
ISO_5725_2_95 = [1.1543, 1.4812, 1.7150, 1.8871, 2.0200, 2.1266, 2.2150, 2.2900]


def _scipy_grubbs(n: int, alpha: float) -> float:
    """Oracle: Grubbs (1969) closed form with scipy's t quantile, two-sided."""
    t = sps.t.ppf(1 - alpha / (2 * n), n - 2)
    return (n - 1) / math.sqrt(n) * math.sqrt(t**2 / (n - 2 + t**2))


@pytest.mark.parametrize(("n", "published"), list(zip(range(3, 11), ISO_5725_2_95, strict=True)))
def test_critical_values_match_iso_5725_2(n: int, published: float) -> None:
    """ISO 5725-2 table, printed to 4 decimals."""
    assert abs(stats.grubbs_critical(n, 0.05) - published) <= 0.6e-4


def test_shipped_table_matches_scipy_for_every_row() -> None:
    """The CSV was generated once with scipy; recompute every row (scipy.stats as oracle)."""
    text = resources.files("prepbook.chem").joinpath("grubbs_critical.csv").read_text()
    rows = list(csv.DictReader(text.splitlines()))
    assert [int(r["n"]) for r in rows] == list(range(3, 101))
    for row in rows:
        n = int(row["n"])
        for alpha in (0.05, 0.01):
            assert float(row[f"alpha_{alpha}"]) == pytest.approx(_scipy_grubbs(n, alpha),
                                                                 abs=1e-9)


@pytest.mark.parametrize(("n", "alpha"), [(150, 0.05), (20, 0.10), (5, 0.025)])
def test_outside_the_table_falls_back_to_scipy(n: int, alpha: float) -> None:
    """scipy.stats as oracle."""
    assert stats.grubbs_critical(n, alpha) == pytest.approx(_scipy_grubbs(n, alpha), rel=1e-12)


def test_grubbs_nist_handbook_example() -> None:
    """NIST/SEMATECH e-Handbook 1.3.5.17 Grubbs' example (8 values, from memory):
    G = 2.4687 exceeds the two-sided 0.05 critical value 2.1266; the largest is flagged."""
    data = [199.31, 199.53, 200.19, 200.82, 201.92, 201.95, 202.18, 245.57]
    flag = stats.grubbs(data)
    assert flag is not None
    assert flag.index == 8 and flag.value == 245.57 and flag.test == "Grubbs"
    assert flag.statistic == pytest.approx(2.4687, abs=1e-4)
    assert flag.critical == pytest.approx(2.1266, abs=1e-4)


def test_grubbs_does_not_flag_evenly_spread_values() -> None:
    """Hand check: 1, 2, 3 gives G = 1/1 = 1.0 < 1.1543 (ISO 5725-2, n = 3)."""
    assert stats.grubbs([1.0, 2.0, 3.0]) is None


def test_grubbs_needs_three_values() -> None:
    """Grubbs' test is defined for n >= 3 (ISO 5725-2 table starts at 3)."""
    with pytest.raises(InvalidInput):
        stats.grubbs([1.0, 2.0])


def test_sample_sd_and_rsd_against_numpy() -> None:
    """Hand check: 2,4,4,4,5,5,7,9 has squared deviations summing to 32, so s = sqrt(32/7);
    numpy std(ddof=1) as a second oracle."""
    data = [2.0, 4.0, 4.0, 4.0, 5.0, 5.0, 7.0, 9.0]
    result = stats.replicate_stats(data)
    assert result.sd == pytest.approx(math.sqrt(32 / 7), rel=1e-12)
    assert result.sd == pytest.approx(float(np.std(data, ddof=1)), rel=1e-12)
    assert result.rsd_percent == pytest.approx(100 * math.sqrt(32 / 7) / 5.0, rel=1e-12)
    assert result.n == 8 and result.mean == 5.0


def test_one_value_has_no_spread() -> None:
    """A single replicate has no sample SD (n - 1 = 0)."""
    result = stats.replicate_stats([0.1021])
    assert result.sd is None and result.rsd_percent is None and result.outlier is None


def test_outlier_is_flagged_and_kept() -> None:
    """Owner's rule: flagged, never dropped. The NIST example data again, reordered."""
    data = [199.31, 245.57, 199.53, 200.19, 200.82, 201.92, 201.95, 202.18]
    result = stats.replicate_stats(data)
    assert result.n == 8 and len(result.values) == 8
    assert result.outlier is not None and result.outlier.index == 2
    assert result.mean == pytest.approx(float(np.mean(data)))


def test_exclusion_only_by_index_and_flag_keeps_original_numbering() -> None:
    """Excluding replicate 1 leaves the NIST data with the outlier at original position 9."""
    data = [150.0, 199.31, 199.53, 200.19, 200.82, 201.92, 201.95, 202.18, 245.57]
    result = stats.replicate_stats(data, excluded=[1])
    assert result.n == 8 and 150.0 not in result.values
    assert result.mean == pytest.approx(float(np.mean(data[1:])))
    assert result.outlier is not None and result.outlier.index == 9


@pytest.mark.parametrize("excluded", [[0], [4], [1, 2, 3], ["1"]])
def test_bad_exclusions_are_refused(excluded: list) -> None:
    """Owner's rule: bad input gets a clear message; all excluded -> nothing left."""
    with pytest.raises(InvalidInput):
        stats.replicate_stats([1.0, 2.0, 3.0], excluded=excluded)


@pytest.mark.parametrize("values", [[], [1.0, float("nan")], [1.0, "2"]])
def test_malformed_values_are_refused(values: list) -> None:
    """Owner's rule: malformed input -> InvalidInput."""
    with pytest.raises(InvalidInput):
        stats.replicate_stats(values)
