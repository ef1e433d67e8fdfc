"""Acceptance checks for one standardization run (pure lab policy, no I/O).

Each rule returns a named ``Check`` whose message states the numbers and the rule's
source, so a reviewer sees why a run failed without recomputing anything. A "fail"
check makes the verdict "fail"; a "warn" check is shown but does not. Values are
compared exactly as given: nothing is rounded before comparing (the message shows them
to a readable number of digits only).

Sources of the defaults: replicates (common practice, no source); RSD not over 0.2 % and
factor within 10 % of nominal (European Pharmacopoeia 4.2.2); minimum weight (USP <41>);
titrant volume at least 30 % of the burette capacity (USP <31>).
"""

from __future__ import annotations

import math
from collections.abc import Collection, Sequence
from datetime import date
from typing import TYPE_CHECKING, Literal

import msgspec

from prepbook.errors import InvalidInput

if TYPE_CHECKING:
    from prepbook.catalog.loader import SpecDefaults

Severity = Literal["fail", "warn"]

#: USP <41>: replace s by 0.41 d when the repeatability SD is below it.
USP41_SD_FLOOR_FACTOR = 0.41
#: USP <41>: 2 s / m <= 0.10 %, hence the smallest net weight m = 2 s / 0.001 = 2000 s.
USP41_MIN_WEIGHT_FACTOR = 2000.0


class Check(msgspec.Struct, frozen=True):
    """The outcome of one acceptance rule. ``name`` is a stable kebab-case key."""

    name: str
    passed: bool
    severity: Severity
    message: str


class AcceptanceRules(msgspec.Struct, frozen=True):
    """Configurable acceptance limits of a solution spec.

    Defaults: ``min_replicates`` 3 (common practice, no source); ``max_rsd_percent`` 0.2
    and the factor window 0.90-1.10 (European Pharmacopoeia 4.2.2); ``min_burette_fraction``
    0.30 (USP <31>); ``drift_limit_percent`` 0.5 (common practice, no source).
    """

    min_replicates: int = 3
    max_rsd_percent: float = 0.2
    factor_low: float = 0.90
    factor_high: float = 1.10
    min_burette_fraction: float = 0.30
    drift_limit_percent: float = 0.5

    def __post_init__(self) -> None:
        if isinstance(self.min_replicates, bool) or not isinstance(self.min_replicates, int):
            raise InvalidInput(
                f"min_replicates must be a whole number, not {self.min_replicates!r}"
            )
        if self.min_replicates < 1:
            raise InvalidInput(f"min_replicates must be at least 1, not {self.min_replicates}")
        if not _positive(self.max_rsd_percent):
            raise InvalidInput(f"max_rsd_percent must be positive, not {self.max_rsd_percent}")
        if not (_positive(self.factor_low) and self.factor_low < 1 < self.factor_high < math.inf):
            raise InvalidInput(
                f"the factor window {self.factor_low}-{self.factor_high} must be positive, "
                "ordered and include 1"
            )
        if not (_positive(self.min_burette_fraction) and self.min_burette_fraction <= 1):
            raise InvalidInput(
                f"min_burette_fraction must be in (0, 1], not {self.min_burette_fraction}"
            )
        if not _positive(self.drift_limit_percent):
            raise InvalidInput(
                f"drift_limit_percent must be positive, not {self.drift_limit_percent}"
            )

    @classmethod
    def from_spec(
        cls, spec: SpecDefaults, *, min_burette_fraction: float = 0.30
    ) -> AcceptanceRules:
        """The rules a catalog spec carries (the burette fraction is not per spec)."""
        return cls(
            min_replicates=spec.min_replicates,
            max_rsd_percent=spec.max_rsd_percent,
            factor_low=spec.factor_low,
            factor_high=spec.factor_high,
            min_burette_fraction=min_burette_fraction,
            drift_limit_percent=spec.drift_limit_percent,
        )


def _positive(x: float) -> bool:
    return isinstance(x, int | float) and math.isfinite(x) and x > 0


def _g(x: float) -> str:
    """A number for a message: enough digits to see why a limit was crossed."""
    return f"{x:.6g}"


def min_weight_g(readability_g: float, repeatability_sd_g: float | None = None) -> float:
    """USP <41> minimum net weight: 2000 x max(s, 0.41 d).

    USP <41> accepts a balance's repeatability when 2 s / m <= 0.10 %, with s replaced by
    0.41 d when s < 0.41 d (d = scale interval, i.e. readability). Without a measured s,
    the floor 0.41 d is used, which gives the smallest minimum weight the balance can have.
    """
    if not _positive(readability_g):
        raise InvalidInput(f"balance readability must be a positive mass in g, not {readability_g}")
    s = 0.0 if repeatability_sd_g is None else repeatability_sd_g
    if not (isinstance(s, int | float) and math.isfinite(s) and s >= 0):
        raise InvalidInput(f"repeatability SD must be a mass >= 0 g, not {repeatability_sd_g}")
    return USP41_MIN_WEIGHT_FACTOR * max(s, USP41_SD_FLOOR_FACTOR * readability_g)


