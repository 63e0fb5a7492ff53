"""Site settings and people's roles."""

from __future__ import annotations

import pytest
from sqlalchemy.orm import Session

from riskreg.services import admin, register, users
from riskreg.services.errors import ValidationError


def test_site_settings_are_checked(session: Session) -> None:
    site = register.create_site(session, "A Works")
    register.create_site(session, "B Works")
    with pytest.raises(ValidationError) as exc:
        admin.update_site(
            session,
            site,
            {
                "name": "B Works",
                "units": "ft",
                "distance_method": "EU",
                "rating_method": "x",
                "stop_time_allowance_percent": "150",
                "base_url": "ftp://x",
            },
        )
    assert set(exc.value.errors) == {
        "name",
        "units",
        "distance_method",
        "rating_method",
        "stop_time_allowance_percent",
        "base_url",
    }
    admin.update_site(
        session,
        site,
        {
            "name": "A Works",
            "units": "in",
            "distance_method": "US",
            "rating_method": "ansi_b11",
            "stop_time_allowance_percent": "10",
            "base_url": "https://riskreg.example.org",
        },
    )
    assert (site.units, site.distance_method, site.stop_time_allowance_percent) == (
        "in",
        "US",
        10.0,
    )


def test_the_last_admin_stays_admin(session: Session) -> None:
    boss = users.create_user(session, "boss@example.com", "Boss", "admin", "long-password-1")
    other = users.create_user(session, "o@example.com", "Other", "viewer", "long-password-2")
    with pytest.raises(ValidationError, match="last active administrator"):
        admin.set_role(session, boss, "viewer", True, acting=boss)
    admin.set_role(session, other, "admin", True, acting=boss)
    with pytest.raises(ValidationError, match="lock yourself out"):
        admin.set_role(session, boss, "admin", False, acting=boss)
    admin.set_role(session, boss, "approver", True, acting=other)
    assert boss.role == "approver"
