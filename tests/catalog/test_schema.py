"""The JSON Schemas shipped for editors (``prepbook/catalog/schema``) are current, the
shipped data files satisfy them, and they refuse what the loader refuses for its shape.

The validator is the ``jsonschema`` library (Draft 2020-12), independent of the loader.
"""

from __future__ import annotations

import copy
import json
import tomllib
from typing import Any

import jsonschema
import pytest

from prepbook.catalog import build, parsed_copy, refresh
from prepbook.catalog.parsed_copy import FILES

DATA = parsed_copy.data_directory()


def _validator(name: str) -> jsonschema.Draft202012Validator:
    document = json.loads(refresh.schema_path(name).read_text(encoding="utf-8"))
    assert document["$schema"] == "https://json-schema.org/draft/2020-12/schema"
    jsonschema.Draft202012Validator.check_schema(document)
    return jsonschema.Draft202012Validator(document)


@pytest.mark.parametrize("name", FILES)
def test_the_shipped_schema_is_current(name: str) -> None:
    # On failure run `python -m prepbook.catalog.refresh`.
    assert refresh.schema_path(name).read_text(encoding="utf-8") == refresh.render_schema(name)


@pytest.mark.parametrize("name", FILES)
def test_the_shipped_file_satisfies_its_schema(name: str) -> None:
    data = tomllib.loads((DATA / name).read_text(encoding="utf-8"))
    errors = [e.message for e in _validator(name).iter_errors(data)]
    assert errors == []


@pytest.mark.parametrize("name", FILES)
def test_each_file_names_its_schema_for_editors(name: str) -> None:
    first = (DATA / name).read_text(encoding="utf-8").splitlines()[0]
    assert first == f"#:schema ../schema/{refresh.schema_path(name).name}"
    assert (DATA / first.removeprefix("#:schema ")).resolve() == refresh.schema_path(name)


def _material(d: dict[str, Any]) -> dict[str, Any]:
    material: dict[str, Any] = d["materials.toml"]["material"][0]
    return material


# (file, how to break it): each is a shape problem the loader reports.
BREAKS = {
    "unknown key": ("materials.toml", lambda d: _material(d).update(dryng="120 C")),
    "missing key": ("materials.toml", lambda d: _material(d).pop("formula")),
    "n as text": ("materials.toml", lambda d: _material(d)["reaction"][0].update(n="five")),
    "blank text": ("materials.toml", lambda d: _material(d).update(note=" ")),
    "flag for a number": ("indicators.toml",
                          lambda d: d["indicators.toml"]["indicator"][0].update(low_ph=True)),
    "fraction for a whole number": ("materials.toml", lambda d: _material(d).update(
        acid_units=1.5)),
    "unknown source key": ("materials.toml",
                           lambda d: _material(d)["sources"].update(colour="from memory")),
    "hazard not a table": ("reagents.toml",
                           lambda d: d["reagents.toml"]["reagent"][0].update(hazard="H314")),
    "spec unknown key": ("specs.toml",
                         lambda d: d["specs.toml"]["spec"][0].update(max_rsd_pct=0.2)),
    "default mistyped": ("specs.toml",
                         lambda d: d["specs.toml"]["defaults"].update(min_replicates="3")),
    "ghs source missing": ("ghs.toml", lambda d: d["ghs.toml"].pop("source")),
}


@pytest.mark.parametrize("case", BREAKS)
def test_the_schema_and_the_loader_refuse_the_same_shape_problems(case: str) -> None:
    name, breaks = BREAKS[case]
    data = copy.deepcopy(parsed_copy.read_files())
    breaks(data)
    _, problems = build.build_catalog(data)
    assert problems, "the loader accepted it"
    assert list(_validator(name).iter_errors(data[name])), "the schema accepted it"


def test_the_schema_lists_the_kinds_the_checks_accept() -> None:
    # An editor offers the same choices the semantic checks enforce (models' constants).
    from prepbook.catalog.models import REACTION_KINDS

    data = tomllib.loads((DATA / "materials.toml").read_text(encoding="utf-8"))
    data["material"][0]["reaction"][0]["kind"] = "oxidation"
    assert list(_validator("materials.toml").iter_errors(data))
    for kind in REACTION_KINDS:
        data["material"][0]["reaction"][0]["kind"] = kind
        assert not list(_validator("materials.toml").iter_errors(data))