def _replicate_count(rules: AcceptanceRules, count: int) -> Check:
    ok = count >= rules.min_replicates
    verb = "meets" if ok else "is below"
    return Check(
        "replicate-count",
        ok,
        "fail",
        f"{count} replicate(s) included; {verb} the minimum of {rules.min_replicates} "
        "(common practice, no source)",
    )


def _rsd(rules: AcceptanceRules, count: int, rsd_percent: float | None) -> Check:
    if rsd_percent is None:
        return Check(
            "rsd",
            False,
            "fail",
            f"RSD cannot be computed from {count} replicate(s); the limit is "
            f"{_g(rules.max_rsd_percent)} % (European Pharmacopoeia 4.2.2)",
        )
    ok = rsd_percent <= rules.max_rsd_percent
    verb = "is within" if ok else "exceeds"
    return Check(
        "rsd",
        ok,
        "fail",
        f"RSD {_g(rsd_percent)} % {verb} the limit of {_g(rules.max_rsd_percent)} % "
        "(European Pharmacopoeia 4.2.2)",
    )


def _factor(rules: AcceptanceRules, factor: float) -> Check:
    ok = rules.factor_low <= factor <= rules.factor_high
    verb = "is within" if ok else "is outside"
    return Check(
        "factor-window",
        ok,
        "fail",
        f"factor {_g(factor)} {verb} the window {_g(rules.factor_low)}-{_g(rules.factor_high)} "
        "(European Pharmacopoeia 4.2.2: within 10 % of the stated strength by default)",
    )


def _min_weight(
    masses: Sequence[tuple[int, float]],
    readability_g: float | None,
    repeatability_sd_g: float | None,
    stated_min_g: float | None,
) -> Check:
    limits = []
    if readability_g is not None:
        limits.append(min_weight_g(readability_g, repeatability_sd_g))
    if stated_min_g is not None:
        if not _positive(stated_min_g):
            raise InvalidInput(f"balance minimum weight must be positive, not {stated_min_g}")
        limits.append(stated_min_g)
    if not limits:
        return Check(
            "min-weight",
            False,
            "warn",
            "the balance's readability and minimum weight are not recorded: the USP <41> "
            "minimum weight was not checked",
        )
    # Both known: the stricter (larger) one applies.
    limit = max(limits)
    basis = (
        "USP <41>: 2000 x max(s, 0.41 d)"
        if readability_g is not None and limit == limits[0]
        else "the balance's stated minimum weight"
    )
    low = [(i, m) for i, m in masses if m < limit]
    if not low:
        return Check(
            "min-weight",
            True,
            "fail",
            f"all {len(masses)} masses are at least the minimum weight {_g(limit)} g ({basis})",
        )
    parts = [f"replicate {i} mass {_g(m)} g" for i, m in low]
    return Check(
        "min-weight",
        False,
        "fail",
        "; ".join(parts) + f" {'is' if len(low) == 1 else 'are'} below the minimum weight "
        f"{_g(limit)} g ({basis})",
    )


def _burette(
    rules: AcceptanceRules, volumes: Sequence[tuple[int, float]], capacity_ml: float | None
) -> tuple[Check, ...]:
    pct = f"{rules.min_burette_fraction * 100:g} %"
    if capacity_ml is None:
        return (
            Check(
                "burette-fraction",
                False,
                "warn",
                f"the burette capacity is not recorded: the USP <31> rule (titrant volume at "
                f"least {pct} of the capacity) was not checked",
            ),
        )
    if not _positive(capacity_ml):
        raise InvalidInput(f"burette capacity must be positive, not {capacity_ml}")
    floor = rules.min_burette_fraction * capacity_ml
    cap = f"{_g(capacity_ml)} mL burette"
    low = [(i, v) for i, v in volumes if v < floor]
    if low:
        fraction = Check(
            "burette-fraction",
            False,
            "fail",
            "; ".join(
                f"replicate {i} titrant volume {v:.2f} mL is below {pct} of the {cap} "
                f"({floor:.1f} mL), USP <31>"
                for i, v in low
            ),
        )
    else:
        fraction = Check(
            "burette-fraction",
            True,
            "fail",
            f"all {len(volumes)} titrant volumes are at least {pct} of the {cap} "
            f"({floor:.1f} mL), USP <31>",
        )
    over = [(i, v) for i, v in volumes if v > capacity_ml]
    capacity = Check(
        "burette-capacity",
        not over,
        "fail",
        "; ".join(f"replicate {i} titrant volume {v:.2f} mL exceeds the {cap}" for i, v in over)
        if over
        else f"all titrant volumes are within the {cap}",
    )
    return fraction, capacity


