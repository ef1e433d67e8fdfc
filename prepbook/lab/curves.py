"""The titration-curve calculations behind ``prepbook calc endpoint`` and ``calc eqpoint``.

Database-free, like ``prepbook.lab.calcs``: values as typed in, a frozen record whose
fields are the keys of the command's JSON out.
"""

from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING

import msgspec

from prepbook.errors import InvalidInput
from prepbook.inputs import parse_number

if TYPE_CHECKING:
    from prepbook.chem.indicators import IndicatorAdvice


class Endpoint(msgspec.Struct, frozen=True):
    """One inflection of the curve: its volume and standard uncertainty (mL), the reading
    there, the slope there (reading units per mL) and the points the cubic was fitted to."""

    index: int
    volume_ml: float
    u_ml: float
    reading: float
    slope: float
    points_fitted: int


class EndpointResult(msgspec.Struct, frozen=True):
    """``calc endpoint``: every inflection in ``endpoints``; ``equivalence_ml`` and
    ``u_ml`` are the last one's (the one Gran's estimate is compared with)."""

    equivalence_ml: float
    method: str
    kind: str
    reading_at_endpoint: float | None
    gran_ml: float | None
    gran_points: int
    points: int
    notes: tuple[str, ...]
    u_ml: float
    endpoints: tuple[Endpoint, ...]
    window_ml: tuple[float, float] | None
    smoothing_ml: float
    noise: float
    gran_agrees: bool | None
    gran_tolerance_ml: float | None
    volume_column: int
    reading_column: int
    preamble_lines: int


class EqpointResult(msgspec.Struct, frozen=True):
    """``calc eqpoint``: ``suitable`` and ``unsuitable`` judged by the titration error of
    each indicator (``indicators`` gives each one's error and reason)."""

    standard: str
    titrant: str
    reaction: str
    n_eq_per_mol: float
    concentration_mol_per_l: float
    ph: float
    suitable: tuple[str, ...]
    unsuitable: tuple[str, ...]
    titrant_concentration_mol_per_l: float
    sample_concentration_mol_per_l: float
    co2_removed: bool
    tolerance_percent: float
    indicators: tuple[IndicatorAdvice, ...]
    notes: tuple[str, ...]


METHOD = "inflection: cubic fit around each peak of a Savitzky-Golay derivative"


def _volume_window(volumes: tuple[float, ...], from_text: str | None, to_text: str | None,
                   between_text: str | None) -> tuple[float, float] | None:
    """The volume window asked for: ``--from``/``--to`` (either may be left open, the
    curve's first or last volume then), or ``--between LOW:HIGH``; None for the whole."""
    if between_text is not None:
        if from_text is not None or to_text is not None:
            raise InvalidInput("give the volume window either as --from/--to or as --between, "
                               "not both")
        from_text, sep, to_text = between_text.partition(":")
        if not sep:
            raise InvalidInput("--between should be LOW:HIGH in mL, e.g. 5:15")
    if from_text is None and to_text is None:
        return None
    low = (parse_number(from_text, "window from (mL)", non_negative=True).value
           if from_text is not None else volumes[0])
    high = (parse_number(to_text, "window to (mL)", positive=True).value
            if to_text is not None else volumes[-1])
    if low >= high:
        raise InvalidInput(f"volume window: from {low:g} mL must be below to {high:g} mL")
    return low, high


def endpoint(path: str | Path, *, sample_ml_text: str | None = None,
             from_text: str | None = None, to_text: str | None = None,
             between_text: str | None = None,
             smoothing_text: str | None = None) -> EndpointResult:
    """Every inflection of the curve in a meter's export (``read_curve_file``), each
    with its uncertainty, within a volume window if one is given, and Gran's estimate
    beside the last one with whether the two agree."""
    from prepbook.chem.curve_files import read_curve_file
    from prepbook.chem.inflections import find_endpoints

    sample = (parse_number(sample_ml_text, "sample volume (mL)", positive=True).value
              if sample_ml_text is not None else None)
    smoothing = (parse_number(smoothing_text, "smoothing span (mL)", positive=True).value
                 if smoothing_text is not None else None)
    curve = read_curve_file(path)
    window = _volume_window(curve.volumes_ml, from_text, to_text, between_text)
    report = find_endpoints(curve.volumes_ml, curve.readings, kind=curve.kind,
                            window_ml=window, smoothing_ml=smoothing, sample_ml=sample)
    found = tuple(Endpoint(index=i, volume_ml=f.volume_ml, u_ml=f.u_ml, reading=f.reading,
                           slope=f.slope, points_fitted=f.points_fitted)
                  for i, f in enumerate(report.inflections, start=1))
    last = found[-1]
    notes = report.notes
    if curve.preamble_lines:
        notes = (f"{curve.preamble_lines} preamble line(s) above the header skipped",
                 *notes)
    return EndpointResult(
        equivalence_ml=last.volume_ml, method=METHOD, kind=report.kind,
        reading_at_endpoint=last.reading, gran_ml=report.gran_ml,
        gran_points=report.gran_points, points=report.points, notes=notes,
        u_ml=last.u_ml, endpoints=found, window_ml=report.window_ml,
        smoothing_ml=report.smoothing_ml, noise=report.noise, gran_agrees=report.gran_agrees,
        gran_tolerance_ml=report.gran_tolerance_ml, volume_column=curve.volume_column,
        reading_column=curve.reading_column, preamble_lines=curve.preamble_lines,
    )


