"""Site overview: machines by area with their open hazards and levels."""

from __future__ import annotations

from typing import Any

from flask import Blueprint, redirect, render_template, request, url_for
from sqlalchemy import select

from riskreg.model import Site
from riskreg.services import due, register
from riskreg.services.errors import NotFound

from . import db

bp = Blueprint("sites", __name__)


def all_sites() -> list[Site]:
    return list(db().scalars(select(Site).order_by(Site.name)))


@bp.route("/")
def overview() -> Any:
    sites = all_sites()
    if not sites:
        return render_template("empty.html", title="No site yet")
    return redirect(url_for("sites.site", site_id=sites[0].id))


@bp.route("/sites/<int:site_id>")
def site(site_id: int) -> Any:
    s = db().get(Site, site_id)
    if s is None:
        raise NotFound(f"No site number {site_id}.")
    q = request.args.get("q", "")[:100]
    # one page of machines (the counts are of them all); a bad page number shows the first
    view = register.site_overview_page(db(), s, q, page=request.args.get("page", 1, type=int))
    areas: dict[str, list[register.MachineRow]] = {}
    for r in view.rows:
        areas.setdefault(r.area_name or "No area", []).append(r)
    due_counts = due.due_summary(db(), s)
    return render_template(
        "overview.html",
        site=s,
        sites=all_sites(),
        areas=areas,
        q=q,
        total=view.total,
        view=view,
        due_counts=due_counts,
        due_pages={k: due.page_of(due_counts, k) for k in due.STATUSES},
        title=s.name,
    )