def _lot(expires: date, dried_on: date | None, run_date: date,
         entered_on: date | None = None) -> tuple[Check, ...]:
    # A lot is usable through its expiry date (common practice, no source). It is checked
    # when the work was done and when it was entered: a backdated entry cannot bring an
    # expired lot back into use.
    late = [d for d in (run_date, entered_on) if d is not None and d > expires]
    expiry = Check(
        "lot-expiry",
        not late,
        "fail",
        f"the primary-standard lot expired on {expires.isoformat()}, before "
        + (f"the run on {run_date.isoformat()}" if run_date in late
           else f"the run was entered on {late[0].isoformat()}")
        if late
        else f"the primary-standard lot is within expiry ({expires.isoformat()})",
    )
    if dried_on is None:
        dried = Check(
            "lot-dried",
            False,
            "warn",
            "no drying date is recorded for the primary-standard lot; dry it as the catalog "
            "says before use (common practice, no source)",
        )
    elif dried_on > run_date:
        dried = Check(
            "lot-dried",
            False,
            "warn",
            f"the lot's drying date {dried_on.isoformat()} is after the run on "
            f"{run_date.isoformat()}: it was not dried before this run "
            "(common practice, no source)",
        )
    else:
        dried = Check(
            "lot-dried",
            True,
            "warn",
            f"the primary-standard lot was dried on {dried_on.isoformat()}",
        )
    return expiry, dried


def _calibration(instruments: Sequence[tuple[str, str, date]], run_date: date,
                 entered_on: date | None = None) -> Check:
    # An instrument may be used on its due date itself (common practice, no source); it
    # is checked when the work was done and when it was entered (see ``_lot``).
    latest = max(run_date, entered_on) if entered_on is not None else run_date
    overdue = [(code, kind, due) for code, kind, due in instruments if due < latest]
    if overdue:
        return Check(
            "calibration",
            False,
            "fail",
            "; ".join(
                f"{kind} {code} calibration was due {due.isoformat()}, before "
                + (f"the run on {run_date.isoformat()}" if due < run_date
                   else f"the run was entered on {latest.isoformat()}")
                for code, kind, due in overdue
            ),
        )
    listed = ", ".join(f"{kind} {code} (due {due.isoformat()})" for code, kind, due in instruments)
    return Check("calibration", True, "fail", f"all instruments within calibration: {listed}")


def _required(required: Sequence[str], instruments: Sequence[tuple[str, str, date]]) -> Check:
    # Without the instrument named, its calibration, capacity and minimum weight cannot be
    # checked and the result cannot be traced to it: a failed check, not silence.
    named = {kind for _, kind, _ in instruments}
    missing = [kind for kind in required if kind not in named]
    wanted = " and ".join(required)
    if missing:
        return Check(
            "instruments",
            False,
            "fail",
            f"no {' and no '.join(missing)} named: the spec requires the {wanted} used, so "
            "their calibration can be checked and the result traced to them",
        )
    return Check("instruments", True, "fail", f"the {wanted} used are named, as the spec "
                 "requires")


def _outlier(index: int, excluded: Collection[int]) -> Check:
    state = "excluded with a recorded reason" if index in excluded else "kept in the mean"
    return Check(
        "outlier",
        False,
        "warn",
        f"replicate {index} is flagged as an outlier by Grubbs' test (ISO 5725-2) and is "
        f"{state}; exclude a replicate only with a recorded reason",
    )


def _indicator(name: str | None, ph: float, rng: tuple[float, float]) -> Check:
    low, high = rng
    if low > high:
        raise InvalidInput(f"indicator range {low}-{high} is not ordered")
    label = name or "the indicator"
    ok = low <= ph <= high
    return Check(
        "indicator",
        ok,
        "warn",
        f"{label} ({_g(low)}-{_g(high)}) covers the equivalence pH {ph:.2f}"
        if ok
        else f"{label} ({_g(low)}-{_g(high)}) does not cover the equivalence pH {ph:.2f}: "
        "the endpoint will not match the equivalence point",
    )


