"""The database-free calculations behind ``prepbook calc``.

Each function takes the values as typed (strings), looks materials up in the
built-in catalog, calls the chemistry core and returns plain, JSON-ready data.
No SQLAlchemy here: ``prepbook calc`` must start fast.
"""

from __future__ import annotations

import math
from typing import Any

from prepbook.errors import InvalidInput, NotFound
from prepbook.inputs import parse_number, parse_percent, parse_replicates

# EURACHEM/CITAC CG4 Example A2 takes a certificate purity of 1.0000 +/- 0.0005 as a
# rectangular distribution; used when the user gives no purity uncertainty.
DEFAULT_PURITY_HALF_WIDTH = 0.0005
# Ph. Eur. 4.2.2: a volumetric solution's repeatability (RSD) not over 0.2 %.
RSD_LIMIT_PERCENT = 0.2
MIN_REPLICATES = 3  # common practice, no source
BURETTE_FRACTION = 0.30  # USP <31>


def _budget(unc: Any) -> list[dict[str, Any]]:
    return [
        {
            "quantity": line.quantity,
            "symbol": line.symbol,
            "value": line.value,
            "unit": line.unit,
            "u": line.u,
            "u_relative": line.u_relative,
            "contribution": line.contribution,
            "share_percent": line.share_percent,
        }
        for line in unc.budget
    ]


def _stat_warnings(result: Any, unit_warning_context: str = "") -> list[str]:
    warnings: list[str] = []
    stats = result.stats
    if stats.outlier is not None:
        o = stats.outlier
        warnings.append(
            f"replicate {o.index} ({o.value:.5f}) is flagged as an outlier by {o.test}'s test "
            f"(G = {o.statistic:.3f} > {o.critical:.3f} at 95 %); it is kept in the mean"
        )
    if stats.n < MIN_REPLICATES:
        warnings.append(
            f"only {stats.n} replicate(s); at least {MIN_REPLICATES} are usual (common practice)"
        )
    if stats.rsd_percent is not None and stats.rsd_percent > RSD_LIMIT_PERCENT:
        warnings.append(
            f"RSD {stats.rsd_percent:.3f} % is above {RSD_LIMIT_PERCENT} % (Ph. Eur. 4.2.2)"
        )
    return warnings


def _replicate_rows(result: Any, entries: list[Any], amount_key: str) -> list[dict[str, Any]]:
    rows = []
    for rep, entry in zip(result.replicates, entries, strict=True):
        rows.append(
            {
                "index": rep.index,
                amount_key: entry.amount.text,
                "volume_ml": entry.volume.text,
                "normality": rep.normality,
                "true_mass_g": getattr(rep, "true_mass_g", None),
                "outlier": rep.outlier,
                "excluded": rep.excluded,
            }
        )
    return rows


