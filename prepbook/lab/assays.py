"""Assays: a sample titrated with a batch in service, recorded with its result.

``assay`` takes the batch's accepted normality (its latest accepted standardization,
at 20 C, brought to the temperature of use), computes the sample's result with the
chemistry core (``prepbook.chem.sample``; never a second formula here), and records
the assay, its replicates and the draw of titrant as a use of the batch, in one
transaction. Nothing recorded is ever rewritten: what a later correction or drift of
the titrant does to the result is computed on reading (``prepbook.lab.impact``).
"""

from __future__ import annotations

import json
from datetime import datetime
from decimal import Decimal
from typing import TYPE_CHECKING, Any, cast

import msgspec
from sqlalchemy import select
from sqlalchemy.orm import Session, selectinload

from prepbook.clock import local_date
from prepbook.errors import InvalidInput, Refused
from prepbook.inputs import Reading, parse_number, parse_text, utc_now
from prepbook.lab import impact as impact_rules
from prepbook.lab import specs as spec_view
from prepbook.lab.batch_facts import when
from prepbook.lab.common import acting, by_code, lab_time, lab_zone, work_time, write
from prepbook.lab.volumes import draw
from prepbook.records import as_data
from prepbook.store import retry
from prepbook.store.engine import Database
from prepbook.store.models import Assay, AssayReplicate, Batch, Run, Use

if TYPE_CHECKING:
    from prepbook.lab.sample_calcs import SampleCalc


class SampleInputs(msgspec.Struct, frozen=True):
    """Everything a sample's result is computed from, as typed, except the titrant's
    normality: kept so that the result can be recomputed with another normality
    (``impact``)."""

    analyte: str
    reaction: str | None
    titrant: str
    aliquot_ml: str | None
    mass_g: str | None
    volumes_ml: tuple[str, ...]
    blank_ml: str


class Limit(msgspec.Struct, frozen=True):
    """A sample's specification limit, in the unit of its reported result."""

    low: float | None
    high: float | None

    def side(self, value: float) -> int:
        """-1 below the limit, 0 within, 1 above."""
        if self.low is not None and value < self.low:
            return -1
        if self.high is not None and value > self.high:
            return 1
        return 0


def compute(inputs: SampleInputs, normality: float, normality_u: float | None
            ) -> SampleCalc:
    """The sample's result with this titrant normality (eq/L) and its standard
    uncertainty, by the same path as `prepbook calc sample` (``lab.sample_calcs``)."""
    from prepbook.catalog import samples
    from prepbook.chem.uncertainty import COVERAGE_FACTOR
    from prepbook.lab import sample_calcs

    way = samples.analyte_titration(inputs.analyte, inputs.titrant, inputs.reaction)
    if way.excess_reagent is not None:
        raise InvalidInput(f"{way.analyte.name} by {way.method.name} is a back-titration; "
                           "an assay records direct titrations only")
    # Passed as text, as typed values are: repr() gives the float back exactly.
    return sample_calcs.sample(
        analyte=inputs.analyte, titrant=inputs.titrant, method=inputs.reaction,
        volumes=list(inputs.volumes_ml), normality=repr(normality),
        normality_u=None if normality_u is None else repr(normality_u * COVERAGE_FACTOR),
        aliquot=[inputs.aliquot_ml] if inputs.aliquot_ml is not None else None,
        mass=[inputs.mass_g] if inputs.mass_g is not None else None,
        blank_ml=inputs.blank_ml)


def reported(calc: SampleCalc) -> tuple[float, str]:
    """The value a sample's result is reported as, and its unit: the mass fraction (%) of
    a weighed sample, else the mass concentration."""
    if calc.mass_fraction_percent is not None:
        return calc.mass_fraction_percent, "%"
    assert calc.concentration is not None
    return calc.concentration.value, calc.concentration.unit


class AssayResult(msgspec.Struct, frozen=True):
    """An assay just recorded (or computed without recording: ``assay`` is None)."""

    assay: str | None
    batch: str
    sample: str
    run: str
    titrant_normality: float  # eq/L at the temperature of use
    temperature_c: float
    result: float
    unit: str
    limit_low: float | None
    limit_high: float | None
    within_limit: bool | None
    performed_at: str
    analyst: str
    computed: SampleCalc  # what `calc sample` gives for the same sample and titrant

    def to_json(self) -> dict[str, Any]:
        """`calc sample`'s keys (``titrant_normality`` among them: at the temperature of
        use), then the assay's own."""
        calc = msgspec.structs.asdict(self.computed)
        return {**calc, "assay": self.assay, "batch": self.batch,
                "sample": self.sample, "run": self.run, "temperature_c": self.temperature_c,
                "result": self.result, "unit": self.unit,
                "limit_low": self.limit_low, "limit_high": self.limit_high,
                "within_limit": self.within_limit, "performed_at": self.performed_at,
                "analyst": self.analyst}


