"""Constants of standards and regulations, one module per source.

Each module exposes ``EDITIONS`` (edition → :class:`ConstantTable`) and
``DEFAULT_EDITION``. Every row names its clause and starts as "recalled"; a
site marks a row checked once someone has compared it with the standard.
"""

from __future__ import annotations

import dataclasses

from ..derivation import Constant, ConstantTable


def reedition(table: ConstantTable, edition: str, **changed: object) -> ConstantTable:
    """The same rows under another edition, with some values changed."""
    rows = tuple(
        dataclasses.replace(c, edition=edition, value=changed.get(c.key, c.value))
        for c in table.rows
    )
    return ConstantTable(source=table.source, edition=edition, rows=rows)


def pick(editions: dict[str, ConstantTable], edition: str | None, default: str) -> ConstantTable:
    from ..derivation import InputError

    key = edition or default
    if key not in editions:
        raise InputError("edition", f"must be one of {', '.join(sorted(editions))}; got {key!r}")
    return editions[key]


__all__ = ["Constant", "ConstantTable", "reedition", "pick"]
