"""Solution specs as the record holds them: built-in ones and the lab's own."""

from __future__ import annotations

import json
import re
from typing import Any

import msgspec
from sqlalchemy import select

from prepbook.errors import InvalidInput, NotFound, Refused
from prepbook.inputs import parse_number, parse_repeatability, parse_text, utc_now
from prepbook.lab.common import acting, write
from prepbook.store import retry
from prepbook.store.engine import Database
from prepbook.store.models import Spec


class SpecFields(msgspec.Struct, frozen=True):
    """A spec's identity, acceptance rules and intervals, read from its stored JSON."""

    code: str
    name: str
    solute: str
    reaction: str | None
    nominal: float
    unit: str
    standard: str | None
    indicator: str | None
    min_replicates: int
    max_rsd_percent: float
    factor_low: float
    factor_high: float
    drift_limit_percent: float
    restandardize_days: int
    shelf_life_days: int
    storage: str | None
    hazard: dict[str, Any]
    cautions: list[str]


class SpecView(SpecFields, frozen=True):
    """What the services need of a spec: its fields and the whole stored JSON."""

    data: dict[str, Any] = msgspec.field(default_factory=dict)

    def to_spec_unit(self, normality: float, n_eq_per_mol: float) -> float:
        """A normality expressed in the spec's unit (N as is; M divided by n)."""
        return normality if self.unit == "N" else normality / n_eq_per_mol

    def rules(self) -> Any:
        from prepbook.rules.acceptance import AcceptanceRules

        return AcceptanceRules(
            min_replicates=self.min_replicates,
            max_rsd_percent=self.max_rsd_percent,
            factor_low=self.factor_low,
            factor_high=self.factor_high,
            drift_limit_percent=self.drift_limit_percent,
        )


def _get(d: dict[str, Any], *names: str, default: Any = None) -> Any:
    for n in names:
        if n in d and d[n] is not None:
            return d[n]
    return default


def view(spec: Spec) -> SpecView:
    d = json.loads(spec.data)
    return SpecView(
        code=spec.code,
        name=spec.name,
        solute=spec.solute_code,
        reaction=_get(d, "reaction", "reaction_name"),
        nominal=spec.nominal,
        unit=spec.unit,
        standard=_get(d, "standard"),
        indicator=_get(d, "indicator"),
        min_replicates=int(_get(d, "min_replicates", default=3)),
        max_rsd_percent=float(_get(d, "max_rsd_percent", default=0.2)),
        factor_low=float(_get(d, "factor_low", default=0.9)),
        factor_high=float(_get(d, "factor_high", default=1.1)),
        drift_limit_percent=float(_get(d, "drift_limit_percent", default=0.5)),
        restandardize_days=int(_get(d, "restandardize_days", default=30)),
        shelf_life_days=int(_get(d, "shelf_life_days", default=180)),
        storage=_get(d, "storage"),
        hazard=_get(d, "hazard", default={}) or {},
        cautions=list(_get(d, "cautions", default=[]) or []),
        data=d,
    )


class SpecInfo(SpecFields, frozen=True):
    """A solution spec as the commands show it (the fields are the JSON keys)."""

    builtin: bool
    solvent: str
    expansion_per_c: float | None  # the solvent's cubic expansion; None: water's density
    expansion_source: str | None
    expansion_refused: str | None  # why runs on it are refused: its solvent is not carried
    repeatability_rsd_percent: float | None  # validated RSD of one result, %; runs use it
    repeatability_source: str | None


def spec_info(spec: Spec) -> SpecInfo:
    from prepbook.lab.preparing import spec_expansion

    v = view(spec)
    shared = {name: getattr(v, name) for name in SpecFields.__struct_fields__}
    refused = None
    try:
        expansion = spec_expansion(v.data)
    except InvalidInput as e:  # its runs are refused for the same reason
        expansion, refused = None, str(e)
    sources = dict(v.data.get("sources") or {})
    rsd = _get(v.data, "repeatability_rsd_percent")
    return SpecInfo(**shared, builtin=spec.builtin,
                    solvent=expansion.solvent if expansion else str(
                        v.data.get("solvent") or ("not stated" if refused else "water")),
                    expansion_per_c=expansion.per_c if expansion else None,
                    expansion_source=expansion.source if expansion else None,
                    expansion_refused=refused,
                    repeatability_rsd_percent=None if rsd is None else float(rsd),
                    repeatability_source=sources.get("repeatability_rsd_percent")
                    if rsd is not None else None)


def show_spec(db: Database, code: str) -> SpecInfo:
    """One spec, built-in or the lab's own, by its code."""
    with db.session(write=False) as s:
        sp = s.scalars(select(Spec).where(Spec.code == code)).first()
        if sp is None:
            raise NotFound(f"no spec {code!r} (spec list shows them)")
        return spec_info(sp)


def list_specs(db: Database) -> list[SpecInfo]:
    with db.session(write=False) as s:
        return [spec_info(sp) for sp in s.scalars(select(Spec).order_by(Spec.code))]


_SPEC_CODE = re.compile(r"^[A-Za-z0-9()]+(-[A-Za-z0-9().]+)+$")