def parse_limit(text: str | None) -> tuple[Reading | None, Reading | None]:
    """``LOW:HIGH``, ``LOW:`` or ``:HIGH`` (in the unit of the reported result)."""
    if text is None:
        return None, None
    low_text, sep, high_text = text.partition(":")
    if not sep or not (low_text.strip() or high_text.strip()):
        raise InvalidInput(f"--limit {text!r} should be LOW:HIGH, LOW: or :HIGH")
    low = parse_number(low_text.strip(), "lower limit", non_negative=True) \
        if low_text.strip() else None
    high = parse_number(high_text.strip(), "upper limit", positive=True) \
        if high_text.strip() else None
    if low is not None and high is not None and low.value >= high.value:
        raise InvalidInput(f"the lower limit {low.text} must be below the upper limit "
                           f"{high.text}")
    return low, high


def normality_in_use(run: Run, temperature_c: float) -> tuple[float, float | None]:
    """A run's normality (at 20 C) brought to the temperature of use, and its standard
    uncertainty scaled with it (as the labels and the board read the run: at 20 C)."""
    from prepbook.chem.corrections import normality_at_temperature
    from prepbook.lab.preparing import spec_expansion

    assert run.normality_20c is not None, "an accepted run has a normality"
    expansion = spec_expansion(spec_view.view(run.batch.spec).data)
    n = normality_at_temperature(run.normality_20c, 20.0, temperature_c, expansion)
    u = run.u * n / run.normality if run.u is not None and run.normality else None
    return n, u


def inputs_of(assay: Assay, titrant: str) -> SampleInputs:
    """The recorded sample, readings as typed."""
    return SampleInputs(
        analyte=assay.analyte, reaction=assay.reaction, titrant=titrant,
        aliquot_ml=assay.aliquot_ml_text, mass_g=assay.mass_g_text,
        volumes_ml=tuple(r.volume_ml_text for r in assay.replicates),
        blank_ml=assay.blank_ml_text)


