"""The JSON keys of `assay` and `impact` (DESIGN section 7), pinned: scripts read them."""

from __future__ import annotations

from tests.cli.test_assays import DRIFTED, _review, _standardize, lab  # noqa: F401
from tests.cli.test_bench_flow import bench  # noqa: F401

# The commands whose --json keys this file pins (test_json_keys_audit checks the union).
PINNED = {"assay", "impact"}
# DESIGN section 7: `calc sample`'s keys, then `assay`, `batch`, `sample`; then the
# assay's own additions.
CALC_SAMPLE = {"normality", "molarity", "concentration", "mass_fraction_percent", "replicates",
               "sd", "rsd_percent", "u", "U", "k", "budget", "warnings"}
ASSAY_OWN = ["assay", "batch", "sample", "run", "temperature_c", "result",
             "unit", "limit_low", "limit_high", "within_limit", "performed_at", "analyst"]
IMPACT = ["assay", "sample", "batch", "run", "performed_at", "unit", "before", "after",
          "after_low", "after_high", "change_percent", "crosses_limit", "limit_low",
          "limit_high", "kind", "reason"]


def test_assay_and_impact_json_keys(lab) -> None:  # noqa: F811
    cli, batch, (_, r2), (a1, _, _) = lab
    keys = list(a1)
    assert keys[0] == "version"
    assert set(keys[:-len(ASSAY_OWN)]) >= CALC_SAMPLE
    assert keys[-len(ASSAY_OWN):] == ASSAY_OWN
    assert {"value", "unit", "as"} <= set(a1["concentration"])
    r3 = _standardize(cli, batch, -3, DRIFTED)
    _review(cli, r3)
    rows = cli.json("impact", batch)
    assert rows and all(list(row) == IMPACT for row in rows)
