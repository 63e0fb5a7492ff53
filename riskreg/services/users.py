"""People and their roles."""

from __future__ import annotations

import re

from sqlalchemy import func, select
from sqlalchemy.orm import Session
from werkzeug.security import check_password_hash, generate_password_hash

from riskreg.model import User
from riskreg.vocab import ROLE_RANK, ROLES

from .errors import ValidationError

EMAIL = re.compile(r"^[^@\s]+@[^@\s]+\.[^@\s]+$")
MIN_PASSWORD = 10
# A hash to compare against when the e-mail is unknown, so timing does not tell.
_DUMMY_HASH = generate_password_hash("not-a-real-password")


def validate_new_user(session: Session, email: str, name: str, role: str, password: str) -> None:
    errors: dict[str, str] = {}
    email = (email or "").strip().lower()
    if not EMAIL.match(email):
        errors["email"] = "Enter an e-mail address like name@example.com."
    elif session.scalar(select(func.count()).select_from(User).where(User.email == email)):
        errors["email"] = "A person with this e-mail address already exists."
    if not (name or "").strip():
        errors["name"] = "Enter the person's name."
    if role not in ROLES:
        errors["role"] = f"Choose one of: {', '.join(ROLES)}."
    if len(password or "") < MIN_PASSWORD:
        errors["password"] = f"Use at least {MIN_PASSWORD} characters."
    if errors:
        raise ValidationError(errors)


def create_user(
    session: Session, email: str, name: str, role: str, password: str, *, commit: bool = True
) -> User:
    validate_new_user(session, email, name, role, password)
    user = User(
        email=email.strip().lower(),
        name=name.strip(),
        role=role,
        password_hash=generate_password_hash(password),
        active=True,
    )
    session.add(user)
    if commit:
        session.commit()
    return user


def authenticate(session: Session, email: str, password: str) -> User | None:
    user = session.scalar(select(User).where(User.email == (email or "").strip().lower()))
    if user is None or not user.active:
        check_password_hash(_DUMMY_HASH, password or "")
        return None
    if not check_password_hash(user.password_hash, password or ""):
        return None
    return user


def has_role(user: User | None, role: str) -> bool:
    """True when the user's role is at least ``role``."""
    return user is not None and user.active and ROLE_RANK[user.role] >= ROLE_RANK[role]
