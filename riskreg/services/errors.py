"""Errors the services raise; each carries a message saying what to fix."""

from __future__ import annotations


class ServiceError(Exception):
    """Base class."""


class ValidationError(ServiceError):
    """Bad input: a message per field. Nothing has been written."""

    def __init__(self, errors: dict[str, str]) -> None:
        super().__init__("; ".join(f"{k}: {v}" for k, v in errors.items()))
        self.errors = errors


class NotFound(ServiceError):
    pass


class Forbidden(ServiceError):
    pass


class Conflict(ServiceError):
    """Someone else changed the record since it was opened."""
