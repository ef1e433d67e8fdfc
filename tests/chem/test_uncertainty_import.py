"""The GUM budget is the same whether ``uncertainties`` was imported with numpy or, in a
short command that has not loaded numpy yet, without it (``chem.uncertainty._ufloat``).

Each case runs in a fresh interpreter, because this test process has numpy loaded
already. The budget is EURACHEM/CITAC CG4 3rd ed. (2012), Example A2 (NaOH against
KHP), whose printed figures tests/chem/test_uncertainty.py checks.
"""

from __future__ import annotations

import json
import subprocess
import sys

import pytest

# Computes the A2 budget and reports it with what the process had imported.
_PROGRAM = r"""
import json, sys
if sys.argv[1] == "numpy-first":
    import numpy  # what a process that has loaded pandas looks like
from prepbook.chem import standardization as st
khp = st.PrimaryStandard("potassium hydrogen phthalate", 204.2212, 0.0038, 1.0, 1.0, 0.00029)
result = st.direct(khp, [(0.3888, 18.64)],
                   uncertainty=st.UncertaintyInputs(0.00013, 0.013, u_rel_repeatability=0.0005))
unc = result.uncertainty
numpy_loaded_by_the_budget = "numpy" in sys.modules
import numpy  # must still import afterwards, and mix with the library's numbers
from uncertainties import ufloat
mixed = ufloat(2.0, 0.1) * numpy.float64(3.0)
print(json.dumps({
    "normality": result.normality, "u": unc.u, "U": unc.U,
    "budget": [[b.symbol, b.contribution, b.share_percent] for b in unc.budget],
    "numpy_loaded_by_the_budget": numpy_loaded_by_the_budget,
    "mixed": [mixed.nominal_value, mixed.std_dev],
    "numpy_after": numpy.__name__ in sys.modules,
}))
"""


def _budget(mode: str) -> dict:
    proc = subprocess.run([sys.executable, "-c", _PROGRAM, mode], capture_output=True,
                          text=True, check=True, timeout=120)
    return json.loads(proc.stdout)


def test_the_budget_is_the_same_with_and_without_numpy() -> None:
    plain = _budget("numpy-first")
    light = _budget("fresh")
    assert plain["numpy_loaded_by_the_budget"] is True
    assert light["numpy_loaded_by_the_budget"] is False  # the short path really ran
    # Bit for bit: the same floats, not merely close ones.
    for key in ("normality", "u", "U", "budget"):
        assert light[key] == plain[key], key
    # CG4 A2: c = 0.10214 mol/L, U (k = 2) = 0.00020 mol/L.
    assert round(light["normality"], 5) == 0.10214
    assert round(light["U"], 5) == 0.00020
    assert [line[0] for line in light["budget"]] == ["m", "P", "M", "V", "f_rep"]


def test_numpy_still_works_after_the_light_import() -> None:
    light = _budget("fresh")
    assert light["numpy_after"] is True
    nominal, std_dev = light["mixed"]
    assert nominal == 6.0 and std_dev == pytest.approx(0.3, rel=1e-12)