def check_standardization(
    rules: AcceptanceRules,
    *,
    replicate_count: int,
    rsd_percent: float | None,
    factor: float,
    volumes_ml: Sequence[float],
    run_date: date,
    masses_g: Sequence[float] | None = None,
    balance_readability_g: float | None = None,
    balance_repeatability_sd_g: float | None = None,
    balance_min_weight_g: float | None = None,
    burette_capacity_ml: float | None = None,
    lot_expires: date | None = None,
    lot_dried_on: date | None = None,
    instruments: Sequence[tuple[str, str, date]] = (),
    outlier_index: int | None = None,
    excluded: Collection[int] = (),
    indicator: str | None = None,
    equivalence_ph: float | None = None,
    indicator_range: tuple[float, float] | None = None,
    entered_on: date | None = None,
    required_instruments: Sequence[str] = (),
) -> tuple[Check, ...]:
    """All acceptance checks of one standardization run, in a fixed order.

    ``replicate_count`` and ``rsd_percent`` are of the included replicates. ``volumes_ml``
    (and ``masses_g`` for a direct standardization; None for a secondary one) are every
    replicate in order, 1-based in messages; the ``excluded`` positions are not checked.
    Checks that need data the caller does not have are handled so: no ``masses_g`` -> no
    minimum-weight check; masses but no balance data -> a "not checked" warning; no burette
    capacity -> a "not checked" warning; no ``lot_expires`` (no primary-standard lot, i.e.
    a secondary standardization) -> no lot checks; no ``instruments`` -> no calibration
    check; the indicator check runs only with both ``equivalence_ph`` and
    ``indicator_range``. ``instruments`` are (code, kind, calibration due date).
    ``entered_on`` (the day the run was entered, when not the day it was done): lot
    expiry and calibration are checked on both days. ``required_instruments`` are the
    kinds the spec requires (``balance``, ``burette``): one not among ``instruments`` is
    a failed check.
    """
    if isinstance(replicate_count, bool) or not isinstance(replicate_count, int):
        raise InvalidInput(f"replicate count must be a whole number, not {replicate_count!r}")
    if replicate_count < 0:
        raise InvalidInput(f"replicate count cannot be negative ({replicate_count})")
    if not _positive(factor):
        raise InvalidInput(f"factor must be a positive number, not {factor}")
    if masses_g is not None and len(masses_g) != len(volumes_ml):
        raise InvalidInput(
            f"{len(masses_g)} masses but {len(volumes_ml)} volumes: one of each per replicate"
        )
    for what, values in (("titrant volume", volumes_ml), ("mass", masses_g or ())):
        for i, v in enumerate(values, start=1):
            if not _positive(v):
                raise InvalidInput(f"replicate {i} {what} must be positive, not {v}")
    n_all = len(volumes_ml)
    for i in (*excluded, *(() if outlier_index is None else (outlier_index,))):
        if not 1 <= i <= n_all:
            raise InvalidInput(f"replicate {i} does not exist (there are {n_all})")

    kept_volumes = [(i, v) for i, v in enumerate(volumes_ml, start=1) if i not in excluded]
    checks: list[Check] = [
        _replicate_count(rules, replicate_count),
        _rsd(rules, replicate_count, rsd_percent),
        _factor(rules, factor),
    ]
    if masses_g is not None:
        kept_masses = [(i, m) for i, m in enumerate(masses_g, start=1) if i not in excluded]
        checks.append(
            _min_weight(
                kept_masses, balance_readability_g, balance_repeatability_sd_g, balance_min_weight_g
            )
        )
    checks.extend(_burette(rules, kept_volumes, burette_capacity_ml))
    if lot_expires is not None:
        checks.extend(_lot(lot_expires, lot_dried_on, run_date, entered_on))
    if required_instruments:
        checks.append(_required(required_instruments, instruments))
    if instruments:
        checks.append(_calibration(instruments, run_date, entered_on))
    if outlier_index is not None:
        checks.append(_outlier(outlier_index, excluded))
    if equivalence_ph is not None and indicator_range is not None:
        checks.append(_indicator(indicator, equivalence_ph, indicator_range))
    return tuple(checks)


def verdict(checks: Sequence[Check]) -> Literal["pass", "fail"]:
    """ "fail" if any check of severity "fail" did not pass; warnings never fail a run."""
    return "fail" if any(c.severity == "fail" and not c.passed for c in checks) else "pass"


def failures(checks: Sequence[Check]) -> tuple[Check, ...]:
    """The checks that did not pass, fails first, for a one-line refusal message."""
    bad = [c for c in checks if not c.passed]
    return tuple(sorted(bad, key=lambda c: c.severity != "fail"))