SAMPLE_ML = 50.0
"""Sample volume the titration is modelled with: errors in % of the equivalence volume
do not depend on it, only on the concentrations."""


def eqpoint(*, standard: str, titrant: str, concentration_text: str,
            titrant_concentration_text: str | None = None, co2_removed: bool = False,
            tolerance_text: str | None = None, reaction: str | None = None) -> EqpointResult:
    """The equivalence pH of a standard with a titrant at the stated concentration (of
    the product at equivalence), and each catalog indicator judged by the titration
    error it would cause (``prepbook.chem.indicators``), optionally with the carbon
    dioxide boiled off near the end."""
    from prepbook.catalog import loader
    from prepbook.chem import equilibria, indicators
    from prepbook.lab.equilibrium_calcs import standard_system
    from prepbook.rules.evaluation import reactions_for

    std = loader.find_material(standard)
    tit = loader.find_material(titrant)
    std_rx, _ = reactions_for(std, tit, reaction)
    system = standard_system(std, tit, std_rx)  # any catalog pair the aqueous model takes
    conc = parse_number(concentration_text, "concentration (mol/L)", positive=True).value
    k = system.protons
    notes: list[str] = list(system.notes)
    if titrant_concentration_text is None:
        # Sample volume equal to the equivalence volume: c_t = 2 k C, c_s = 2 C.
        c_titrant = 2.0 * k * conc
        notes.append(f"titrant taken as {c_titrant:g} mol/L (the sample's volume equal to "
                     "the equivalence volume); give --titrant-concentration to change it")
    else:
        c_titrant = parse_number(titrant_concentration_text, "titrant concentration (mol/L)",
                                 positive=True).value
        if k * conc >= c_titrant:
            raise InvalidInput(f"at {conc:g} mol/L at equivalence the titrant must be stronger "
                               f"than {k * conc:g} mol/L ({k} x the concentration)")
    # C = c_s V0 / (V0 + Ve) with Ve = k c_s V0 / c_t, solved for c_s.
    c_sample = conc / (1.0 - k * conc / c_titrant)
    tolerance = (parse_number(tolerance_text, "tolerance (%)", positive=True).value
                 if tolerance_text is not None else indicators.DEFAULT_TOLERANCE_PERCENT)
    titration = indicators.Titration(
        pkas=system.pkas, sample_mol_per_l=c_sample, sample_ml=SAMPLE_ML,
        titrant_mol_per_l=c_titrant, initial_protons=system.initial_protons,
        protons_transferred=k, titrant_is_base=system.is_acid,
        units_per_formula=system.units_per_formula, co2_removed=co2_removed)
    if co2_removed:
        ph = equilibria.PKW_25C / 2.0  # the sample acts as a strong base once CO2 is gone
        notes.append("carbon dioxide boiled off near the endpoint: the sample counts as "
                     "its equivalents of strong base")
    else:
        ph = equilibria.equivalence_ph(system.pkas, k, conc, system.is_acid,
                                      initial_protons=system.initial_protons,
                                      units_per_formula=system.units_per_formula)
    table = [(i.name, i.low_ph, i.high_ph) for i in loader.indicators()
             if i.low_ph is not None and i.high_ph is not None]
    advice = indicators.indicator_advice(titration, table, tolerance_percent=tolerance)
    return EqpointResult(standard=std.code, titrant=tit.code, reaction=std_rx.name,
                         n_eq_per_mol=std_rx.n, concentration_mol_per_l=conc, ph=ph,
                         suitable=tuple(a.name for a in advice if a.suitable),
                         unsuitable=tuple(a.name for a in advice if not a.suitable),
                         titrant_concentration_mol_per_l=c_titrant,
                         sample_concentration_mol_per_l=c_sample, co2_removed=co2_removed,
                         tolerance_percent=tolerance, indicators=advice, notes=tuple(notes))
