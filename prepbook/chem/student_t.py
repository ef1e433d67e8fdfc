"""The two-sided 95 % quantile of Student's t, without importing scipy.

Why: the trend of a titrant's factor needs one number, t(0.975, n - 2), for the
confidence interval of its slope; importing ``scipy.stats`` for it costs about
0.7 s, the larger part of `prepbook trend` and of the first trend the terminal
app draws.

How: for 1 to 30 degrees of freedom, a table of the quantile to nine decimals
(generated once with ``scipy.stats.t.ppf(0.975, df)``; tests/chem/test_student_t.py
recomputes every row with scipy). Beyond 30 degrees of freedom, the Cornish-Fisher
expansion of t in terms of the normal quantile z, to the fourth power of 1/df
(Abramowitz and Stegun, Handbook of Mathematical Functions, 1964, formula 26.7.5);
at df = 31 it is within 1.3e-8 (relative) of scipy and closer beyond, which the
same test checks up to df = 5000.
"""

from __future__ import annotations

from statistics import NormalDist

from prepbook.errors import InvalidInput

# t(0.975, df) for df = 1..30.
_TABLE_975 = (
    12.706204736, 4.302652730, 3.182446305, 2.776445105, 2.570581836,
    2.446911851, 2.364624252, 2.306004135, 2.262157163, 2.228138852,
    2.200985160, 2.178812830, 2.160368656, 2.144786688, 2.131449546,
    2.119905299, 2.109815578, 2.100922040, 2.093024054, 2.085963447,
    2.079613845, 2.073873068, 2.068657610, 2.063898562, 2.059538553,
    2.055529439, 2.051830516, 2.048407142, 2.045229642, 2.042272456,
)


def t_975(df: int) -> float:
    """t(0.975, df): the two-sided 95 % quantile of Student's t with ``df`` degrees."""
    if isinstance(df, bool) or not isinstance(df, int) or df < 1:
        raise InvalidInput(f"degrees of freedom must be a whole number of at least 1, not {df!r}")
    if df <= len(_TABLE_975):
        return _TABLE_975[df - 1]
    z = NormalDist().inv_cdf(0.975)
    g1 = (z**3 + z) / 4
    g2 = (5 * z**5 + 16 * z**3 + 3 * z) / 96
    g3 = (3 * z**7 + 19 * z**5 + 17 * z**3 - 15 * z) / 384
    g4 = (79 * z**9 + 776 * z**7 + 1482 * z**5 - 1920 * z**3 - 945 * z) / 92160
    v = float(df)
    return z + g1 / v + g2 / v**2 + g3 / v**3 + g4 / v**4
