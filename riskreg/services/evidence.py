"""Evidence files: photos, PDFs and meter exports, stored by SHA-256.

The type is decided by the file's content, never its name; the size is capped.
Files live under the instance folder as ``evidence/<aa>/<sha256>``.
"""

from __future__ import annotations

import hashlib
import os
import re
from pathlib import Path

from sqlalchemy.orm import Session

from riskreg.model import EvidenceFile

from .errors import ValidationError

MAX_BYTES = 20 * 1024 * 1024
IMAGE_TYPES = {"image/jpeg", "image/png", "image/webp"}
ALL_TYPES = IMAGE_TYPES | {"application/pdf", "text/csv", "text/plain"}


def sniff(data: bytes) -> str | None:
    """The content type told by the first bytes, or None when not accepted."""
    if data.startswith(b"\xff\xd8\xff"):
        return "image/jpeg"
    if data.startswith(b"\x89PNG\r\n\x1a\n"):
        return "image/png"
    if data[:4] == b"RIFF" and data[8:12] == b"WEBP":
        return "image/webp"
    if data.startswith(b"%PDF-"):
        return "application/pdf"
    head = data[:4096]
    if b"\x00" in head:
        return None
    try:
        head.decode("utf-8")
    except UnicodeDecodeError:
        # a multi-byte character cut at 4096 bytes is still text
        try:
            head[:-3].decode("utf-8")
        except UnicodeDecodeError:
            return None
    first = head.split(b"\n", 1)[0]
    return "text/csv" if b"," in first or b";" in first else "text/plain"


def safe_name(filename: str) -> str:
    """A display name without any directory part or control characters."""
    name = (filename or "").replace("\\", "/").rsplit("/", 1)[-1]
    name = re.sub(r"[\x00-\x1f\x7f]", "", name).strip().lstrip(".")
    return name[:200] or "file"


def check_upload(data: bytes, filename: str, allowed: set[str], field: str = "file") -> str:
    if len(data) == 0:
        raise ValidationError({field: "The file is empty; choose the file again."})
    if len(data) > MAX_BYTES:
        raise ValidationError(
            {
                field: f"The file is {len(data) / 1048576:.1f} MB; the limit is "
                f"{MAX_BYTES // 1048576} MB. Send a smaller file."
            }
        )
    kind = sniff(data)
    if kind is None or kind not in allowed:
        names = ", ".join(sorted(t.split("/")[1].upper() for t in allowed))
        raise ValidationError(
            {
                field: f"{safe_name(filename)!r} is not an accepted file by its content "
                f"(accepted: {names})."
            }
        )
    return kind


def evidence_path(instance_path: str | os.PathLike[str], sha256: str) -> Path:
    if not re.fullmatch(r"[0-9a-f]{64}", sha256):
        raise ValueError("not a SHA-256")
    return Path(instance_path) / "evidence" / sha256[:2] / sha256


def store(
    session: Session,
    instance_path: str | os.PathLike[str],
    data: bytes,
    filename: str,
    *,
    allowed: set[str] = ALL_TYPES,
    user_id: int | None = None,
    field: str = "file",
) -> EvidenceFile:
    """Check and store a file; the row is added to the session (not committed)."""
    kind = check_upload(data, filename, allowed, field)
    digest = hashlib.sha256(data).hexdigest()
    path = evidence_path(instance_path, digest)
    if not path.exists():
        path.parent.mkdir(parents=True, exist_ok=True)
        tmp = path.with_suffix(".part")
        tmp.write_bytes(data)
        os.replace(tmp, path)
    row = EvidenceFile(
        sha256=digest,
        filename=safe_name(filename),
        content_type=kind,
        size=len(data),
        uploaded_by_id=user_id,
    )
    session.add(row)
    return row
