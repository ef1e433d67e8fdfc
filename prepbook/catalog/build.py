"""Building the catalog's objects from its parsed files, as ``shape`` reads them.

Hazard codes are expanded into their wording from ghs.toml (so the wording lives in one
place), each spec is its own keys over ``[defaults]``, and every default a spec takes or
overrides must name its source. Problems are collected, never raised, so a bad edit is
reported whole; ``load_catalog`` refuses the catalog when there is any.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from prepbook.catalog.models import (
    Catalog,
    Hazard,
    Indicator,
    Material,
    Reaction,
    Reagent,
    SpecDefaults,
)
from prepbook.catalog.shape import FILES, SAMPLE_FILES, SPEC, SPEC_SOURCED, SPEC_SOURCED_IF_SET


class _Ghs:
    """The wording of hazard statements and pictograms, by code (ghs.toml)."""

    def __init__(self, statements: Mapping[str, str], pictograms: Mapping[str, str]) -> None:
        self.statements, self.pictograms = statements, pictograms

    def hazard(self, h: Mapping[str, Any], where: str, problems: list[str]) -> Hazard:
        texts, pics = [], []
        for code in h["statements"]:
            if code in self.statements:
                texts.append(f"{code} {self.statements[code]}")
            else:
                problems.append(f"{where}: unknown hazard statement {code!r} (add it to ghs.toml)")
        for code in h["pictograms"]:
            if code in self.pictograms:
                pics.append(f"{code} {self.pictograms[code]}")
            else:
                problems.append(f"{where}: unknown pictogram {code!r}")
        return Hazard(h["signal_word"], tuple(texts), tuple(pics), h["source"])


def _material(m: Mapping[str, Any], where: str, ghs: _Ghs, problems: list[str]) -> Material:
    fields = {k: v for k, v in m.items() if k != "reaction"}
    fields["reactions"] = tuple(Reaction(**r) for r in m["reaction"])
    fields["hazard"] = ghs.hazard(m["hazard"], f"{where}.hazard", problems)
    fields["sources"] = tuple(sorted(m["sources"].items()))
    return Material(**fields)


def _reagent(g: Mapping[str, Any], where: str, ghs: _Ghs, problems: list[str]) -> Reagent:
    return Reagent(**{**g, "hazard": ghs.hazard(g["hazard"], f"{where}.hazard", problems)})


def _spec(own: Mapping[str, Any], defaults: Mapping[str, Any], where: str, ghs: _Ghs,
          problems: list[str]) -> SpecDefaults:
    own_sources = own.get("sources", {})
    for key in sorted(set(defaults) & set(own) - {"sources"}):
        if key not in own_sources:
            problems.append(f"{where}: overrides the default {key!r} without naming its source")
    sources = {**defaults.get("sources", {}), **own_sources}
    s = SPEC.complete({**defaults, **own, "sources": sources}, where, problems)
    for key in SPEC_SOURCED:
        if key not in sources:
            problems.append(f"{where}: no source named for {key!r}")
    for key in SPEC_SOURCED_IF_SET:
        if (key in defaults or key in own) and key not in sources:
            problems.append(f"{where}: no source named for {key!r}")
    fields = {k: v for k, v in s.items() if k != "reaction"}
    fields["reaction_name"] = s["reaction"]
    fields["hazard"] = ghs.hazard(s["hazard"], f"{where}.hazard", problems)
    fields["sources"] = tuple(sorted(sources.items()))
    return SpecDefaults(**fields)


def build_catalog(data: Mapping[str, Any]) -> tuple[Catalog, tuple[str, ...]]:
    """Turn the parsed files (keyed by file name) into a Catalog and its shape problems;
    the analytes and ions (``SAMPLE_FILES``) are left to ``samples.build_samples``.

    Kept separate from reading so tests can feed altered data and see it refused.
    """
    problems: list[str] = []
    read = {name: table.read(data.get(name, {}), name, problems)
            for name, table in FILES.items() if name not in SAMPLE_FILES}
    ghs = _Ghs(read["ghs.toml"]["statements"], read["ghs.toml"]["pictograms"])
    materials = tuple(_material(m, f"materials.toml.material[{i}]", ghs, problems)
                      for i, m in enumerate(read["materials.toml"]["material"]))
    reagents = tuple(_reagent(g, f"reagents.toml.reagent[{i}]", ghs, problems)
                     for i, g in enumerate(read["reagents.toml"]["reagent"]))
    indicators = tuple(Indicator(**i) for i in read["indicators.toml"]["indicator"])
    specs_file = read["specs.toml"]
    specs = tuple(_spec(own, specs_file["defaults"], f"specs.toml.spec[{i}]", ghs, problems)
                  for i, own in enumerate(specs_file["spec"]))
    catalog = Catalog(materials, reagents, indicators, specs, ghs.statements, ghs.pictograms)
    return catalog, tuple(problems)
