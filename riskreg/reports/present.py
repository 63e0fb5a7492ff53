"""Presentation helpers: which sections a machine's part of a report has, and the
rating table with its notes gathered once. Layout only — no engineering here."""

from __future__ import annotations

from typing import Any

SECTION_TITLES = {
    "limits": "Limits of the machine",
    "hazards": "Hazards task by task, with initial and residual ratings",
    "levels": "Required levels (PLr, SIL): how each rating was derived",
    "measures": "Protective measures and the choice of safeguard",
    "functions": "Safety functions: verification of the achieved PL",
    "distances": "Safeguards, stopping time and safety distances",
    "twohand": "Two-hand control devices",
    "verification": "Verification history and next due dates",
    "actions": "Open corrective actions",
    "revisions": "Revision history",
}


def machine_sections(rec: dict[str, Any], prefix: str, number: str = "") -> list[dict[str, Any]]:
    """The numbered sections of one machine (the two-hand section only where there is one)."""
    keys = list(SECTION_TITLES)
    if not any(g["kind"] == "two_hand_control" for g in rec["safeguards"]):
        keys.remove("twohand")
    nums = {key: f"{number}.{i}" if number else str(i) for i, key in enumerate(keys, start=1)}
    return [
        {
            "key": key,
            "num": nums[key],
            "title": SECTION_TITLES[key],
            "anchor": f"{prefix}{key}",
            "refs": nums,
        }
        for key in keys
    ]


def rating_table(
    rec: dict[str, Any],
) -> tuple[list[dict[str, Any]], list[tuple[str, list[str], str]]]:
    """Rows of the required-level table, and each warning or problem once with the
    ratings it applies to (the same note under every rating would bury the rest)."""
    rows: list[dict[str, Any]] = []
    notes: dict[tuple[str, str], list[str]] = {}
    for h in rec["hazards"]:
        if h["archived"]:
            continue
        for stage_key, stage in (("initial", "before measures"), ("residual", "residual")):
            r = h[stage_key]
            if r is None:
                continue
            d = (r.get("result") or {}).get("derivation") or {}
            d = {
                "title": d.get("title", ""),
                "formula": d.get("formula", ""),
                "inputs": d.get("inputs", []),
                "constants": d.get("constants", []),
                "steps": d.get("steps", []),
                "warnings": d.get("warnings", []),
                "problems": d.get("problems", []),
            }
            sources = []
            for c in d["constants"]:
                text = f"{c.get('citation', '')} ({c.get('status', '')})"
                if text not in sources:
                    sources.append(text)
            rows.append(
                {"hazard": h["number"], "stage": stage, "rating": r, "d": d, "sources": sources}
            )
            ref = f"H{h['number']} {'initial' if stage_key == 'initial' else 'residual'}"
            for kind in ("warnings", "problems"):
                for text in d[kind]:
                    notes.setdefault((text, kind), []).append(ref)
    flat = [
        (text, refs, "problem" if kind == "problems" else "note")
        for (text, kind), refs in notes.items()
    ]
    if len(rows) > 1:
        everyone = len(rows)
        flat = [
            (text, ["every rating"] if len(refs) == everyone else refs, kind)
            for text, refs, kind in flat
        ]
    return rows, flat


_UNITS = (
    ("_mm_per_s", "mm/s"),
    ("_percent", "%"),
    ("_years", "years"),
    ("_mm", "mm"),
    ("_in", "in"),
    ("_s", "s"),
)
_SKIP = {"name", "problems", "warnings", "derivation"}
_WORDS = {"pl": "PL", "plr": "PLr", "sil": "SIL", "pfhd": "PFHd", "mttfd": "MTTFd", "dc": "DC"}


def result_facts(result: dict[str, Any]) -> list[tuple[str, Any, str]]:
    """The plain values a stored result states at its top level, as (label, value, unit),
    in the order the engineering core gave them."""
    out: list[tuple[str, Any, str]] = []
    for key, value in result.items():
        if key in _SKIP or isinstance(value, (dict, list)) or value is None:
            continue
        unit = ""
        label = key
        for suffix, u in _UNITS:
            if key.endswith(suffix):
                label, unit = key[: -len(suffix)], u
                break
        words = [_WORDS.get(w, w) for w in label.split("_")]
        text = " ".join(words)
        out.append((text[:1].upper() + text[1:], value, unit))
    return out


def check_parts(check: dict[str, Any]) -> list[dict[str, Any]]:
    """The results stored with one distance check, each with only the constants,
    warnings and problems not already printed for an earlier result of the same check
    (a device check and its safety distance share their ISO 13855 constants)."""
    seen_constants: set[str] = set()
    seen_text: set[str] = set()
    out = []
    for r in check.get("derivation", {}).get("results", []):
        d = r.get("derivation")
        if not isinstance(d, dict):
            continue
        constants = []
        for c in d.get("constants", []):
            key = f"{c.get('citation')}|{c.get('key')}"
            if key not in seen_constants:
                seen_constants.add(key)
                constants.append(c)
        notes = {}
        for kind in ("warnings", "problems"):
            notes[kind] = [t for t in d.get(kind, []) if t not in seen_text]
            seen_text.update(notes[kind])
        out.append(
            {
                "result": r,
                "d": d,
                "constants": constants,
                "warnings": notes["warnings"],
                "problems": notes["problems"],
            }
        )
    return out


def verification_groups(rec: dict[str, Any]) -> list[dict[str, Any]]:
    """The verification history by kind and safeguard, newest group first: how many
    records, over which dates, by whom, and every record that did not simply pass in
    full. Routine passes (a weekly press inspection, say) are listed by date only;
    every record is in the embedded record.json."""
    groups: dict[tuple[str, str], dict[str, Any]] = {}
    for v in rec["verifications"]:  # newest first
        key = (v["kind"], v["safeguard"] or "")
        g = groups.get(key)
        if g is None:
            g = groups[key] = {
                "kind_label": v["kind_label"],
                "safeguard": v["safeguard"],
                "count": 0,
                "passes": 0,
                "remarks": 0,
                "fails": 0,
                "last": v["performed_on"],
                "first": v["performed_on"],
                "dates": [],
                "people": [],
                "signatures": [],
                "serials": [],
                "latest": v,
                "exceptions": [],
            }
        g["count"] += 1
        g["first"] = v["performed_on"]
        g["dates"].append(v["performed_on"])
        for field, key2 in (("performed_by", "people"), ("signature", "signatures")):
            if v[field] and v[field] not in g[key2]:
                g[key2].append(v[field])
        if v["press_serial"] and v["press_serial"] not in g["serials"]:
            g["serials"].append(v["press_serial"])
        if v["result"] == "pass":
            g["passes"] += 1
        else:
            g["fails" if v["result"] == "fail" else "remarks"] += 1
            g["exceptions"].append(v)
    return sorted(groups.values(), key=lambda g: str(g["last"]), reverse=True)