def normality(
    *,
    standard: str,
    replicates: list[str],
    titrant: str | None = None,
    purity_percent: str = "100",
    purity_u_percent: str | None = None,
    blank_ml: str = "0",
    buoyancy: bool = False,
    linearity_mg: str = "0.15",
    burette_tolerance_ml: str = "0.05",
    burette_capacity_ml: str | None = None,
    temperature_range_c: str = "3",
) -> dict[str, Any]:
    from prepbook.catalog import loader
    from prepbook.chem import formula
    from prepbook.chem import standardization as st

    std_mat = loader.find_material(standard)
    tit_mat = loader.find_material(titrant) if titrant else None
    std_rx, tit_rx = loader.reaction_for_pair(std_mat, tit_mat)
    purity = parse_percent(purity_percent, "purity").value / 100
    if purity_u_percent is None:
        u_purity = DEFAULT_PURITY_HALF_WIDTH / math.sqrt(3)
    else:
        u_purity = parse_number(purity_u_percent, "purity uncertainty", non_negative=True).value
        u_purity /= 100
    blank = parse_number(blank_ml, "blank (mL)", non_negative=True).value
    entries = parse_replicates(replicates)
    linearity_g = parse_number(linearity_mg, "balance linearity (mg)", non_negative=True).value
    linearity_g /= 1000
    tol = parse_number(burette_tolerance_ml, "burette tolerance (mL)", non_negative=True).value
    t_range = parse_number(temperature_range_c, "temperature range (C)", non_negative=True).value
    capacity = (
        parse_number(burette_capacity_ml, "burette capacity (mL)", positive=True).value
        if burette_capacity_ml is not None
        else None
    )

    mm = formula.molar_mass(std_mat.formula)
    if buoyancy and std_mat.density_g_per_cm3 is None:
        raise InvalidInput(f"no density is known for {std_mat.name}; cannot correct for buoyancy")
    ps = st.PrimaryStandard(
        name=std_mat.name,
        molar_mass_g_per_mol=mm.value_g_per_mol,
        u_molar_mass_g_per_mol=mm.u_g_per_mol,
        n_eq_per_mol=std_rx.n,
        purity_fraction=purity,
        u_purity_fraction=u_purity,
        density_g_per_cm3=std_mat.density_g_per_cm3,
    )
    pairs = [(e.amount.value, e.volume.value) for e in entries]
    mean_volume = sum(v for _, v in pairs) / len(pairs)
    uinputs = st.UncertaintyInputs(
        u_mass_g=st.mass_u_from_balance(linearity_g),
        u_volume_ml=st.volume_u_from_burette(tol, mean_volume, temperature_range_c=t_range),
    )
    result = st.direct(
        ps,
        pairs,
        blank_ml=blank,
        buoyancy=st.Buoyancy() if buoyancy else None,
        uncertainty=uinputs,
    )
    warnings = _stat_warnings(result)
    if capacity is not None:
        for e in entries:
            if e.volume.value > capacity:
                raise InvalidInput(
                    f"titrant volume {e.volume.text} mL exceeds the burette's capacity "
                    f"of {capacity:g} mL"
                )
            if e.volume.value < BURETTE_FRACTION * capacity:
                warnings.append(
                    f"titrant volume {e.volume.text} mL is below 30 % of the {capacity:g} mL "
                    f"burette ({BURETTE_FRACTION * capacity:.1f} mL), USP <31>"
                )
    unc = result.uncertainty
    return {
        "standard": {
            "code": std_mat.code,
            "name": std_mat.name,
            "formula": std_mat.formula,
            "molar_mass_g_per_mol": mm.value_g_per_mol,
            "u_molar_mass_g_per_mol": mm.u_g_per_mol,
            "n_eq_per_mol": std_rx.n,
            "equivalent_weight_g_per_eq": mm.value_g_per_mol / std_rx.n,
            "purity_percent": purity * 100,
        },
        "titrant": tit_mat.code if tit_mat else None,
        "reaction": std_rx.name,
        "titrant_n_eq_per_mol": tit_rx.n if tit_rx else None,
        "blank_ml": blank,
        "buoyancy": buoyancy,
        "normality": result.normality,
        "molarity": result.normality / tit_rx.n if tit_rx else None,
        "replicates": _replicate_rows(result, entries, "mass_g"),
        "sd": result.stats.sd,
        "rsd_percent": result.stats.rsd_percent,
        "u": unc.u,
        "U": unc.U,
        "k": unc.k,
        "budget": _budget(unc),
        "warnings": warnings,
    }


def secondary(
    *, reference_normality: str, aliquot_ml: str, volumes: list[str], blank_ml: str = "0"
) -> dict[str, Any]:
    from prepbook.chem import standardization as st

    ref = parse_number(reference_normality, "reference normality", positive=True)
    aliquot = parse_number(aliquot_ml, "aliquot (mL)", positive=True)
    blank = parse_number(blank_ml, "blank (mL)", non_negative=True).value
    if not volumes:
        raise InvalidInput("at least one replicate (--rep VOLUME) is required")
    entries = parse_replicates([f"{aliquot.text}:{v}" for v in volumes], amount_name="aliquot (mL)")
    result = st.secondary(
        ref.value, 0.0, [(e.amount.value, e.volume.value) for e in entries], blank_ml=blank
    )
    return {
        "reference_normality": ref.value,
        "aliquot_ml": aliquot.value,
        "blank_ml": blank,
        "normality": result.normality,
        "replicates": _replicate_rows(result, entries, "aliquot_ml"),
        "sd": result.stats.sd,
        "rsd_percent": result.stats.rsd_percent,
        "warnings": _stat_warnings(result),
    }


