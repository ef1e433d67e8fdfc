"""The analytes and ions of sample titrations: built from their files when first asked.

Only the commands that titrate a sample or compute a salt's pH use them, so loading the
catalog (``loader.catalog``) leaves ``analytes.toml`` and ``ions.toml`` as read and
``samples()`` builds them on first use, in one piece: the shape of both files read
(``shape``), the entries built (``sample_models``), every problem of meaning judged
against the catalog's materials and indicators (``checks.check_samples``), and the whole
refused with one message listing every problem, as the catalog is.
"""

from __future__ import annotations

import functools
from collections.abc import Mapping
from pathlib import Path
from typing import Any

from prepbook.catalog.checks import check_samples
from prepbook.catalog.loader import catalog, load_catalog
from prepbook.catalog.models import Catalog, refuse_if_any
from prepbook.catalog.parsed_copy import read_files
from prepbook.catalog.sample_models import (
    Analyte,
    AnalyteMethod,
    AnalyteTitration,
    Ion,
    Samples,
    method_for,
)
from prepbook.catalog.shape import FILES


def build_samples(data: Mapping[str, Any]) -> tuple[Samples, tuple[str, ...]]:
    """The analytes and ions of the parsed files (keyed by file name), and the problems of
    their shape."""
    problems: list[str] = []
    analytes = []
    for a in FILES["analytes.toml"].read(data.get("analytes.toml", {}), "analytes.toml",
                                         problems)["analyte"]:
        fields = {k: v for k, v in a.items() if k != "method"}
        fields["methods"] = tuple(AnalyteMethod(**m) for m in a["method"])
        fields["sources"] = tuple(sorted(a["sources"].items()))
        analytes.append(Analyte(**fields))
    ions = tuple(Ion(**i) for i in FILES["ions.toml"].read(data.get("ions.toml", {}),
                                                           "ions.toml", problems)["ion"])
    return Samples(tuple(analytes), ions), tuple(problems)


def load_samples(directory: Path | None = None, cat: Catalog | None = None) -> Samples:
    """Read, build and validate the analytes and ions (uncached); the packaged data by
    default, judged against ``cat`` (the catalog of the same ``directory`` by default).

    Raises CatalogDataError listing every problem, so nothing half-valid is ever used.
    """
    cat = cat if cat is not None else load_catalog(directory)
    built, problems = build_samples(read_files(directory))
    if not problems:
        problems = check_samples(built, cat)
    refuse_if_any(problems)
    return built


@functools.cache
def samples() -> Samples:
    """The packaged analytes and ions, loaded and validated once per process."""
    return load_samples(cat=catalog())


def analytes() -> tuple[Analyte, ...]:
    """Every built-in analyte, in file order."""
    return samples().analytes


def find_analyte(query: str) -> Analyte:
    """An analyte by code, name or alias (case- and whitespace-insensitive)."""
    return samples().find_analyte(query)


def find_ion(query: str) -> Ion:
    """An ion by name, formula or alias (case- and whitespace-insensitive)."""
    return samples().find_ion(query)


def analyte_titration(analyte: str, titrant: str, method: str | None = None) -> AnalyteTitration:
    """The analyte (code, name or alias) titrated with ``titrant`` (a material), by its
    method named ``method`` or the one that pairs with the titrant (``method_for``)."""
    from prepbook.chem.formula import molar_mass
    from prepbook.chem.sample import Analyte as SampleAnalyte

    cat = catalog()
    found = samples().find_analyte(analyte)
    tit = cat.find_material(titrant)
    way = method_for(found, tit, method)
    if way.titrant == tit.code:
        t_rx = tit.reaction(name=way.titrant_reaction) if way.titrant_reaction else None
        t_rx = t_rx or next(r for r in tit.reactions if r.kind == way.kind)
    else:  # another strong titrant of the opposite nature (method_for)
        t_rx = tit.reaction(kind="acid-base")
    reagent = cat.find_material(way.excess_reagent) if way.excess_reagent else None
    reagent_n = (next(r for r in reagent.reactions if r.kind == way.kind).n
                 if reagent is not None else None)
    own = molar_mass(found.formula)
    shown = molar_mass(found.report_as) if found.report_as else None
    computed = SampleAnalyte(
        name=found.name, formula=found.formula, molar_mass_g_per_mol=own.value_g_per_mol,
        u_molar_mass_g_per_mol=own.u_g_per_mol, n_eq_per_mol=way.n, unit=found.unit,
        report_as=found.report_as,
        report_as_molar_mass_g_per_mol=shown.value_g_per_mol if shown else None,
        u_report_as_molar_mass_g_per_mol=shown.u_g_per_mol if shown else 0.0,
        report_as_n=found.report_as_n)
    return AnalyteTitration(found, way, tit, t_rx.n, reagent, reagent_n, computed)