@retry.on_conflict
def assay(db: Database, *, actor: str, batch: str, sample: str, analyte: str,
          replicates: list[str], aliquot: str | None = None, mass: str | None = None,
          reaction: str | None = None, blank: str | None = None,
          temperature: str | None = None, limit: str | None = None, at: str | None = None,
          late_reason: str | None = None, record: bool = True) -> AssayResult:
    """Titrate a sample with a batch in service and record the result (and the draw of
    titrant as a use of the batch). With ``record=False`` nothing is written: the result
    is computed as it would be recorded (the terminal's live result)."""
    from prepbook.lab import board

    sample_id = parse_text(sample, "sample ID", max_len=120)
    if not (sample_id and sample_id.strip()):
        raise InvalidInput("--sample needs the sample's ID")
    if (aliquot is None) == (mass is None):
        raise InvalidInput("give the sample as exactly one of --aliquot ML or --mass G")
    amount = parse_number(aliquot if aliquot is not None else cast(str, mass),
                          "sample aliquot (mL)" if aliquot is not None else "sample mass (g)",
                          positive=True)
    if not replicates:
        raise InvalidInput("at least one titration (--rep ML) is required")
    volumes = [parse_number(v, f"replicate {i} titrant volume (mL)", positive=True)
               for i, v in enumerate(replicates, start=1)]
    blank_r = parse_number(blank or "0", "blank (mL)", non_negative=True)
    for i, v in enumerate(volumes, start=1):
        if v.value <= blank_r.value:
            raise InvalidInput(f"replicate {i}: {v.text} mL is not more than the blank "
                               f"{blank_r.text} mL")
    temp = parse_number(temperature or "20", "temperature (C)")
    if not 0 <= temp.value <= 40:
        raise InvalidInput(f"temperature {temp.text} C is outside 0-40 C")
    low, high = parse_limit(limit)
    analyte = analyte.strip()
    if not analyte:
        raise InvalidInput("--analyte needs the analyte's name")
    late_reason = parse_text(late_reason, "reason", max_len=500)
    performed_at = work_time(db, at, "assay time", reason=late_reason)

    with db.session(write=record) as s:
        user = acting(s, actor, doing="record assays")
        b = by_code(s, Batch, batch, "batch")
        life = board.batch_life(s, b, performed_at.date())
        if life.state != "in-service":
            raise Refused(f"batch {b.code} is {life.state} and may not be used")
        if performed_at < b.made_at:
            raise InvalidInput("the assay cannot be before the batch was made")
        run = _run_in_force(s, b, performed_at)
        titrant = spec_view.view(b.spec).solute
        inputs = SampleInputs(
            analyte=analyte, reaction=reaction, titrant=titrant,
            aliquot_ml=amount.text if aliquot is not None else None,
            mass_g=amount.text if mass is not None else None,
            volumes_ml=tuple(v.text for v in volumes), blank_ml=blank_r.text)
        n_use, u_use = normality_in_use(run, temp.value)
        computed = compute(inputs, n_use, u_use)
        value, unit = reported(computed)
        lim = Limit(low.value if low else None, high.value if high else None)
        result = AssayResult(
            assay=None, batch=b.code, sample=sample_id, run=run.code, titrant_normality=n_use,
            temperature_c=temp.value, result=value, unit=unit, limit_low=lim.low,
            limit_high=lim.high,
            within_limit=None if low is None and high is None else lim.side(value) == 0,
            performed_at=when(performed_at), analyst=user.name,
            computed=computed)
        if not record:
            return result
        code = _next_code(s, performed_at)
        use = Use(batch_id=b.id, used_at=performed_at, used_by=user.name,
                  volume_ml_text=_total_text(volumes),
                  purpose=f"assay {code}: {analyte} in sample {sample_id}")
        draw(s, b, Decimal(use.volume_ml_text or "0"), "the assay's titrant")
        write(s, user.name, "batch.use", use, performed_at=performed_at, reason=late_reason)
        row = Assay(
            code=code, batch_id=b.id, run_id=run.id, use_id=use.id, sample=sample_id,
            analyte=analyte, reaction=reaction,
            aliquot_ml_text=amount.text if aliquot is not None else None,
            mass_g_text=amount.text if mass is not None else None,
            blank_ml_text=blank_r.text, temperature_c_text=temp.text,
            titrant_normality_20c=cast(float, run.normality_20c), titrant_normality=n_use,
            titrant_u=u_use, limit_low_text=low.text if low else None,
            limit_high_text=high.text if high else None, performed_at=performed_at,
            recorded_at=utc_now(), analyst=user.name, result=value, result_unit=unit,
            sd=computed.sd, rsd_percent=computed.rsd_percent, u=computed.u, U=computed.U,
            k=computed.k,
            result_json=json.dumps(as_data(computed), sort_keys=True))
        write(s, user.name, "assay.record", row, performed_at=performed_at, reason=late_reason)
        for pos, v in enumerate(volumes, start=1):
            write(s, user.name, "assay.replicate", AssayReplicate(
                assay_id=row.id, position=pos, volume_ml_text=v.text),
                performed_at=performed_at)
        return msgspec.structs.replace(result, assay=code)


def _run_in_force(s: Session, batch: Batch, at: datetime) -> Run:
    """The batch's latest accepted standardization made before ``at`` (an assay typed in
    later takes the value that was in force when it was titrated)."""
    run = s.scalars(select(Run).where(Run.batch_id == batch.id, Run.status == "accepted",
                                      Run.performed_at <= at)
                    .order_by(Run.performed_at.desc(), Run.id.desc()).limit(1)).first()
    if run is None or run.normality_20c is None:
        raise Refused(f"batch {batch.code} had no accepted standardization before "
                      f"{lab_time(s, at)}")
    return run


def _total_text(volumes: list[Reading]) -> str:
    """The titrant drawn for all the replicates, mL (the sum of the readings, for the
    batch's remaining volume)."""
    return format(sum(v.value for v in volumes), ".10g")


def _next_code(s: Session, performed_at: datetime) -> str:
    from prepbook.lab.batches import next_code

    return next_code(s, cast(Any, Assay), f"A{local_date(performed_at, lab_zone(s)):%y%m%d}")


