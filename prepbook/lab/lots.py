"""Primary-standard, solute and concentrate lots with their certificate values.

A concentrate's lot (hydrochloric acid 37 %, ...) names a reagent of the catalog and
records its assay (% w/w, kept as the purity) and its density (g/mL) as the
certificate states them: a batch made from it is computed from those, not from the
catalog's typical values.
"""

from __future__ import annotations

from datetime import date

import msgspec
from sqlalchemy import select

from prepbook.errors import InvalidInput, Refused
from prepbook.inputs import parse_code, parse_date, parse_number, parse_percent, parse_text, utc_now
from prepbook.lab.common import acting, iso, write
from prepbook.store import retry
from prepbook.store.engine import Database
from prepbook.store.models import Lot


class LotInfo(msgspec.Struct, frozen=True):
    """A lot as the commands show it (the fields are the JSON keys)."""

    code: str
    material: str
    purity_percent: str
    purity_u_percent: str | None
    expires: str
    expired: bool
    certificate: str | None
    dried_on: str | None
    opened_on: str | None
    created_by: str
    density_g_per_ml: str | None = None  # a concentrate's, from its certificate


def lot_info(lot: Lot, today: date | None = None) -> LotInfo:
    today = today or utc_now().date()
    return LotInfo(code=lot.code, material=lot.material_code, purity_percent=lot.purity_text,
                   purity_u_percent=lot.purity_u_text, expires=lot.expires.isoformat(),
                   expired=lot.expires < today, certificate=lot.certificate,
                   dried_on=iso(lot.dried_on), opened_on=iso(lot.opened_on),
                   created_by=lot.created_by, density_g_per_ml=lot.density_text)


@retry.on_conflict
def add_lot(db: Database, *, actor: str, material: str, code: str, purity: str,
            purity_u: str | None, expires: str, certificate: str | None,
            dried: str | None, opened: str | None = None,
            density: str | None = None) -> LotInfo:
    """Record a lot. With ``density`` the lot is a concentrate's: ``material`` names a
    reagent of the catalog and ``purity`` is its assay (% w/w)."""
    from prepbook.catalog import loader

    code = parse_code(code, "lot code")
    density_r = None
    if density is not None:
        reagent = loader.find_reagent(material)
        material_code = reagent.code
        purity_r = parse_percent(purity, "assay (% w/w)")
        density_r = parse_number(density, "density (g/mL)", positive=True)
        if not 0.5 <= density_r.value <= 2.5:
            raise InvalidInput(f"density {density_r.text} g/mL is not a liquid reagent's "
                               "(expected 0.5 to 2.5 g/mL)")
    else:
        mat = loader.find_material(material)
        material_code = mat.code
        purity_r = parse_percent(purity, "purity")
        if mat.is_primary_standard:  # a certified purity that cannot be right is refused
            from prepbook.rules.plausibility import primary_purity

            primary_purity(purity_r.value, purity_r.text)
    purity_u_r = (parse_number(purity_u, "purity uncertainty (%)", non_negative=True)
                  if purity_u is not None else None)
    if purity_u_r is not None and purity_u_r.value >= purity_r.value:
        raise InvalidInput("purity uncertainty must be smaller than the purity")
    expires_d = parse_date(expires, "expiry date")
    dried_d = parse_date(dried, "dried date") if dried else None
    opened_d = parse_date(opened, "opened date") if opened else None
    today = utc_now().date()
    for d, what in ((dried_d, "dried date"), (opened_d, "opened date")):
        if d is not None and d > today:
            raise InvalidInput(f"{what} {d.isoformat()} is in the future")
        if d is not None and d > expires_d:
            raise InvalidInput(f"{what} {d.isoformat()} is after the lot's expiry "
                               f"{expires_d.isoformat()}")
    certificate = parse_text(certificate, "certificate", max_len=500)
    with db.session() as s:
        user = acting(s, actor, doing="add lots")
        if s.scalars(select(Lot).where(Lot.code == code)).first() is not None:
            raise Refused(f"lot {code!r} already exists")
        lot = Lot(code=code, material_code=material_code, purity_text=purity_r.text,
                  purity_u_text=purity_u_r.text if purity_u_r else None, expires=expires_d,
                  certificate=certificate, dried_on=dried_d, opened_on=opened_d,
                  created_at=utc_now(), created_by=user.name,
                  density_text=density_r.text if density_r else None)
        write(s, user.name, "lot.add", lot)
        return lot_info(lot, today)


def list_lots(db: Database) -> list[LotInfo]:
    today = utc_now().date()
    with db.session(write=False) as s:
        return [lot_info(lot, today) for lot in s.scalars(select(Lot).order_by(Lot.code))]
