"""Template helpers and form plumbing shared by the blueprints."""

from __future__ import annotations

from typing import Any

from flask import Flask
from flask_login import current_user
from wtforms import Form

from riskreg import vocab
from riskreg.engineering import cautions
from riskreg.services.errors import ValidationError


def apply_errors(form: Form, exc: ValidationError) -> None:
    """Put a service's field messages on the form's fields (others on the form)."""
    for key, message in exc.errors.items():
        field = getattr(form, key, None)
        if field is not None and hasattr(field, "errors"):
            errs = list(field.errors) if not isinstance(field.errors, list) else field.errors
            errs.append(message)
            field.errors = errs
        else:
            form.form_errors.append(message)


def form_data(form: Form, *names: str) -> dict[str, Any]:
    return {n: getattr(form, n).data for n in names}


def register_template_helpers(app: Flask) -> None:
    @app.context_processor
    def _ctx() -> dict[str, Any]:
        return {
            "vocab": vocab,
            "label": vocab.label,
            "cautions": cautions,
            "can": (lambda role: current_user.is_authenticated and current_user.can(role)),
        }

    @app.template_filter("mm")
    def _mm(value: float | None, units: str = "mm") -> str:
        if value is None:
            return "—"
        if units == "in":
            return f"{value / 25.4:.2f} in"
        return f"{value:.0f} mm"
