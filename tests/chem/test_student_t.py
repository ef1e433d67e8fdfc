"""The t quantile without scipy, checked against scipy (a reference library)."""

from __future__ import annotations

import pytest
from scipy import stats as sps

from prepbook.chem.student_t import t_975
from prepbook.errors import InvalidInput


@pytest.mark.parametrize("df", [*range(1, 61), 75, 100, 250, 1000, 5000])
def test_t_975_matches_scipy(df: int) -> None:
    """scipy.stats.t.ppf(0.975, df): the table rows exactly (to the nine decimals kept),
    the Cornish-Fisher expansion (Abramowitz and Stegun 26.7.5) within 2e-8 relative."""
    assert t_975(df) == pytest.approx(float(sps.t.ppf(0.975, df)), rel=2e-8, abs=6e-10)


def test_known_table_values() -> None:
    """Printed tables of Student's t (two-sided 95 %): 12.706 for 1 degree of freedom,
    2.776 for 4, 2.228 for 10, 2.042 for 30 (e.g. NIST/SEMATECH e-Handbook of
    Statistical Methods, section 1.3.6.7.2, upper critical values of t)."""
    assert [round(t_975(d), 3) for d in (1, 4, 10, 30)] == [12.706, 2.776, 2.228, 2.042]


@pytest.mark.parametrize("df", [0, -1, 2.5, True])
def test_refuses_what_is_not_a_degree_of_freedom(df: object) -> None:
    with pytest.raises(InvalidInput):
        t_975(df)  # type: ignore[arg-type]


def test_a_trend_imports_no_scipy() -> None:
    """`prepbook trend` and the terminal app's trend tab no longer wait for scipy."""
    import subprocess
    import sys

    code = ("import sys\nfrom datetime import date\nfrom prepbook.chem.trend import trend\n"
            "trend([(date(2024,1,1),1.0),(date(2024,2,1),0.99),(date(2024,3,1),0.985)],"
            "(0.97,1.03))\nprint(any(m == 'scipy' or m.startswith('scipy.') "
            "for m in sys.modules))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                         check=True).stdout.strip()
    assert out == "False"
