"""The titration-curve calculations behind ``prepbook calc endpoint`` and ``calc eqpoint``.

Database-free, like ``prepbook.lab.calcs``: values as typed in, a frozen dataclass whose
fields are the keys of the command's JSON out.
"""

from __future__ import annotations

from dataclasses import dataclass

from prepbook.errors import InvalidInput
from prepbook.inputs import parse_number


@dataclass(frozen=True)
class EndpointResult:
    equivalence_ml: float
    method: str
    kind: str
    reading_at_endpoint: float | None
    gran_ml: float | None
    gran_points: int
    points: int
    notes: tuple[str, ...]


@dataclass(frozen=True)
class EqpointResult:
    standard: str
    titrant: str
    reaction: str
    n_eq_per_mol: float
    concentration_mol_per_l: float
    ph: float
    suitable: tuple[str, ...]
    unsuitable: tuple[str, ...]


def endpoint(csv_text: str, *, sample_ml_text: str | None = None,
             between_text: str | None = None) -> EndpointResult:
    from prepbook.chem import curves

    sample = (parse_number(sample_ml_text, "sample volume (mL)", positive=True).value
              if sample_ml_text is not None else None)
    window = None
    if between_text is not None:
        lo_text, sep, hi_text = between_text.partition(":")
        if not sep:
            raise InvalidInput("--between should be LOW:HIGH in mL, e.g. 5:15")
        lo = parse_number(lo_text, "--between low (mL)", non_negative=True).value
        hi = parse_number(hi_text, "--between high (mL)", positive=True).value
        if lo >= hi:
            raise InvalidInput("--between: the low volume must be below the high one")
        window = (lo, hi)
    volumes, readings, kind = curves.read_curve_csv(csv_text)
    ep = curves.endpoint(volumes, readings, kind=kind, sample_ml=sample, search_ml=window)
    return EndpointResult(equivalence_ml=ep.equivalence_ml, method=ep.method, kind=kind,
                          reading_at_endpoint=ep.reading_at_endpoint, gran_ml=ep.gran_ml,
                          gran_points=ep.gran_points, points=ep.points, notes=tuple(ep.notes))


def eqpoint(*, standard: str, titrant: str, concentration_text: str) -> EqpointResult:
    from prepbook.catalog import loader
    from prepbook.chem import equilibria

    std = loader.find_material(standard)
    tit = loader.find_material(titrant)
    std_rx, _ = loader.reaction_for_pair(std, tit)
    if std_rx.kind != "acid-base" or not std.pka:
        raise InvalidInput(f"{std.name} with {tit.name} is not an acid-base titration with "
                           "known pKa values; no equivalence pH to compute")
    conc = parse_number(concentration_text, "concentration (mol/L)", positive=True).value
    ph = equilibria.equivalence_ph_for(std, std_rx, conc)
    table = [(i.name, i.low_ph, i.high_ph) for i in loader.indicators()
             if i.low_ph is not None and i.high_ph is not None]
    suitable, unsuitable = equilibria.indicator_fit(ph, table)
    return EqpointResult(standard=std.code, titrant=tit.code, reaction=std_rx.name,
                         n_eq_per_mol=std_rx.n, concentration_mol_per_l=conc, ph=ph,
                         suitable=tuple(suitable), unsuitable=tuple(unsuitable))
