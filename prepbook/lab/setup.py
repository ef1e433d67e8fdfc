"""Creating or upgrading a database and loading the built-in catalog into it."""

from __future__ import annotations

import json
from typing import Any

import msgspec
from sqlalchemy import select

from prepbook.inputs import utc_now
from prepbook.lab.common import write
from prepbook.records import as_data
from prepbook.store.models import Material, Spec


def _json(value: Any) -> str:
    return json.dumps(value, sort_keys=True, ensure_ascii=False)


class InitReport(msgspec.Struct, frozen=True):
    """What `prepbook init` did (the fields are the JSON keys)."""

    database: str
    created: bool
    from_revision: str | None
    to_revision: str
    backup: str | None
    materials_added: tuple[str, ...]
    specs_added: tuple[str, ...]


def initialize(target: str, *, actor: str) -> InitReport:
    """Create or upgrade the database, then add any built-in catalog entry it lacks.

    Running it again changes nothing: entries already present are left as they
    are (a lab's record is never rewritten by a new catalog).
    """
    from prepbook.catalog import loader
    from prepbook.store import migrate
    from prepbook.store.engine import open_database

    report = migrate.upgrade(target)
    db = open_database(target)
    added_materials: list[str] = []
    added_specs: list[str] = []
    with db.session() as s:
        have_m = set(s.scalars(select(Material.code)))
        have_s = set(s.scalars(select(Spec.code)))
        now = utc_now()
        for m in loader.materials():
            if m.code in have_m:
                continue
            write(s, actor, "catalog.material", Material(
                code=m.code, name=m.name, formula=m.formula, data=_json(as_data(m)),
                builtin=True, created_at=now))
            added_materials.append(m.code)
        for sp in loader.specs():
            if sp.code in have_s:
                continue
            write(s, actor, "catalog.spec", Spec(
                code=sp.code, name=sp.name, solute_code=sp.solute, nominal=sp.nominal,
                unit=sp.unit, data=_json(as_data(sp)), builtin=True, created_at=now,
                created_by=actor))
            added_specs.append(sp.code)
    return InitReport(
        database=str(target),
        created=report.created, from_revision=report.from_revision,
        to_revision=report.to_revision, backup=report.backup_path,
        materials_added=tuple(added_materials), specs_added=tuple(added_specs))