@retry.on_conflict
def add_spec(
    db: Database,
    *,
    actor: str,
    code: str,
    solute: str,
    nominal: str,
    unit: str,
    name: str | None = None,
    reaction: str | None = None,
    standard: str | None = None,
    indicator: str | None = None,
    min_replicates: int = 3,
    max_rsd_percent: str = "0.2",
    factor_low: str = "0.90",
    factor_high: str = "1.10",
    drift_limit_percent: str = "0.5",
    restandardize_days: int = 30,
    shelf_life_days: int = 180,
    storage: str | None = None,
    solvent: str | None = None,
    expansion_per_c: str | None = None,
    expansion_source: str | None = None,
    repeatability: str | None = None,
    repeatability_source: str | None = None,
) -> SpecInfo:
    """Add a lab's own solution spec (the built-in ones come from the catalog).

    ``solvent`` (with ``expansion_per_c`` and its source unless the catalog knows it)
    carries its runs between temperatures, as ``lab.preparing.titrant_expansion`` reads
    it; a solute the catalog makes only in another solvent is refused without one.
    ``repeatability``: a validated RSD of one result (%), with its source, used in the
    budget of every run on the spec that gives none of its own."""
    from prepbook.catalog import loader
    from prepbook.lab.preparing import titrant_expansion

    if not _SPEC_CODE.match(code) or len(code) > 40:
        raise InvalidInput(f"spec code {code!r} should be the solute and strength, "
                           "e.g. NaOH-0.5N")
    if unit not in ("N", "M"):
        raise InvalidInput(f"unit {unit!r} must be N (normality) or M (molarity)")
    sol = loader.find_material(solute)
    rx = sol.reaction(name=reaction) if reaction else sol.reaction()
    std = loader.find_material(standard) if standard else None
    if indicator:
        loader.find_indicator(indicator)
    nom = parse_number(nominal, "nominal concentration", positive=True)
    rsd = parse_number(max_rsd_percent, "RSD limit (%)", positive=True)
    lo = parse_number(factor_low, "factor low limit", positive=True)
    hi = parse_number(factor_high, "factor high limit", positive=True)
    drift = parse_number(drift_limit_percent, "drift limit (%)", positive=True)
    if lo.value >= 1 or hi.value <= 1:
        raise InvalidInput("the factor window must contain 1 (e.g. 0.90 to 1.10)")
    if min_replicates < 1 or restandardize_days < 1 or shelf_life_days < 1:
        raise InvalidInput("replicates, restandardization interval and shelf life must be "
                           "at least 1")
    if restandardize_days > shelf_life_days:
        raise InvalidInput("the restandardization interval cannot be longer than the shelf life")
    storage = parse_text(storage, "storage", max_len=300)
    expansion = titrant_expansion(solvent=solvent, per_c=expansion_per_c,
                                  source=expansion_source, solute=sol.code)
    rsd_valid = _validated_repeatability(repeatability, repeatability_source)
    sources = {"all": "set by the laboratory"}
    if expansion is not None:
        sources["expansion_per_c"] = expansion.source
    if rsd_valid is not None:
        sources["repeatability_rsd_percent"] = rsd_valid[1]
    data = {
        "code": code, "name": name or f"{sol.name} {nom.text} {unit}", "solute": sol.code,
        "reaction": rx.name, "nominal": nom.value, "unit": unit,
        "standard": std.code if std else None, "indicator": indicator,
        "min_replicates": min_replicates, "max_rsd_percent": rsd.value,
        "factor_low": lo.value, "factor_high": hi.value,
        "drift_limit_percent": drift.value, "restandardize_days": restandardize_days,
        "shelf_life_days": shelf_life_days, "storage": storage,
        "hazard": {}, "cautions": list(getattr(sol, "cautions", ()) or ()),
        "sources": sources,
        "solvent": expansion.solvent if expansion else "water",
        "expansion_per_c": expansion.per_c if expansion else None,
        "repeatability_rsd_percent": rsd_valid[0] if rsd_valid else None,
    }
    with db.session() as s:
        user = acting(s, actor, ("reviewer", "admin"), "add solution specs")
        if s.scalars(select(Spec).where(Spec.code == code)).first() is not None:
            raise Refused(f"spec {code!r} already exists")
        sp = Spec(code=code, name=data["name"], solute_code=sol.code, nominal=nom.value,
                  unit=unit, data=json.dumps(data, sort_keys=True), builtin=False,
                  created_at=utc_now(), created_by=user.name)
        write(s, user.name, "spec.add", sp)
        return spec_info(sp)


def _validated_repeatability(text: str | None, source: str | None
                             ) -> tuple[float, str] | None:
    """A spec's validated repeatability as typed, with its source, or None."""
    if text is None and source is None:
        return None
    if text is None or source is None:
        raise InvalidInput("--repeatability RSD% and --repeatability-source TEXT go "
                           "together: a validated value is kept only with its source")
    rsd = parse_repeatability(text)
    where = parse_text(source, "repeatability source", max_len=300)
    if where is None or not where.strip():
        raise InvalidInput("--repeatability-source must name the validation it comes from")
    return rsd.value, where
