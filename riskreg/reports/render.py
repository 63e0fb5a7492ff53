"""HTML from the report templates, and the archival PDF (PDF/A-3b) from the HTML.

Reproducible output: with the same record and the same ``generated_at``, two
renders give the same bytes. Everything WeasyPrint would otherwise take from
the clock or from chance is pinned: the document dates (``dcterms.created`` and
``dcterms.modified`` in the HTML head, which WeasyPrint writes to the info
dictionary and the XMP packet), the attachment's dates, and the PDF file
identifier (derived from the report id). Fonts come from ``static/fonts``, never
from the machine.
"""

from __future__ import annotations

import datetime as dt
import hashlib
import json
import math
from pathlib import Path
from typing import Any

import jinja2
import segno
from weasyprint import HTML, Attachment  # type: ignore[import-untyped]

from . import present

HERE = Path(__file__).resolve().parent
TEMPLATES = HERE / "templates"
STATIC = HERE / "static"
PDF_VARIANT = "pdf/a-3b"
RECORD_NAME = "record.json"


def record_bytes(record: dict[str, Any]) -> bytes:
    """The canonical JSON of a record: sorted keys, UTF-8, two-space indent, final newline."""
    return (json.dumps(record, sort_keys=True, ensure_ascii=False, indent=2) + "\n").encode()


def sha256(data: bytes) -> str:
    return hashlib.sha256(data).hexdigest()


def pdf_identifier(report_id: str) -> bytes:
    """The PDF file identifier: a digest of the report id, so it is the same at every render."""
    return hashlib.md5(report_id.encode(), usedforsecurity=False).hexdigest().encode()


def w3c_datetime(value: dt.datetime) -> str:
    return value.astimezone(dt.UTC).strftime("%Y-%m-%dT%H:%M:%SZ")


# --- template filters -----------------------------------------------------------------

_SUPERSCRIPT = str.maketrans("-0123456789", "⁻⁰¹²³⁴⁵⁶⁷⁸⁹")


def _fmt_num(value: Any, digits: int = 4) -> str:
    if value is None:
        return "—"
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, int):
        return f"{value:,}".replace(",", " ") if abs(value) >= 10000 else str(value)
    if isinstance(value, float):
        if math.isnan(value) or math.isinf(value):
            return "—"
        if value != 0 and (abs(value) < 1e-3 or abs(value) >= 1e7):
            mant, exp = f"{value:.{max(digits - 1, 1)}e}".split("e")
            mant = mant.rstrip("0").rstrip(".")
            return f"{mant} × 10{str(int(exp)).translate(_SUPERSCRIPT)}"
        text = f"{value:.{digits}g}" if abs(value) < 10**digits else f"{value:.0f}"
        if "e" in text:
            text = f"{value:.0f}"
        return text
    return str(value)


def f_num(value: Any, digits: int = 4) -> str:
    return _fmt_num(value, digits)


def f_mm(value: float | None, units: str = "mm") -> str:
    """A length stored in mm, in the site's units (both when the site works in inches)."""
    if value is None:
        return "—"
    if units == "in":
        return f"{value / 25.4:.2f} in ({value:.0f} mm)"
    return f"{value:.0f} mm"


def f_ms(seconds: float | None) -> str:
    if seconds is None:
        return "—"
    ms = seconds * 1000
    text = f"{ms:.1f}".rstrip("0").rstrip(".")
    return f"{text} ms"


def f_date(value: str | None) -> str:
    return value or "—"


def f_datetime(value: str | None) -> str:
    """'2026-12-01T22:34:07Z' → '2026-12-01 22:34 UTC' (records keep UTC to the second)."""
    if not value:
        return "—"
    try:
        when = dt.datetime.fromisoformat(value.replace("Z", "+00:00"))
    except ValueError:
        return value
    if when.tzinfo is None:
        when = when.replace(tzinfo=dt.UTC)
    return when.astimezone(dt.UTC).strftime("%Y-%m-%d %H:%M UTC")


def f_level(level: str | None) -> str:
    if not level:
        return "not rated"
    return f"PL {level}" if len(level) == 1 else level


def f_yesno(value: Any) -> str:
    if value is None:
        return "—"
    return "yes" if value else "no"


def f_quantity(value: Any, unit: str = "") -> str:
    if isinstance(value, list):
        text = ", ".join(_fmt_num(v, 6) for v in value)
    else:
        text = _fmt_num(value, 6)
    return f"{text} {unit}".strip() if unit and value is not None else text


def f_params(params: dict[str, Any]) -> str:
    return ", ".join(str(v) for v in params.values())


def qr_data_uri(url: str) -> str:
    """A QR code of ``url`` as an SVG data URI (dark modules only, no fill behind)."""
    code = segno.make_qr(url, error="m")
    uri: str = code.svg_data_uri(scale=4, border=0, dark="#000", light=None)
    return uri


def _env() -> jinja2.Environment:
    env = jinja2.Environment(
        loader=jinja2.FileSystemLoader(str(TEMPLATES)),
        autoescape=jinja2.select_autoescape(["html"]),
        undefined=jinja2.StrictUndefined,
        trim_blocks=True,
        lstrip_blocks=True,
    )
    env.filters.update(
        num=f_num,
        mm=f_mm,
        ms=f_ms,
        date=f_date,
        datetime=f_datetime,
        level=f_level,
        yesno=f_yesno,
        quantity=f_quantity,
        params=f_params,
    )
    env.globals["qr"] = qr_data_uri
    env.globals["rating_table"] = present.rating_table
    env.globals["result_facts"] = present.result_facts
    env.globals["check_parts"] = present.check_parts
    env.globals["verification_groups"] = present.verification_groups
    return env


ENV = _env()


def render_html(template: str, **context: Any) -> str:
    return ENV.get_template(template).render(**context)


def write_pdf(
    html: str,
    *,
    report_id: str,
    generated_at: dt.datetime,
    record_json: bytes,
    description: str,
) -> tuple[bytes, int]:
    """The PDF/A-3b with ``record_json`` embedded as ``record.json`` (relationship Data).

    Returns the PDF and its page count.
    """
    document = HTML(string=html, base_url=str(STATIC) + "/").render()
    pdf = document.write_pdf(**pdf_options(report_id, generated_at, record_json, description))
    assert isinstance(pdf, bytes)
    return pdf, len(document.pages)


def pdf_options(
    report_id: str, generated_at: dt.datetime, record_json: bytes, description: str
) -> dict[str, Any]:
    """The options every report is written with (the benchmark's floor uses the same)."""
    when = generated_at.astimezone(dt.UTC).replace(tzinfo=None)
    return {
        "pdf_variant": PDF_VARIANT,
        "pdf_identifier": pdf_identifier(report_id),
        "attachments": [
            Attachment(
                string=record_json,
                name=RECORD_NAME,
                description=description,
                created=when,
                modified=when,
                relationship="Data",
            )
        ],
    }