def _cautions(*materials: Any) -> list[str]:
    seen: list[str] = []
    for m in materials:
        for c in getattr(m, "cautions", ()) or ():
            if c not in seen:
                seen.append(c)
    return seen


def solid(solute: str, *, normality_text: str, volume_text: str, purity_text: str = "100") -> dict:
    from prepbook.catalog import loader
    from prepbook.chem import formula, preparation

    mat = loader.find_material(solute)
    rx = mat.reaction()
    n_target = parse_number(normality_text, "normality", positive=True).value
    volume = parse_number(volume_text, "volume (mL)", positive=True).value
    purity = parse_percent(purity_text, "purity").value / 100
    mm = formula.molar_mass(mat.formula)
    mass = preparation.solid_mass_g(n_target, volume, mm.value_g_per_mol, rx.n, purity)
    return {
        "solute": mat.code,
        "name": mat.name,
        "formula": mat.formula,
        "molar_mass_g_per_mol": mm.value_g_per_mol,
        "n_eq_per_mol": rx.n,
        "reaction": rx.name,
        "normality": n_target,
        "volume_ml": volume,
        "purity_percent": purity * 100,
        "mass_g": mass,
        "cautions": _cautions(mat),
    }


def liquid(
    reagent: str,
    *,
    normality_text: str,
    volume_text: str,
    fraction_text: str | None = None,
    density_text: str | None = None,
    n_text: str | None = None,
) -> dict:
    from prepbook.catalog import loader
    from prepbook.chem import formula, preparation

    rg = loader.find_reagent(reagent)
    n_target = parse_number(normality_text, "normality", positive=True).value
    volume = parse_number(volume_text, "volume (mL)", positive=True).value
    fraction = (
        parse_percent(fraction_text, "mass fraction").value / 100
        if fraction_text is not None
        else rg.mass_fraction
    )
    density = (
        parse_number(density_text, "density (g/mL)", positive=True).value
        if density_text is not None
        else rg.density_g_per_ml
    )
    mm = formula.molar_mass(rg.formula)
    if n_text is not None:
        n_eq = parse_number(n_text, "equivalents per mole", positive=True).value
    else:
        try:
            n_eq = loader.find_material(rg.formula).reaction().n
        except NotFound:
            raise InvalidInput(
                f"the catalog has no titration reaction for {rg.name}: give its equivalents "
                "per mole with --n"
            ) from None
    v_conc = preparation.liquid_volume_ml(
        n_target, volume, mm.value_g_per_mol, n_eq, fraction, density
    )
    molarity = 1000 * fraction * density / mm.value_g_per_mol
    return {
        "reagent": rg.code,
        "name": rg.name,
        "formula": rg.formula,
        "mass_fraction_percent": fraction * 100,
        "density_g_per_ml": density,
        "molarity_mol_per_l": molarity,
        "n_eq_per_mol": n_eq,
        "normality": n_target,
        "final_volume_ml": volume,
        "volume_ml": v_conc,
        "cautions": list(rg.cautions),
        "source": rg.source,
    }


def dilute(*, stock_text: str, normality_text: str, volume_text: str) -> dict:
    from prepbook.chem import preparation

    stock = parse_number(stock_text, "stock normality", positive=True).value
    target = parse_number(normality_text, "normality", positive=True).value
    volume = parse_number(volume_text, "volume (mL)", positive=True).value
    d = preparation.dilution(stock, target, volume)
    return {"stock_normality": stock, "normality": target, "volume_ml": volume,
            "stock_ml": d.stock_ml, "water_ml": d.water_ml}


