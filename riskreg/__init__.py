"""riskreg: the machine-guarding risk register."""

from __future__ import annotations

from typing import Any

__version__ = "0.1.0"


def create_app(config: dict[str, Any] | None = None) -> Any:
    """The Flask application factory (see riskreg.web)."""
    from riskreg.web import create_app as _create

    return _create(config)
