"""Administration use cases: site settings and people's roles."""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from sqlalchemy import func, select
from sqlalchemy.orm import Session

from riskreg.model import Site, User
from riskreg.vocab import RATING_METHODS, ROLES

from .errors import ValidationError
from .register import _commit


def update_site(session: Session, site: Site, data: Mapping[str, Any]) -> Site:
    errors: dict[str, str] = {}
    name = str(data.get("name") or "").strip()[:120]
    if not name:
        errors["name"] = "Enter the site's name."
    elif session.scalar(select(Site.id).where(Site.name == name, Site.id != site.id)):
        errors["name"] = f"A site named {name!r} already exists."
    if data.get("units") not in ("mm", "in"):
        errors["units"] = "Choose mm or in."
    if data.get("distance_method") not in ("ISO", "US"):
        errors["distance_method"] = "Choose ISO (ISO 13855) or US (29 CFR 1910.217 / ANSI B11.19)."
    if data.get("rating_method") not in RATING_METHODS:
        errors["rating_method"] = f"Choose one of: {', '.join(RATING_METHODS)}."
    try:
        allowance = float(data.get("stop_time_allowance_percent") or 0)
    except (TypeError, ValueError):
        allowance = -1.0
    if not 0 <= allowance <= 100:
        errors["stop_time_allowance_percent"] = "Enter an allowance from 0 to 100 %."
    base_url = data.get("base_url") or None
    if base_url is not None and not str(base_url).startswith(("http://", "https://")):
        errors["base_url"] = "Enter the address as http://… or https://…, or leave it empty."
    if errors:
        raise ValidationError(errors)
    site.name = name
    site.units = str(data["units"])
    site.distance_method = str(data["distance_method"])
    site.rating_method = str(data["rating_method"])
    site.stop_time_allowance_percent = allowance
    site.base_url = base_url
    _commit(session)
    return site


def set_role(session: Session, user: User, role: str, active: bool, *, acting: User) -> User:
    """Change a person's role or lock them out; the last active admin stays an admin."""
    if role not in ROLES:
        raise ValidationError({"role": f"Choose one of: {', '.join(ROLES)}."})
    losing_admin = user.role == "admin" and (role != "admin" or not active)
    if losing_admin:
        admins = (
            session.scalar(
                select(func.count())
                .select_from(User)
                .where(User.role == "admin", User.active.is_(True), User.id != user.id)
            )
            or 0
        )
        if admins == 0:
            raise ValidationError(
                {
                    "role": "This is the last active administrator: make "
                    "someone else an administrator first."
                }
            )
    if user.id == acting.id and not active:
        raise ValidationError({"active": "You cannot lock yourself out."})
    user.role = role
    user.active = active
    _commit(session)
    return user