def adjust(*, normality_text: str, target_text: str, volume_text: str,
           stock_text: str | None = None) -> dict:
    from prepbook.chem import preparation

    found = parse_number(normality_text, "normality", positive=True).value
    target = parse_number(target_text, "target normality", positive=True).value
    volume = parse_number(volume_text, "volume (mL)", positive=True).value
    stock = (parse_number(stock_text, "stock normality", positive=True).value
             if stock_text is not None else None)
    a = preparation.adjust(found, target, volume, stock_n=stock)
    return {"normality": found, "target": target, "volume_now_ml": volume,
            "add": a.add, "volume_ml": a.volume_ml}


def buoyancy(*, mass_text: str, density_text: str, air_text: str = "0.0012",
             weights_text: str = "8.0") -> dict:
    from prepbook.chem import corrections

    mass = parse_number(mass_text, "mass (g)", positive=True).value
    density = parse_number(density_text, "sample density (g/cm3)", positive=True).value
    air = parse_number(air_text, "air density (g/cm3)", non_negative=True).value
    weights = parse_number(weights_text, "weights density (g/cm3)", positive=True).value
    if air >= density or air >= weights:
        raise InvalidInput("air density must be below the densities of the sample and the weights")
    true = corrections.buoyancy_true_mass(mass, density, air=air, weights=weights)
    return {"reading_g": mass, "mass_g": true, "correction_g": true - mass,
            "density_g_per_cm3": density, "air_density_g_per_cm3": air,
            "weights_density_g_per_cm3": weights}


def temperature(*, normality_text: str, from_text: str, to_text: str) -> dict:
    from prepbook.chem import corrections

    n1 = parse_number(normality_text, "normality", positive=True).value
    t1 = parse_number(from_text, "temperature from (C)").value
    t2 = parse_number(to_text, "temperature to (C)").value
    for t in (t1, t2):
        if not 0 <= t <= 40:
            raise InvalidInput(f"temperature {t:g} C is outside 0-40 C, where the CIPM water "
                               "density formula applies")
    n2 = corrections.normality_at_temperature(n1, t1, t2)
    return {"normality_from": n1, "from_c": t1, "to_c": t2, "normality": n2, "ratio": n2 / n1}


def titer(*, titrant: str, normality_text: str, analyte: str) -> dict:
    from prepbook.catalog import loader
    from prepbook.chem import formula, preparation

    tit = loader.find_material(titrant)
    ana = loader.find_material(analyte)
    ana_rx, tit_rx = loader.reaction_for_pair(ana, tit)
    n = parse_number(normality_text, "normality", positive=True).value
    mm = formula.molar_mass(ana.formula)
    mg = preparation.titer_mg_per_ml(n, mm.value_g_per_mol, ana_rx.n)
    return {"titrant": tit.code, "normality": n, "analyte": ana.name,
            "analyte_formula": ana.formula, "analyte_n_eq_per_mol": ana_rx.n,
            "reaction": ana_rx.name, "mg_per_ml": mg}


def endpoint(csv_text: str, *, sample_ml_text: str | None = None,
             between_text: str | None = None) -> dict:
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
    return {"equivalence_ml": ep.equivalence_ml, "method": ep.method, "kind": kind,
            "reading_at_endpoint": ep.reading_at_endpoint, "gran_ml": ep.gran_ml,
            "gran_points": ep.gran_points, "points": ep.points, "notes": list(ep.notes)}


def eqpoint(*, standard: str, titrant: str, concentration_text: str) -> dict:
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
    table = [(i.name, i.low_ph, i.high_ph) for i in loader.indicators() if i.low_ph is not None]
    suitable, unsuitable = equilibria.indicator_fit(ph, table)
    return {"standard": std.code, "titrant": tit.code, "reaction": std_rx.name,
            "n_eq_per_mol": std_rx.n, "concentration_mol_per_l": conc, "ph": ph,
            "suitable": list(suitable), "unsuitable": list(unsuitable)}
