"""Lab policy: acceptance checks of a standardization and the life of a batch (pure)."""

from prepbook.rules.acceptance import (
    AcceptanceRules,
    Check,
    check_standardization,
    failures,
    min_weight_g,
    verdict,
)
from prepbook.rules.life import (
    batch_state,
    batch_warnings,
    drift_between,
    expiry,
    restandardize_by,
)

__all__ = [
    "AcceptanceRules",
    "Check",
    "batch_state",
    "batch_warnings",
    "check_standardization",
    "drift_between",
    "expiry",
    "failures",
    "min_weight_g",
    "restandardize_by",
    "verdict",
]
