"""What a bottle label shows: the content the label service reads from the record
and the drawing code prints.

A plain module (no database, no drawing) so that both sides can import it. The
fields are the keys of the ``shown_json`` a label print keeps in the record.
"""

from __future__ import annotations

from typing import Literal, TypedDict

import msgspec


class Hazard(TypedDict, total=False):
    """GHS hazard words as the catalog gives them (a lot without a hazard has none)."""

    signal_word: str | None
    statements: list[str] | None
    pictograms: list[str] | None


class Standing(msgspec.Struct, frozen=True):
    """A batch's state, accepted result and dates on a day, as its label shows them."""

    state: str
    run: str | None
    normality: float | None
    factor: float | None
    concentration: float | None
    standardized_on: str | None  # the lab's date of the accepted run
    standardized_by: str | None  # who recorded the accepted run
    reviewed_by: str | None  # who accepted it on review (None: accepted without one)
    restandardize_by: str | None
    expires: str | None


class BatchLabel(Standing, frozen=True):
    """The label of a titrant bottle: its strength, dates and state when printed."""

    code: str
    spec: str
    name: str
    unit: str
    nominal: float
    made_on: str
    made_by: str
    storage: str | None
    hazard: Hazard
    printed_on: str
    printed_by: str
    kind: Literal["batch"] = "batch"
    checkpoint: str | None = None  # the audit trail's code when printed


class LotLabel(msgspec.Struct, frozen=True):
    """The label of a primary-standard lot: purity, certificate and dates."""

    code: str
    name: str
    material: str
    formula: str
    purity_percent: str
    purity_u_percent: str | None
    certificate: str | None
    opened_on: str | None
    dried_on: str | None
    drying: str | None
    expires: str
    expired: bool
    hazard: Hazard
    printed_on: str
    printed_by: str
    kind: Literal["lot"] = "lot"
    checkpoint: str | None = None  # the audit trail's code when printed


LabelContent = BatchLabel | LotLabel
