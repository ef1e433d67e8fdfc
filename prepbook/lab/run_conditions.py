"""What a standardization run is computed from, besides its replicates.

``_Conditions`` holds a run's records (the spec, the instruments, the reference, the
validated repeatability and the reaction named); ``standardization`` turns them, with the
lab's settings, into the terms of the one evaluation (``prepbook.rules.evaluation``).
Shared by recording a run and recomputing it after a correction (``lab.runs``).
"""

from __future__ import annotations

import math
from datetime import datetime

import msgspec
from sqlalchemy.orm import Session

from prepbook.inputs import Reading, ReplicateEntry, utc_now
from prepbook.lab import replicate_sources as sources
from prepbook.lab import specs as spec_view
from prepbook.lab.calcs import readings_of
from prepbook.lab.common import setting
from prepbook.lab.preparing import spec_expansion
from prepbook.rules import evaluation as ev
from prepbook.rules import plausibility as plaus
from prepbook.store.models import Batch, Instrument, Lot


def _float(text: str | None) -> float | None:
    return float(text) if text is not None else None


class Conditions(msgspec.Struct, frozen=True):
    """Everything a run is computed from, except its replicates."""

    batch: Batch
    view: spec_view.SpecView
    performed_at: datetime
    temperature: Reading
    blank: Reading
    indicator: str | None
    lot: Lot | None = None
    balance: Instrument | None = None
    burette: Instrument | None = None
    reference: ev.Reference | None = None  # secondary: the reference used, as recorded
    entered_at: datetime | None = None  # when the run was entered (recorded_at)
    repeatability: Reading | None = None  # a validated RSD (%) given for this run
    reaction: str | None = None  # the standard's reaction, as named for this run

    @property
    def secondary(self) -> bool:
        return self.reference is not None


# The instruments a standardization must name unless its spec says otherwise (a spec's
# "required_instruments" list): what its calibration and capacity checks need.
REQUIRED_INSTRUMENTS = {"direct": ("balance", "burette"), "secondary": ("burette",)}
# A run entered without a temperature is computed at the reference temperature, and says so.
REFERENCE_TEMPERATURE_C = "20"
NO_TEMPERATURE_NOTE = ("no temperature given: computed at the reference temperature 20 C "
                       "(European Pharmacopoeia 4.2.2: prepared, standardized and used at "
                       "20 C); give --temp C as measured")


def required_instruments(view: spec_view.SpecView, secondary: bool) -> tuple[str, ...]:
    """The instrument kinds a run of this spec must name (the spec's, else the default)."""
    own = view.data.get("required_instruments")
    if isinstance(own, list) and all(isinstance(k, str) for k in own):
        return tuple(own)
    return REQUIRED_INSTRUMENTS["secondary" if secondary else "direct"]


def plausible_readings(entries: list[ReplicateEntry], *, secondary: bool,
                       burette: Instrument | None,
                       first: int = 1) -> tuple[str, ...]:
    """Refuse replicates that cannot be right (``rules.plausibility``); the warnings."""
    readings = [plaus.Replicate(position=i, amount=e.amount.value, volume_ml=e.volume.value,
                                amount_text=e.amount.text, volume_text=e.volume.text)
                for i, e in enumerate(entries, start=first)]
    capacity = _float(burette.capacity_text) if burette is not None else None
    return plaus.replicates(readings, weighed=not secondary, burette_capacity_ml=capacity)


def _setting_number(session: Session, key: str, default: float) -> float:
    try:
        return float(setting(session, key, str(default)))
    except ValueError:
        return default


def standardization(s: Session, c: Conditions, entries: list[ReplicateEntry],
                     excluded: frozenset[int]) -> ev.Standardization:
    """A run's records and the lab's settings, in the terms of the one evaluation."""
    view, lot, balance, burette = c.view, c.lot, c.balance, c.burette
    weighed = None
    if lot is not None:
        weighed = ev.Weighed(
            material=lot.material_code, purity_fraction=float(lot.purity_text) / 100,
            u_purity_fraction=float(lot.purity_u_text) / 100 / math.sqrt(3)
            if lot.purity_u_text else None)
    rules = msgspec.structs.replace(view.rules(), min_burette_fraction=_setting_number(
        s, "min_burette_fraction_percent", 30.0) / 100)
    rsd, rsd_from = validated_repeatability(c)
    return ev.Standardization(
        readings=readings_of(entries),
        titrant=view.solute,
        standard=weighed,
        reference=c.reference,
        titrant_reaction=view.reaction,
        blank_ml=c.blank.value,
        blank_text=c.blank.text,
        temperature_c=c.temperature.value,
        temperature_range_c=_setting_number(s, "temperature_range_c", 3.0),
        excluded=excluded,
        buoyancy="if-known" if setting(s, "buoyancy", "off") == "on" else "off",
        balance_linearity_g=(_float(balance.tolerance_text) or _float(balance.readability_text))
        if balance is not None else None,
        burette_tolerance_ml=_float(burette.tolerance_text) if burette else None,
        burette_capacity_ml=_float(burette.capacity_text) if burette else None,
        burette=burette.code if burette else None,
        judgement=ev.Judgement(
            rules=rules, nominal=view.nominal, unit=view.unit, run_date=c.performed_at.date(),
            lot_expires=lot.expires if lot else None,
            lot_dried_on=lot.dried_on if lot else None,
            instruments=tuple((i.code, i.kind, i.due) for i in (balance, burette)
                              if i is not None),
            balance_readability_g=_float(balance.readability_text) if balance else None,
            indicator=c.indicator or view.indicator, curves=sources.evidence(s, entries),
            entered_on=(c.entered_at or utc_now()).date(),
            required_instruments=required_instruments(view, c.secondary)),
        u_rel_repeatability=None if rsd is None else rsd / 100,
        repeatability_from=rsd_from,
        reaction=c.reaction,
        expansion=spec_expansion(view.data),
    )


def validated_repeatability(c: Conditions) -> tuple[float | None, ev.RepeatabilitySource]:
    """The validated repeatability (RSD %) of a run: the one given for it, else its
    spec's ``repeatability_rsd_percent``, else None (the replicates' scatter)."""
    if c.repeatability is not None:
        return c.repeatability.value, "given"
    own = c.view.data.get("repeatability_rsd_percent")
    if isinstance(own, (int, float)) and not isinstance(own, bool) and math.isfinite(own) \
            and own >= 0:
        return float(own), "spec"
    return None, "given"