class AssayRow(msgspec.Struct, frozen=True):
    """One recorded assay of a batch (``batch show``, ``trace``, the report)."""

    assay: str
    sample: str
    analyte: str
    run: str
    performed_at: str
    analyst: str
    aliquot_ml: str | None
    mass_g: str | None
    volumes_ml: tuple[str, ...]
    blank_ml: str
    temperature_c: str
    titrant_normality: float
    result: float
    unit: str
    U: float | None
    k: float | None
    limit_low: str | None
    limit_high: str | None


def assay_rows(s: Session, batch: Batch) -> tuple[AssayRow, ...]:
    """The assays of a batch, oldest first (inside a service's session)."""
    rows = s.scalars(select(Assay).where(Assay.batch_id == batch.id)
                     .order_by(Assay.performed_at, Assay.id)).all()
    return tuple(AssayRow(
        assay=a.code, sample=a.sample, analyte=a.analyte, run=a.run.code,
        performed_at=when(a.performed_at), analyst=a.analyst, aliquot_ml=a.aliquot_ml_text,
        mass_g=a.mass_g_text, volumes_ml=tuple(r.volume_ml_text for r in a.replicates),
        blank_ml=a.blank_ml_text, temperature_c=a.temperature_c_text,
        titrant_normality=a.titrant_normality, result=a.result, unit=a.result_unit, U=a.U,
        k=a.k, limit_low=a.limit_low_text, limit_high=a.limit_high_text) for a in rows)


def assays_of(db: Database, code: str) -> tuple[AssayRow, ...]:
    """The assays made with a batch, oldest first."""
    with db.session(write=False) as s:
        return assay_rows(s, by_code(s, Batch, code, "batch"))


class ImpactedAssay(msgspec.Struct, frozen=True):
    """One assay result and what the titrant's changed value does to it."""

    assay: str
    sample: str
    batch: str
    run: str
    performed_at: str
    unit: str
    before: float
    after: float | None  # a corrected value: exact
    after_low: float | None  # a range: the titrant's true value at use is unknown
    after_high: float | None
    change_percent: float | None  # the largest change, signed
    crosses_limit: bool | None  # None when the sample has no limit
    limit_low: str | None
    limit_high: str | None
    kind: str
    reason: str



def _quantified(s: Session, a: Assay, f: impact_rules.Finding, titrant: str) -> ImpactedAssay:
    """Recompute the assay with the finding's normalities (nothing is written)."""
    results = []
    for run_fact in f.runs:
        run = s.get(Run, run_fact.key)
        assert run is not None
        n, u = normality_in_use(run, float(a.temperature_c_text))
        results.append(reported(compute(inputs_of(a, titrant), n, u))[0])
    before = a.result
    limit = Limit(float(a.limit_low_text) if a.limit_low_text else None,
                  float(a.limit_high_text) if a.limit_high_text else None)
    change = max((100 * (x - before) / before for x in results), key=abs, default=None)
    crosses = (None if limit.low is None and limit.high is None or not results
               else any(limit.side(x) != limit.side(before) for x in results))
    exact = f.kind == "corrected"
    return ImpactedAssay(
        assay=a.code, sample=a.sample, batch=a.batch.code, run=a.run.code,
        performed_at=when(a.performed_at), unit=a.result_unit, before=before,
        after=results[0] if exact else None,
        after_low=min(results) if results and not exact else None,
        after_high=max(results) if results and not exact else None,
        change_percent=change, crosses_limit=crosses, limit_low=a.limit_low_text,
        limit_high=a.limit_high_text, kind=f.kind, reason=f.reason)


def impacted(s: Session, batch: Batch) -> tuple[ImpactedAssay, ...]:
    """The impacted assays of one batch, quantified (inside a service's session)."""
    view = spec_view.view(batch.spec)
    runs, assays = impact_rules.facts(s, [batch.id])
    found = impact_rules.findings(runs.get(batch.id, []), assays.get(batch.id, []),
                     view.drift_limit_percent)
    rows = {a.id: a for a in s.scalars(select(Assay).where(Assay.id.in_([f.assay for f in found]))
                                       .options(selectinload(Assay.replicates)))}
    return tuple(_quantified(s, rows[f.assay], f, view.solute) for f in found)


def impact(db: Database, code: str) -> tuple[ImpactedAssay, ...]:
    """Every assay result of a batch that its titrant's changed value puts in question."""
    with db.session(write=False) as s:
        return impacted(s, by_code(s, Batch, code, "batch"))
