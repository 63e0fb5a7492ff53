"""An iCalendar (RFC 5545) feed of a site's due dates.

Content lines end in CRLF and are folded so that no line is longer than 75 octets
(RFC 5545 section 3.1); TEXT values escape backslash, semicolon, comma and
newline (section 3.3.11).
"""

from __future__ import annotations

import datetime as dt
import hashlib
from collections.abc import Callable, Iterable

from riskreg.services.due import DueItem

PRODID = "-//riskreg//Due dates of safeguards and checks//EN"
LINE_LIMIT = 75  # octets, without the CRLF
CRLF = "\r\n"
# Kinds that a machine (or the site) can have more than one of without a safeguard:
# their events are told apart by a stable part of the detail.
_SEVERAL = {"lockout", "replacement", "calibration"}


def escape_text(value: str) -> str:
    """A TEXT value: backslash, semicolon, comma and line breaks escaped."""
    out = value.replace("\\", "\\\\").replace(";", "\\;").replace(",", "\\,")
    return out.replace("\r\n", "\\n").replace("\r", "\\n").replace("\n", "\\n")


def fold(line: str, limit: int = LINE_LIMIT) -> str:
    """Fold one content line into pieces of at most ``limit`` octets, each
    continuation starting with a space; a UTF-8 character is never split."""
    pieces: list[bytes] = []
    current = b""
    for ch in line:
        octets = ch.encode("utf-8")
        if len(current) + len(octets) > limit:
            pieces.append(current)
            current = b" "
        current += octets
    pieces.append(current)
    return CRLF.join(p.decode("utf-8") for p in pieces)


def uid(item: DueItem, site_id: int) -> str:
    """The same event keeps the same UID from one fetch to the next."""
    base = f"{item.kind}-{item.machine_id or 0}-{item.safeguard_id or 0}"
    if item.kind == "calibration":
        base = f"{item.kind}-site{site_id}"
    if item.kind in _SEVERAL:
        stable = item.detail.split(":", 1)[0].strip()
        base += "-" + hashlib.sha256(stable.encode("utf-8")).hexdigest()[:10]
    return f"{base}@riskreg"


def summary(item: DueItem) -> str:
    what = " / ".join(x for x in (item.machine, item.safeguard or "") if x)
    head = "OVERDUE: " if item.status == "overdue" else ""
    return f"{head}{what + ': ' if what else ''}{item.kind_label}"


def description(item: DueItem) -> str:
    lines = []
    if item.machine_name:
        lines.append(
            f"{item.machine} {item.machine_name}" + (f", {item.area}" if item.area else "")
        )
    if item.detail:
        lines.append(item.detail)
    lines.append(f"Last done: {item.last_done.isoformat() if item.last_done else 'never recorded'}")
    if item.interval_days:
        lines.append(f"Interval: {item.interval_days} days")
    return "\n".join(lines)


def calendar(
    items: Iterable[DueItem],
    *,
    site_id: int,
    name: str,
    now: dt.datetime,
    link: Callable[[DueItem], str | None] = lambda _i: None,
) -> str:
    """The whole VCALENDAR as text with CRLF line endings."""
    stamp = now.astimezone(dt.UTC).strftime("%Y%m%dT%H%M%SZ")
    lines = [
        "BEGIN:VCALENDAR",
        "VERSION:2.0",
        f"PRODID:{PRODID}",
        "CALSCALE:GREGORIAN",
        "METHOD:PUBLISH",
        f"NAME:{escape_text(name)}",
    ]
    for item in items:
        lines += [
            "BEGIN:VEVENT",
            f"UID:{uid(item, site_id)}",
            f"DTSTAMP:{stamp}",
            f"DTSTART;VALUE=DATE:{item.due_date.strftime('%Y%m%d')}",
            f"SUMMARY:{escape_text(summary(item))}",
            f"DESCRIPTION:{escape_text(description(item))}",
            "TRANSP:TRANSPARENT",
        ]
        url = link(item)
        if url:
            lines.append(f"URL:{url}")
        lines.append("END:VEVENT")
    lines.append("END:VCALENDAR")
    return "".join(fold(line) + CRLF for line in lines)
