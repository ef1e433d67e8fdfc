"""Does each titrant volume agree with the endpoint of the replicate's recorded curve?

A replicate that carries a curve (a meter's or an automatic titrator's export) is
checked: the volume entered must lie within the lab's tolerance of an inflection of the
curve (the nearest one: a two-step curve has an endpoint for each step). A difference
beyond it is a failed check (a reading copied wrongly, or the wrong curve). A volume taken
from the curve itself agrees by construction and is shown as such. Pure: no I/O.
"""

from __future__ import annotations

from collections.abc import Sequence

import msgspec

from prepbook.rules.acceptance import Check

CHECK_NAME = "curve-endpoint"


class CurveEvidence(msgspec.Struct, frozen=True):
    """One replicate's volume as entered beside the inflections of its curve (mL)."""

    position: int
    volume_ml: float
    volume_text: str
    endpoints_ml: tuple[float, ...]
    from_curve: bool
    tolerance_ml: float  # the lab's setting at the time of the evaluation


def _nearest(e: CurveEvidence) -> float:
    return min(e.endpoints_ml, key=lambda v: abs(v - e.volume_ml))


def check_curves(evidence: Sequence[CurveEvidence]) -> tuple[Check, ...]:
    """One check over every replicate with a curve; none when no replicate has one."""
    if not evidence:
        return ()
    bad = []
    for e in evidence:
        nearest = _nearest(e)
        difference = abs(e.volume_ml - nearest)
        if difference > e.tolerance_ml:
            bad.append(f"replicate {e.position}: {e.volume_text} mL entered, the curve's "
                       f"endpoint is {nearest:.3f} mL ({difference:.3f} mL apart)")
    tolerance = max(e.tolerance_ml for e in evidence)
    taken = sum(1 for e in evidence if e.from_curve)
    if bad:
        return (Check(CHECK_NAME, False, "fail",
                      "; ".join(bad) + f"; the lab allows {tolerance:g} mL (setting "
                      "curve_tolerance_ul)"),)
    return (Check(CHECK_NAME, True, "fail",
                  f"{len(evidence)} replicate(s) with a recorded curve agree with its endpoint "
                  f"within {tolerance:g} mL ({taken} volume(s) taken from the curve)"),)
