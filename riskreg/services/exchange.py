"""One site's register in and out: a versioned JSON document, and tables for spreadsheets.

:func:`export_site` writes the whole register of one site as a JSON document
(``{"format": "riskreg-site", "version": 1, ...}``, described in
``docs/export-format.md``). Every record carries an export key that does not
depend on database ids (``machine:PR-101``, ``machine:PR-101/rev:1/hazard:3``),
references between records use those keys, people are named by e-mail, and every
list has a fixed order, so that export → import into an empty register → export
gives a byte-identical file (:func:`dumps`).

:func:`import_site` checks everything first and reports every problem with its
record path and field; only when there is none does it write the site, all in one
transaction. It writes the audit trail entries from the file (not new ones for
each row) and one entry in the register's system log (an :class:`AuditEntry` with
entity ``"system"`` and no site).

:func:`export_table` gives the machines, the hazards with their current ratings,
or the due items as CSV (UTF-8, header row) or XLSX.
"""

from __future__ import annotations

import csv
import datetime as dt
import hashlib
import io
import json
import math
import os
import re
from collections.abc import Callable, Iterable, Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

from sqlalchemy import (
    JSON,
    Boolean,
    Date,
    DateTime,
    Float,
    Integer,
    String,
    Table,
    and_,
    func,
    insert,
    null,
    or_,
    select,
    update,
)
from sqlalchemy.exc import SQLAlchemyError
from sqlalchemy.orm import Session
from sqlalchemy.sql.elements import ClauseElement, ColumnElement

from riskreg.model import (
    Area,
    Assessment,
    AuditEntry,
    Base,
    BrakeMonitorSetting,
    Component,
    CorrectiveAction,
    DistanceCheck,
    EvidenceFile,
    Hazard,
    HazardAccess,
    Instrument,
    LockoutProcedure,
    Machine,
    Modification,
    PressProfile,
    ProtectiveMeasure,
    RiskRating,
    Safeguard,
    SafeguardOption,
    SafetyFunction,
    SafetyFunctionPart,
    ShiftCheck,
    ShiftChecklist,
    Site,
    StoppingTimeMeasurement,
    Task,
    User,
    Verification,
    VerificationInterval,
    hazard_measure,
    hazard_safety_function,
    verification_evidence,
)
from riskreg.vocab import (
    ASSESSMENT_STATUSES,
    HAZARD_GROUPS,
    MACHINE_KINDS,
    MEASURE_KINDS,
    MEASURE_STATUSES,
    MEASURE_STEPS,
    OPERATING_MODES,
    PHASES,
    RATING_METHODS,
    RATING_STAGES,
)

from . import due, evidence
from .errors import ValidationError
from .register import B11_LEVELS, PL_LEVELS, SIL_LEVELS, compute_rating
from .revisions import MODIFICATION_KINDS
from .safeguards import SAFEGUARD_KINDS, SAFEGUARD_STATUSES
from .users import EMAIL
from .verification import KINDS as VERIFICATION_KINDS
from .verification import RESULTS as VERIFICATION_RESULTS

FORMAT = "riskreg-site"
VERSION = 1
MAX_FILE_BYTES = 512 * 1024 * 1024
TEXT_LIMIT = 100_000  # characters of a text field with no narrower limit of its own
JSON_LIMIT = 5_000_000  # characters of one stored JSON value (a derivation, a snapshot)
KEY_LIMIT = 1000
CREDENTIAL_KEYS = frozenset({"password_hash", "token_hash"})
LOCKED_PASSWORD = "!"  # never a valid hash: an imported person cannot log in until given one
PLS = ("a", "b", "c", "d", "e")
CATEGORIES = ("B", "1", "2", "3", "4")
UTC = dt.UTC


# --- the shape of the document ------------------------------------------------------------


@dataclass(frozen=True)
class F:
    """A plain field: a column of the record, under the same name.

    Its type, length and whether it may be null come from the model; the rest
    (allowed values, ranges) are the services' rules for the same field.
    """

    name: str
    choices: tuple[str, ...] | None = None
    lo: float | None = None
    hi: float | None = None
    lo_open: bool = False
    nonempty: bool = False
    past: bool = False  # the date of work done: not in the future, not before 1950
    limit: int | None = None  # characters; default: the column's length, else TEXT_LIMIT
    shape: str = "any"  # JSON: dict, str_dict, str_list, num_list
    items: tuple[int, int] | None = None  # JSON lists: fewest and most items
    unit: str = ""


@dataclass(frozen=True)
class Ref:
    """A reference to another record, by its key (a person: by e-mail)."""

    name: str
    column: str
    target: str
    scope: str | None = None  # "assessment" or "machine": must be in the same one
    deferred: bool = False  # set once every record is written (lineage of copies)


@dataclass(frozen=True)
class Links:
    """A many-to-many association kept as a list of keys on this record."""

    name: str
    table: Table
    own: str
    other: str
    target: str
    scope: str | None = None


@dataclass(frozen=True)
class JsonRefs:
    """A JSON list of record ids kept as a list of keys."""

    name: str
    column: str
    target: str
    scope: str | None = None


@dataclass(frozen=True)
class Kind:
    name: str  # the kind of record, as references name it
    model: type[Base]
    list_name: str  # its name in the document under its parent
    fields: tuple[F, ...]
    refs: tuple[Ref, ...] = ()
    links: tuple[Links, ...] = ()
    json_refs: tuple[JsonRefs, ...] = ()
    children: tuple[str, ...] = ()
    parent: str | None = None  # kind of the parent record ("site" at the top)
    parent_column: str | None = None
    single: bool = False  # at most one per parent: an object or null, not a list
    unique: tuple[tuple[str, ...], ...] = ()  # among the records of one parent
    excluded: tuple[str, ...] = ("id",)
    sort: Callable[[Any], Any] = lambda o: o.id
    key_part: Callable[[Any, int], str] | None = None  # default "<name>:<n>"

    @property
    def table(self) -> Table:
        return _table(self.model)


def _table(model: type[Base]) -> Table:
    t = model.__table__
    assert isinstance(t, Table)
    return t


def _esc(text: str) -> str:
    """A name inside a key: '/' separates the parts of a key, so it is escaped."""
    return text.replace("%", "%25").replace("/", "%2F")


KINDS: dict[str, Kind] = {}


def _kind(k: Kind) -> Kind:
    KINDS[k.name] = k
    return k


SITE = _kind(
    Kind(
        "site",
        Site,
        "site",
        (
            F("name", nonempty=True),
            F("units", choices=("mm", "in")),
            F("distance_method", choices=("ISO", "US")),
            F("rating_method", choices=tuple(RATING_METHODS)),
            F("editions", shape="str_dict"),
            F("stop_time_allowance_percent", lo=0, hi=100, unit="%"),
            F("base_url"),
            F("allow_self_approval"),
            F("created_at"),
        ),
        single=True,
    )
)
_kind(
    Kind(
        "file",
        EvidenceFile,
        "files",
        (
            F("sha256"),
            F("filename", nonempty=True),
            F("content_type", choices=tuple(sorted(evidence.ALL_TYPES))),
            F("size", lo=0, hi=evidence.MAX_BYTES, unit="bytes"),
            F("uploaded_at"),
        ),
        refs=(Ref("uploaded_by", "uploaded_by_id", "person"),),
        parent="site",
        sort=lambda o: (o.sha256, o.filename, _dt_out(o.uploaded_at) or "", o.id),
    )
)
_kind(
    Kind(
        "component",
        Component,
        "components",
        (
            F("maker", nonempty=True),
            F("model", nonempty=True),
            F("kind", nonempty=True),
            F("pl", choices=PLS),
            F("category", choices=CATEGORIES),
            F("pfhd", lo=0, hi=1e-4, lo_open=True, unit="per hour"),
            F("b10d", lo=0, lo_open=True, unit="cycles"),
            F("mttfd_years", lo=0, hi=2500, lo_open=True, unit="years"),
            F("response_time_s", lo=0, hi=10, unit="s"),
            F("espe_type", lo=2, hi=4),
            F("document"),
            F("notes"),
        ),
        parent="site",
    )
)
_kind(
    Kind(
        "area",
        Area,
        "areas",
        (F("name", nonempty=True),),
        parent="site",
        parent_column="site_id",
        unique=(("name",),),
        sort=lambda o: (o.name, o.id),
        key_part=lambda o, n: f"area:{_esc(o.name)}",
    )
)
_kind(
    Kind(
        "instrument",
        Instrument,
        "instruments",
        (
            F("name", nonempty=True),
            F("serial"),
            F("calibrated_on", past=True),
            F("calibration_interval_days", lo=1, hi=3650, unit="days"),
            F("active"),
        ),
        refs=(Ref("certificate", "certificate_id", "file"),),
        parent="site",
        parent_column="site_id",
        unique=(("name",),),
        sort=lambda o: (o.name, o.id),
        key_part=lambda o, n: f"instrument:{_esc(o.name)}",
    )
)
_kind(
    Kind(
        "machine",
        Machine,
        "machines",
        (
            F("asset_tag", nonempty=True),
            F("name", nonempty=True),
            F("kind", choices=tuple(MACHINE_KINDS)),
            F("maker", limit=200),
            F("model", limit=200),
            F("serial", limit=200),
            F("year", lo=1900),  # and not after this year (checked with today's date)
            F("location"),
            F("notes", limit=10000),
            F("active"),
            F("do_not_operate"),
            F("do_not_operate_reason"),
            F("created_at"),
        ),
        refs=(Ref("area", "area_id", "area"), Ref("photo", "photo_id", "file")),
        children=(
            "assessment",
            "safeguard",
            "press",
            "measurement",
            "verification",
            "action",
            "checklist",
            "shift_check",
            "lockout",
            "modification",
        ),
        parent="site",
        parent_column="site_id",
        unique=(("asset_tag",),),
        excluded=("id", "version"),
        sort=lambda o: (o.asset_tag, o.id),
        key_part=lambda o, n: f"machine:{_esc(o.asset_tag)}",
    )
)
_kind(
    Kind(
        "assessment",
        Assessment,
        "assessments",
        (
            F("revision", lo=1, hi=100000),
            F("status", choices=tuple(ASSESSMENT_STATUSES)),
            F("scope"),
            F("intended_use"),
            F("foreseeable_misuse"),
            F("space_limits"),
            F("time_limits"),
            F("persons_exposed"),
            F("assessors"),
            F("approved_at"),
            F("submitted_at"),
            F("snapshot", shape="dict"),
            F("change_reason"),
            F("created_at"),
        ),
        refs=(
            Ref("approver", "approver_id", "person"),
            Ref("created_by", "created_by_id", "person"),
        ),
        children=("task", "hazard", "safety_function", "measure"),
        parent="machine",
        parent_column="machine_id",
        unique=(("revision",),),
        sort=lambda o: (o.revision, o.id),
        key_part=lambda o, n: f"rev:{o.revision}",
    )
)
_kind(
    Kind(
        "task",
        Task,
        "tasks",
        (
            F("phase", choices=tuple(PHASES)),
            F("description", nonempty=True),
            F("performed_by"),
            F("frequency"),
            F("archived"),
        ),
        refs=(Ref("origin", "origin_id", "task", deferred=True),),
        parent="assessment",
        parent_column="assessment_id",
    )
)
_kind(
    Kind(
        "hazard",
        Hazard,
        "hazards",
        (
            F("hazard_group", choices=tuple(HAZARD_GROUPS)),
            F("hazard_type"),
            F("danger_zone"),
            F("event", limit=5000),
            F("harm", limit=5000),
            F("persons_exposed"),
            F("residual_accepted_at"),
            F("interim_measures", limit=5000),
            F("archived"),
            F("created_at"),
        ),
        refs=(
            Ref("task", "task_id", "task", scope="assessment"),
            Ref("photo", "photo_id", "file"),
            Ref("residual_accepted_by", "residual_accepted_by_id", "person"),
            Ref("origin", "origin_id", "hazard", deferred=True),
        ),
        children=("rating", "option", "access"),
        parent="assessment",
        parent_column="assessment_id",
        excluded=("id", "version"),
    )
)
_kind(
    Kind(
        "rating",
        RiskRating,
        "ratings",
        (
            F("stage", choices=tuple(RATING_STAGES)),
            F("method", choices=tuple(RATING_METHODS)),
            F("parameters", shape="dict"),
            F("edition", nonempty=True),
            F("derived_level", nonempty=True),
            F("derivation", shape="dict"),
            F("override_level"),
            F("override_source"),
            F("override_justification"),
            F("override_approved_by"),
            F("superseded"),
            F("created_at"),
        ),
        refs=(Ref("created_by", "created_by_id", "person"),),
        parent="hazard",
        parent_column="hazard_id",
    )
)
_kind(
    Kind(
        "option",
        SafeguardOption,
        "options",
        (
            F("kind", choices=tuple(MEASURE_KINDS)),
            F("reachable_pl", choices=PLS),
            F("space_available_mm", lo=0, hi=10000, unit="mm"),
            F("cost", lo=0, hi=1e9),
            F("effect_on_work"),
            F("chosen"),
            F("reason"),
        ),
        parent="hazard",
        parent_column="hazard_id",
    )
)
_kind(
    Kind(
        "access",
        HazardAccess,
        "access",
        (
            F("access", choices=("none", "occasional", "frequent")),
            F("ejection"),
            F("other_people_exposed"),
            F("hand_feeding"),
            F("chosen_reason"),
            F("chosen_by"),
        ),
        parent="hazard",
        parent_column="hazard_id",
        single=True,
        key_part=lambda o, n: "access",
    )
)
_kind(
    Kind(
        "safety_function",
        SafetyFunction,
        "safety_functions",
        (
            F("name", nonempty=True),
            F("trigger"),
            F("reaction"),
            F("modes"),
            F("response_time_s", lo=0, hi=10, unit="s"),
            F("archived"),
        ),
        refs=(Ref("origin", "origin_id", "safety_function", deferred=True),),
        links=(
            Links(
                "hazards",
                hazard_safety_function,
                "safety_function_id",
                "hazard_id",
                "hazard",
                "assessment",
            ),
        ),
        children=("part",),
        parent="assessment",
        parent_column="assessment_id",
        key_part=lambda o, n: f"function:{n}",
    )
)
_kind(
    Kind(
        "part",
        SafetyFunctionPart,
        "parts",
        (
            F("role", choices=("input", "logic", "output")),
            F("name", nonempty=True),
            F("given_pl", choices=PLS),
            F("given_pfhd", lo=0, hi=1e-4, lo_open=True, unit="per hour"),
            F("category", choices=CATEGORIES),
            F("mttfd_years", shape="num_list", items=(1, 2), lo=0, lo_open=True, unit="years"),
            F("b10d", lo=0, lo_open=True, unit="cycles"),
            F("days_per_year", lo=0, hi=366, lo_open=True, unit="days"),
            F("hours_per_day", lo=0, hi=24, lo_open=True, unit="h"),
            F("cycle_time_s", lo=0, hi=1e7, lo_open=True, unit="s"),
            F("dcavg_percent", lo=0, hi=99.99, unit="%"),
            F("ccf_points", lo=0, hi=100),
            F("well_tried"),
            F("test_rate_ratio", lo=0, lo_open=True),
            F("installed_on"),
        ),
        refs=(Ref("component", "component_id", "component"),),
        parent="safety_function",
        parent_column="safety_function_id",
    )
)
_kind(
    Kind(
        "measure",
        ProtectiveMeasure,
        "measures",
        (
            F("step", choices=tuple(MEASURE_STEPS)),
            F("kind", choices=tuple(MEASURE_KINDS)),
            F("description", limit=5000),
            F("status", choices=tuple(MEASURE_STATUSES)),
            F("archived"),
        ),
        refs=(
            Ref("safety_function", "safety_function_id", "safety_function", scope="assessment"),
            Ref("origin", "origin_id", "measure", deferred=True),
        ),
        links=(
            Links("hazards", hazard_measure, "measure_id", "hazard_id", "hazard", "assessment"),
        ),
        parent="assessment",
        parent_column="assessment_id",
    )
)
_kind(
    Kind(
        "safeguard",
        Safeguard,
        "safeguards",
        (
            F("kind", choices=tuple(SAFEGUARD_KINDS)),
            F("label", nonempty=True),
            F("response_time_s", lo=0, hi=10, unit="s"),
            F("installed_distance_mm", lo=0, hi=10000, unit="mm"),
            F("parameters", shape="dict"),
            F("status", choices=SAFEGUARD_STATUSES),
            F("trusted"),
            F("needs_revalidation"),
            F("created_at"),
        ),
        refs=(
            Ref("component", "component_id", "component"),
            Ref("measure", "measure_id", "measure", scope="machine"),
        ),
        parent="machine",
        parent_column="machine_id",
        excluded=("id", "version"),
    )
)
_kind(
    Kind(
        "press",
        PressProfile,
        "press",
        (
            F("clutch", choices=("part", "full")),
            F("engaging_points", lo=1, hi=12),
            F("revolution_time_s", lo=0, hi=60, lo_open=True, unit="s"),
            F("brake_monitor"),
            F("control_reliable"),
            F("anti_repeat"),
            F("single_stroke"),
        ),
        children=("monitor_setting",),
        parent="machine",
        parent_column="machine_id",
        single=True,
        key_part=lambda o, n: "press",
    )
)
_kind(
    Kind(
        "monitor_setting",
        BrakeMonitorSetting,
        "monitor_settings",
        (
            F("set_on", past=True),
            F("setpoint_s", lo=0, hi=10, lo_open=True, unit="s"),
            F("set_by"),
            F("note"),
        ),
        parent="press",
        parent_column="profile_id",
        sort=lambda o: (o.set_on, o.id),
        key_part=lambda o, n: f"setting:{n}",
    )
)
_kind(
    Kind(
        "measurement",
        StoppingTimeMeasurement,
        "measurements",
        (
            F("measured_on", past=True),
            F("instrument"),
            F("position"),
            F("measured_by"),
            F("trials_s", shape="num_list", items=(1, 1000), lo=0, hi=10, lo_open=True, unit="s"),
            F("allowance_percent", lo=0, hi=100, unit="%"),
            F("brake_monitor_limit_s", lo=0, hi=10, lo_open=True, unit="s"),
            F("t_used_s", lo=0, hi=20, lo_open=True, unit="s"),
            F("derivation", shape="dict"),
            F("notes"),
            F("created_at"),
        ),
        refs=(Ref("instrument_record", "instrument_id", "instrument"),),
        children=("check",),
        parent="machine",
        parent_column="machine_id",
        sort=lambda o: (o.measured_on, o.id),
    )
)
_kind(
    Kind(
        "check",
        DistanceCheck,
        "checks",
        (
            F("method", choices=("ISO", "US")),
            F("required_mm", lo=0, unit="mm"),
            F("installed_mm", lo=0, unit="mm"),
            F("passed"),
            F("message"),
            F("derivation", shape="dict"),
        ),
        refs=(Ref("safeguard", "safeguard_id", "safeguard", scope="machine"),),
        parent="measurement",
        parent_column="measurement_id",
    )
)
_kind(
    Kind(
        "verification",
        Verification,
        "verifications",
        (
            F("kind", choices=tuple(VERIFICATION_KINDS)),
            F("performed_on", past=True),
            F("performed_by", nonempty=True),
            F("result", choices=tuple(VERIFICATION_RESULTS)),
            F("measured_values"),
            F("notes"),
            F("press_serial"),
            F("signature"),
            F("created_at"),
        ),
        refs=(
            Ref("safeguard", "safeguard_id", "safeguard", scope="machine"),
            Ref("instrument", "instrument_id", "instrument"),
            Ref("measurement", "measurement_id", "measurement", scope="machine"),
        ),
        links=(
            Links("evidence", verification_evidence, "verification_id", "evidence_file_id", "file"),
        ),
        parent="machine",
        parent_column="machine_id",
        sort=lambda o: (o.performed_on, o.id),
    )
)
_kind(
    Kind(
        "action",
        CorrectiveAction,
        "actions",
        (
            F("source", nonempty=True),
            F("title", nonempty=True),
            F("description"),
            F("owner"),
            F("due_on"),
            F("status", choices=("open", "closed")),
            F("closing_note"),
            F("closed_at"),
            F("created_at"),
        ),
        refs=(
            Ref("safeguard", "safeguard_id", "safeguard", scope="machine"),
            Ref("verification", "verification_id", "verification", scope="machine"),
            Ref("closing_evidence", "closing_evidence_id", "file"),
        ),
        parent="machine",
        parent_column="machine_id",
    )
)
_kind(
    Kind(
        "checklist",
        ShiftChecklist,
        "checklist",
        (
            F("items", shape="str_list", items=(1, 40), limit=2000),
            F("shifts_per_day", lo=1, hi=3),
            F("working_days"),
            F("active_since"),
        ),
        parent="machine",
        parent_column="machine_id",
        single=True,
        key_part=lambda o, n: "checklist",
    )
)
_kind(
    Kind(
        "shift_check",
        ShiftCheck,
        "shift_checks",
        (
            F("shift_date", past=True),
            F("shift", lo=1, hi=3),
            F("performed_by"),
            F("failed_items", shape="str_list", items=(0, 40), limit=2000),
            F("notes"),
            F("created_at"),
        ),
        parent="machine",
        parent_column="machine_id",
        unique=(("shift_date", "shift"),),
        sort=lambda o: (o.shift_date, o.shift, o.id),
        key_part=lambda o, n: f"shift:{o.shift_date.isoformat()}:{o.shift}",
    )
)
_kind(
    Kind(
        "lockout",
        LockoutProcedure,
        "lockouts",
        (
            F("title", nonempty=True),
            F("last_inspected_on", past=True),
            F("interval_days", lo=1, hi=3650, unit="days"),
            F("inspected_by"),
        ),
        parent="machine",
        parent_column="machine_id",
    )
)
_kind(
    Kind(
        "modification",
        Modification,
        "modifications",
        (
            F("made_on", past=True),
            F("kind", choices=tuple(MODIFICATION_KINDS)),
            F("description"),
            F("recorded_by"),
            F("created_at"),
        ),
        refs=(Ref("assessment", "assessment_id", "assessment", scope="machine"),),
        json_refs=(JsonRefs("safeguards", "safeguard_ids", "safeguard", "machine"),),
        parent="machine",
        parent_column="machine_id",
        sort=lambda o: (o.made_on, o.id),
    )
)
_kind(
    Kind(
        "interval",
        VerificationInterval,
        "intervals",
        (F("kind", choices=tuple(VERIFICATION_KINDS)), F("days", lo=1, hi=3650, unit="days")),
        refs=(Ref("safeguard", "safeguard_id", "safeguard"),),
        parent="site",
        parent_column="site_id",
        unique=(("safeguard", "kind"),),
    )
)

SITE_CHILDREN = ("area", "instrument", "machine", "interval")
TOP_LISTS = ("people", "files", "components", "areas", "instruments", "machines", "intervals")
# Written in this order: each kind after the kinds it refers to.
WRITE_ORDER = ("file", "component", "area", "instrument", "machine", "interval")
# Audit entries: the columns kept, and those replaced by keys (or dropped).
AUDIT_FIELDS = ("at", "user_email", "action", "entity", "before", "after")
AUDIT_KEYS = ("record", "machine")
NOT_EXPORTED_TABLES = {
    "user_account": "people appear by e-mail and name only, never with credentials",
    "calendar_token": "secrets of the calendar feeds; make new ones after an import",
    "alembic_version": "the schema revision, not register content",
    "due_item": "derived: the due items are worked out again from the imported register",
    "due_refresh": "derived: the day the due items were last worked out",
}


def all_kinds() -> list[Kind]:
    return list(KINDS.values())


# --- values in and out --------------------------------------------------------------------


def _dt_out(value: dt.datetime | None) -> str | None:
    if value is None:
        return None
    if value.tzinfo is None:
        value = value.replace(tzinfo=UTC)
    return value.astimezone(UTC).isoformat()


_TYPES: dict[tuple[str, str], str] = {}


def _column_type(kind: Kind, name: str) -> str:
    """bool, datetime, date, float, int, json or str: how the column's values travel."""
    found = _TYPES.get((kind.table.name, name))
    if found is not None:
        return found
    t = kind.table.c[name].type
    rules: tuple[tuple[type[Any], str], ...] = (
        (Boolean, "bool"),
        (DateTime, "datetime"),
        (Date, "date"),
        (Float, "float"),
        (Integer, "int"),
        (JSON, "json"),
        (String, "str"),
    )
    for cls, label in rules:
        if isinstance(t, cls):
            _TYPES[(kind.table.name, name)] = label
            return label
    raise TypeError(f"{kind.name}.{name}: no export rule for {t!r}")  # pragma: no cover


def _out(kind: Kind, name: str, value: Any) -> Any:
    if value is None:
        return None
    t = _column_type(kind, name)
    if t == "datetime":
        return _dt_out(value)
    if t == "date":
        return value.isoformat()
    if t == "float":
        return float(value)
    if t == "json":
        return json.loads(json.dumps(value))
    return value


def dumps(doc: Mapping[str, Any]) -> bytes:
    """The document as UTF-8 JSON: sorted keys, fixed indentation and separators."""
    text = json.dumps(
        doc, sort_keys=True, ensure_ascii=False, indent=1, separators=(",", ": "), allow_nan=False
    )
    return (text + "\n").encode("utf-8")


# --- export -------------------------------------------------------------------------------


def _scrub(value: Any) -> Any:
    """A stored audit value without credentials (hashes of passwords or tokens)."""
    if isinstance(value, dict):
        return {k: _scrub(v) for k, v in value.items() if k not in CREDENTIAL_KEYS}
    if isinstance(value, list):
        return [_scrub(v) for v in value]
    return value


class _Exporter:
    def __init__(self, session: Session, site: Site) -> None:
        self.session = session
        self.site = site
        self.rows: dict[str, list[Any]] = {}  # kind → rows, sorted, grouped by parent below
        self.by_parent: dict[str, dict[int, list[Any]]] = {}
        self.keys: dict[str, dict[int, str]] = {}  # kind → id → key
        self.order: dict[str, dict[int, int]] = {}  # kind → id → position in the document
        self.people: dict[int, User] = {}

    # loading

    def _scope(self, kind: Kind) -> Any:
        """A subquery of the ids of this kind's records that belong to the site."""
        model: Any = kind.model
        if kind.parent == "site":
            return select(model.id).where(model.site_id == self.site.id)
        parent = KINDS[str(kind.parent)]
        return select(model.id).where(
            getattr(model, str(kind.parent_column)).in_(self._scope(parent))
        )

    def load(self) -> None:
        for kind in KINDS.values():
            if kind.parent_column is None:
                continue
            model: Any = kind.model
            rows = list(self.session.scalars(select(model).where(model.id.in_(self._scope(kind)))))
            self.rows[kind.name] = rows
        refs: dict[str, set[int]] = {"file": set(), "component": set(), "person": set()}
        for kind in KINDS.values():
            for r in kind.refs:
                if r.target in refs:
                    refs[r.target].update(
                        v for o in self.rows.get(kind.name, []) if (v := getattr(o, r.column))
                    )
        self.links: dict[tuple[str, str], dict[int, list[int]]] = {}
        for kind in KINDS.values():
            for link in kind.links:
                own = link.table.c[link.own]
                other = link.table.c[link.other]
                got: dict[int, list[int]] = {}
                for a, b in self.session.execute(
                    select(own, other).where(own.in_(self._scope(kind)))
                ):
                    got.setdefault(a, []).append(b)
                    if link.target == "file":
                        refs["file"].add(b)
                self.links[(kind.name, link.name)] = got
        files = self._by_ids(EvidenceFile, refs["file"])
        refs["person"].update(f.uploaded_by_id for f in files if f.uploaded_by_id)
        self.rows["file"] = files
        self.rows["component"] = self._by_ids(Component, refs["component"])
        self.people = {u.id: u for u in self._by_ids(User, refs["person"])}
        for kind in KINDS.values():
            if kind.name == "site":
                continue
            rows = sorted(self.rows.get(kind.name, []), key=kind.sort)
            if kind.name == "component":
                rows = sorted(rows, key=lambda c: (self._component_sort(c), c.id))
            self.rows[kind.name] = rows
            groups: dict[int, list[Any]] = {}
            for o in rows:
                pid = getattr(o, kind.parent_column) if kind.parent_column else 0
                groups.setdefault(pid, []).append(o)
            self.by_parent[kind.name] = groups

    def _by_ids(self, model: Any, ids: Iterable[int]) -> list[Any]:
        wanted = sorted(set(ids))
        out: list[Any] = []
        for i in range(0, len(wanted), 500):
            out.extend(self.session.scalars(select(model).where(model.id.in_(wanted[i : i + 500]))))
        return out

    def _component_sort(self, c: Component) -> str:
        k = KINDS["component"]
        return json.dumps(
            [_out(k, f.name, getattr(c, f.name)) for f in k.fields], sort_keys=True, default=str
        )

    # keys

    def assign_keys(self) -> None:
        self.keys = {k: {} for k in KINDS}
        self.order = {k: {} for k in KINDS}
        self.keys["site"][self.site.id] = "site"
        for name in ("file", "component"):
            for n, o in enumerate(self.rows[name], start=1):
                self.keys[name][o.id] = f"{name}:{n}"
                self.order[name][o.id] = n
        for name in SITE_CHILDREN:
            self._assign(KINDS[name], self.site.id, "")

    def _assign(self, kind: Kind, parent_id: int, prefix: str) -> None:
        for n, o in enumerate(self.by_parent.get(kind.name, {}).get(parent_id, []), start=1):
            part = kind.key_part(o, n) if kind.key_part else f"{kind.name}:{n}"
            key = f"{prefix}/{part}" if prefix else part
            self.keys[kind.name][o.id] = key
            self.order[kind.name][o.id] = len(self.order[kind.name])
            for child in kind.children:
                self._assign(KINDS[child], o.id, key)

    def _ref(self, target: str, value: int | None) -> str | None:
        if value is None:
            return None
        if target == "person":
            u = self.people.get(value)
            return u.email if u else None
        return self.keys[target].get(value)

    # rendering

    def render(self, kind: Kind, o: Any) -> dict[str, Any]:
        d: dict[str, Any] = {}
        if kind.name != "site":
            d["key"] = self.keys[kind.name][o.id]
        for f in kind.fields:
            d[f.name] = _out(kind, f.name, getattr(o, f.name))
        for r in kind.refs:
            d[r.name] = self._ref(r.target, getattr(o, r.column))
        for link in kind.links:
            ids = self.links[(kind.name, link.name)].get(o.id, [])
            order = self.order[link.target]
            known = sorted((i for i in ids if i in order), key=lambda i: order[i])
            d[link.name] = [self.keys[link.target][i] for i in known]
        for j in kind.json_refs:
            order = self.order[j.target]
            ids = [i for i in (getattr(o, j.column) or []) if isinstance(i, int) and i in order]
            d[j.name] = [self.keys[j.target][i] for i in sorted(set(ids), key=lambda i: order[i])]
        for child in kind.children:
            ck = KINDS[child]
            rows = self.by_parent.get(child, {}).get(o.id, [])
            if ck.single:
                d[ck.list_name] = self.render(ck, rows[0]) if rows else None
            else:
                d[ck.list_name] = [self.render(ck, r) for r in rows]
        return d

    def audit(self) -> list[dict[str, Any]]:
        """The site's audit trail: entries placed at the site or one of its machines, and
        entries of records exported with it (the flush hook cannot place every kind)."""
        machine_ids = select(Machine.id).where(Machine.site_id == self.site.id)
        conds: list[ColumnElement[bool]] = [
            AuditEntry.site_id == self.site.id,
            AuditEntry.machine_id.in_(machine_ids),
        ]
        # placed by record: not when the entry is placed at another site (a component is
        # shared, and an import into the same register places its copy at the new site)
        here = or_(AuditEntry.site_id.is_(None), AuditEntry.site_id == self.site.id)
        tables: dict[str, str] = {}
        for kind in KINDS.values():
            tables[kind.table.name] = kind.name
            if kind.name in ("site", "file", "component"):
                continue
            conds.append(
                and_(
                    AuditEntry.entity == kind.table.name,
                    AuditEntry.entity_id.in_(self._scope(kind)),
                    here,
                )
            )
        for name, model in (("file", EvidenceFile), ("component", Component)):
            ids = sorted(self.keys[name])
            for i in range(0, len(ids), 500):
                conds.append(
                    and_(
                        AuditEntry.entity == model.__tablename__,
                        AuditEntry.entity_id.in_(ids[i : i + 500]),
                        here,
                    )
                )
        entries = list(
            self.session.scalars(
                select(AuditEntry).where(or_(*conds), AuditEntry.entity != "system")
            )
        )
        entries.sort(key=lambda e: (_dt_out(e.at) or "", e.id))
        out = []
        for e in entries:
            kind_name = tables.get(e.entity)
            record = None
            if kind_name is not None and e.entity_id is not None:
                record = self.keys[kind_name].get(e.entity_id)
            out.append(
                {
                    "at": _dt_out(e.at),
                    "user_email": e.user_email or "",
                    "action": e.action,
                    "entity": e.entity,
                    "record": record,
                    "machine": self.keys["machine"].get(e.machine_id) if e.machine_id else None,
                    "before": _scrub(json.loads(json.dumps(e.before))),
                    "after": _scrub(json.loads(json.dumps(e.after))),
                }
            )
        return out


def export_site(session: Session, site: Site) -> dict[str, Any]:
    """The whole register of one site as a JSON-ready document (see docs/export-format.md)."""
    ex = _Exporter(session, site)
    ex.load()
    ex.assign_keys()
    doc: dict[str, Any] = {"format": FORMAT, "version": VERSION}
    doc["site"] = ex.render(SITE, site)
    doc["people"] = [
        {"email": u.email, "name": u.name}
        for u in sorted(ex.people.values(), key=lambda u: u.email)
    ]
    for name in ("file", "component"):
        doc[KINDS[name].list_name] = [ex.render(KINDS[name], o) for o in ex.rows[name]]
    for name in SITE_CHILDREN:
        kind = KINDS[name]
        doc[kind.list_name] = [
            ex.render(kind, o) for o in ex.by_parent.get(name, {}).get(site.id, [])
        ]
    doc["audit"] = ex.audit()
    return doc


# --- import: the report -------------------------------------------------------------------


@dataclass(frozen=True)
class Problem:
    """One thing wrong in an import file: where (record path and field) and what."""

    path: str
    field: str
    message: str

    def __str__(self) -> str:
        where = ".".join(x for x in (self.path, self.field) if x)
        return f"{where}: {self.message}" if where else self.message


@dataclass
class ImportReport:
    """What an import did, or every reason it refused the file (then nothing was written)."""

    accepted: bool = False
    site_name: str | None = None
    site_id: int | None = None
    problems: list[Problem] = field(default_factory=list)
    warnings: list[str] = field(default_factory=list)
    counts: dict[str, int] = field(default_factory=dict)
    people_created: list[str] = field(default_factory=list)
    file_sha256: str | None = None

    def to_json(self) -> dict[str, Any]:
        return {
            "accepted": self.accepted,
            "site": self.site_name,
            "problems": [str(p) for p in self.problems],
            "warnings": list(self.warnings),
            "counts": dict(self.counts),
            "people_created": list(self.people_created),
        }


def _describe(v: Any) -> str:
    if v is None:
        return "null"
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, (int, float)):
        return f"the number {v!r}"
    if isinstance(v, str):
        shown = v if len(v) <= 40 else v[:37] + "..."
        return f"the text {shown!r}"
    if isinstance(v, list):
        return "a list"
    if isinstance(v, dict):
        return "an object"
    return type(v).__name__  # pragma: no cover


def _fmt(x: float) -> str:
    return f"{x:g}"


def parse_document(raw: bytes | str) -> tuple[Any, list[Problem]]:
    """The JSON value of an import file, or the problems that stop it being read."""

    def problem(message: str) -> tuple[Any, list[Problem]]:
        return None, [Problem("", "file", message)]

    if isinstance(raw, bytes):
        if len(raw) > MAX_FILE_BYTES:
            return problem(
                f"the file is {len(raw) / 1048576:.0f} MB; at most "
                f"{MAX_FILE_BYTES // 1048576} MB can be imported"
            )
        if raw.startswith((b"\xff\xfe", b"\xfe\xff")) or b"\x00" in raw[:4096]:
            return problem(
                "the file is UTF-16 or UTF-32 encoded; riskreg reads JSON in UTF-8 only: "
                "save it as UTF-8 and import it again"
            )
        if raw.startswith(b"\xef\xbb\xbf"):
            raw = raw[3:]
        try:
            text = raw.decode("utf-8")
        except UnicodeDecodeError as exc:
            line = raw[: exc.start].count(b"\n") + 1
            return problem(
                f"the file is not valid UTF-8: byte 0x{raw[exc.start]:02X} at line {line} "
                "cannot be read (a Latin-1 or Windows-1252 file?); save it as UTF-8 and "
                "import it again"
            )
    else:
        text = raw
    if not text.strip():
        return problem("the file is empty; export a site with 'riskreg export' first")

    duplicates: list[str] = []

    def pairs(items: list[tuple[str, Any]]) -> dict[str, Any]:
        out: dict[str, Any] = {}
        for k, v in items:
            if k in out:
                duplicates.append(k)
            out[k] = v
        return out

    def no_constant(name: str) -> Any:
        raise ValueError(f"{name} is not a JSON number")

    try:
        value = json.loads(text, object_pairs_hook=pairs, parse_constant=no_constant)
    except json.JSONDecodeError as exc:
        tail = ""
        if exc.pos >= len(text.rstrip()) or (
            exc.msg.startswith("Unterminated string") and '"' not in text[exc.pos + 1 :]
        ):
            tail = " (the file ends too early: it may have been cut off)"
        return problem(f"not valid JSON at line {exc.lineno} column {exc.colno}: {exc.msg}{tail}")
    except ValueError as exc:
        return problem(f"not valid JSON: {exc} (use numbers or null)")
    except RecursionError:
        return problem("not a register export: the JSON is nested too deeply")
    if duplicates:
        names = ", ".join(sorted(set(duplicates))[:10])
        return problem(f"a JSON object names the same field twice ({names}); keep one of each")
    return value, []


# --- import: checking ---------------------------------------------------------------------


@dataclass
class _KeyInfo:
    kind: str
    path: str
    machine: str | None
    assessment: str | None


@dataclass
class _PendingRef:
    path: str
    field: str
    value: Any
    target: str
    scope: str | None
    machine: str | None
    assessment: str | None


class _Checker:
    def __init__(self, session: Session, today: dt.date) -> None:
        self.session = session
        self.today = today
        self.problems: list[Problem] = []
        self.warnings: list[str] = []
        self.keys: dict[str, _KeyInfo] = {}
        self.pending: list[_PendingRef] = []
        self.people: set[str] = set()
        self.counts: dict[str, int] = {}

    def add(self, path: str, name: str, message: str) -> None:
        self.problems.append(Problem(path, name, message))

    # values

    def _text_ok(self, path: str, name: str, v: str) -> bool:
        if "\x00" in v:
            self.add(path, name, "contains a NUL character (\\u0000); remove it")
            return False
        try:
            v.encode("utf-8")
        except UnicodeEncodeError:
            self.add(path, name, "contains an unpaired surrogate (\\ud800-\\udfff); remove it")
            return False
        return True

    def _json_ok(self, path: str, name: str, v: Any, depth: int = 0) -> bool:
        if depth > 64:
            self.add(path, name, "is nested more than 64 levels deep")
            return False
        if isinstance(v, str):
            return self._text_ok(path, name, v)
        if isinstance(v, dict):
            return all(
                self._text_ok(path, name, k) and self._json_ok(path, name, x, depth + 1)
                for k, x in v.items()
            )
        if isinstance(v, list):
            return all(self._json_ok(path, name, x, depth + 1) for x in v)
        return True

    def _number(self, path: str, name: str, v: Any, f: F, whole: bool) -> float | None:
        if isinstance(v, bool) or not isinstance(v, (int, float)):
            what = "a whole number" if whole else "a number"
            self.add(path, name, f"must be {what}; got {_describe(v)}")
            return None
        if not math.isfinite(v):
            self.add(path, name, "must be a finite number")  # pragma: no cover
            return None
        if whole and not isinstance(v, int):
            self.add(path, name, f"must be a whole number; got {v!r}")
            return None
        lo, hi = f.lo, f.hi
        if f.name == "year":
            hi = self.today.year  # the year built: not after this year
        low_bad = lo is not None and (v <= lo if f.lo_open else v < lo)
        if low_bad or (hi is not None and v > hi):
            unit = f" {f.unit}" if f.unit else ""
            if lo is not None and hi is not None:
                rng = (
                    f"more than {_fmt(lo)} and at most {_fmt(hi)}{unit}"
                    if f.lo_open
                    else f"from {_fmt(lo)} to {_fmt(hi)}{unit}"
                )
            elif lo is not None:
                rng = f"more than {_fmt(lo)}{unit}" if f.lo_open else f"at least {_fmt(lo)}{unit}"
            else:
                rng = f"at most {_fmt(float(hi or 0))}{unit}"
            self.add(path, name, f"must be {rng}; got {_fmt(v)}")
            return None
        return float(v)

    def _date(self, path: str, name: str, v: Any, f: F, *, with_time: bool) -> None:
        what = (
            "a date and time (ISO 8601, e.g. 2026-03-01T08:30:00+00:00)"
            if with_time
            else ("a date YYYY-MM-DD")
        )
        if not isinstance(v, str):
            self.add(path, name, f"must be {what}; got {_describe(v)}")
            return
        pattern = r"\d{4}-\d{2}-\d{2}([T ].+)?" if with_time else r"\d{4}-\d{2}-\d{2}"
        parsed: dt.date | None = None
        if re.fullmatch(pattern, v):
            try:
                parsed = (dt.datetime if with_time else dt.date).fromisoformat(v)
            except ValueError:
                parsed = None
        if parsed is None:
            self.add(path, name, f"must be {what} that exists in the calendar; got {_describe(v)}")
            return
        if f.past and isinstance(parsed, dt.date) and not with_time:
            if parsed > self.today:
                self.add(
                    path,
                    name,
                    f"{v} is in the future; enter the day the work was done "
                    f"(at the latest {self.today.isoformat()})",
                )
            elif parsed.year < 1950:
                self.add(path, name, f"enter a date after 1950; got {v}")

    def value(self, kind: Kind, path: str, f: F, v: Any) -> None:
        col = kind.table.c[f.name]
        t = _column_type(kind, f.name)
        if v is None:
            if not col.nullable:
                self.add(path, f.name, "is required; null is not allowed here")
            return
        if t == "str":
            if not isinstance(v, str):
                self.add(path, f.name, f"must be text; got {_describe(v)}")
                return
            length = getattr(col.type, "length", None)
            limit = f.limit or length or TEXT_LIMIT
            if length:
                limit = min(limit, length)
            if len(v) > limit:
                self.add(path, f.name, f"is {len(v)} characters long; at most {limit} are allowed")
                return
            if not self._text_ok(path, f.name, v):
                return
            if f.nonempty and not v.strip():
                self.add(path, f.name, "is empty; it must be filled in")
            elif f.choices is not None and v not in f.choices:
                self.add(
                    path, f.name, f"must be one of: {', '.join(f.choices)}; got {_describe(v)}"
                )
            elif f.name == "sha256" and not re.fullmatch(r"[0-9a-f]{64}", v):
                self.add(path, f.name, "must be 64 lower-case hexadecimal digits (a SHA-256)")
            return
        if t in ("int", "float"):
            self._number(path, f.name, v, f, whole=t == "int")
            return
        if t == "bool":
            if not isinstance(v, bool):
                self.add(path, f.name, f"must be true or false; got {_describe(v)}")
            return
        if t in ("date", "datetime"):
            self._date(path, f.name, v, f, with_time=t == "datetime")
            return
        # JSON
        if not self._json_ok(path, f.name, v):
            return
        size = len(json.dumps(v))
        if size > JSON_LIMIT:
            self.add(path, f.name, f"is {size} characters of JSON; at most {JSON_LIMIT} allowed")
            return
        self._shape(path, f, v)

    def _shape(self, path: str, f: F, v: Any) -> None:
        if f.shape == "dict" and not isinstance(v, dict):
            self.add(path, f.name, f"must be an object; got {_describe(v)}")
        elif f.shape == "str_dict":
            if not isinstance(v, dict) or not all(isinstance(x, str) for x in v.values()):
                self.add(path, f.name, "must be an object of texts (standard → edition)")
        elif f.shape in ("str_list", "num_list"):
            if not isinstance(v, list):
                self.add(path, f.name, f"must be a list; got {_describe(v)}")
                return
            lo, hi = f.items or (0, 10**6)
            if not lo <= len(v) <= hi:
                self.add(path, f.name, f"must have from {lo} to {hi} items; got {len(v)}")
                return
            for i, x in enumerate(v):
                if f.shape == "str_list":
                    if not isinstance(x, str):
                        self.add(path, f"{f.name}[{i}]", f"must be text; got {_describe(x)}")
                    elif len(x) > (f.limit or TEXT_LIMIT):
                        self.add(path, f"{f.name}[{i}]", f"is longer than {f.limit} characters")
                else:
                    item = F(f.name, lo=f.lo, hi=f.hi, lo_open=f.lo_open, unit=f.unit)
                    self._number(path, f"{f.name}[{i}]", x, item, whole=False)

    # records

    def record_key(
        self, kind: Kind, path: str, rec: Mapping[str, Any], ctx: dict[str, str]
    ) -> None:
        key = rec.get("key")
        if not isinstance(key, str) or not key.strip():
            self.add(
                path, "key", f"must be a non-empty text naming the record; got {_describe(key)}"
            )
            return
        if len(key) > KEY_LIMIT:
            self.add(path, "key", f"is {len(key)} characters long; at most {KEY_LIMIT} allowed")
            return
        if not self._text_ok(path, "key", key):
            return
        if key == "site":
            self.add(path, "key", "'site' names the site itself; give the record another key")
            return
        if key in self.keys:
            self.add(path, "key", f"{key!r} is used twice (also by {self.keys[key].path})")
            return
        self.keys[key] = _KeyInfo(kind.name, path, ctx.get("machine"), ctx.get("assessment"))

    def record(
        self, kind: Kind, path: str, rec: Any, ctx: dict[str, str], siblings: dict[Any, str]
    ) -> None:
        if not isinstance(rec, dict):
            self.add(path, "", f"must be an object (a record); got {_describe(rec)}")
            return
        self.counts[kind.list_name] = self.counts.get(kind.list_name, 0) + 1
        allowed = {f.name for f in kind.fields} | {r.name for r in kind.refs}
        allowed |= {x.name for x in kind.links} | {x.name for x in kind.json_refs}
        allowed |= {KINDS[c].list_name for c in kind.children}
        if kind.name != "site":
            allowed.add("key")
        for name in sorted(set(rec) - allowed):
            self.add(
                path,
                name,
                f"is not a field of {kind.list_name}; allowed: {', '.join(sorted(allowed))}",
            )
        ctx = dict(ctx)
        if kind.name != "site":
            self.record_key(kind, path, rec, ctx)
        key = rec.get("key") if isinstance(rec.get("key"), str) else None
        if kind.name == "machine" and key:
            ctx["machine"] = key
        if kind.name == "assessment" and key:
            ctx["assessment"] = key
        for f in kind.fields:
            if f.name not in rec:
                col = kind.table.c[f.name]
                if col.default is None and col.server_default is None and not col.nullable:
                    self.add(path, f.name, "is missing; every record needs it")
                continue
            self.value(kind, path, f, rec[f.name])
        for r in kind.refs:
            if rec.get(r.name) is not None:
                self.pending.append(
                    _PendingRef(
                        path,
                        r.name,
                        rec[r.name],
                        r.target,
                        r.scope,
                        ctx.get("machine"),
                        ctx.get("assessment"),
                    )
                )
        lists: list[Links | JsonRefs] = [*kind.links, *kind.json_refs]
        for many in lists:
            values = rec.get(many.name, [])
            if not isinstance(values, list):
                self.add(path, many.name, f"must be a list of keys; got {_describe(values)}")
                continue
            if len(set(map(str, values))) != len(values):
                self.add(path, many.name, "names the same record twice")
            for i, v in enumerate(values):
                self.pending.append(
                    _PendingRef(
                        path,
                        f"{many.name}[{i}]",
                        v,
                        many.target,
                        many.scope,
                        ctx.get("machine"),
                        ctx.get("assessment"),
                    )
                )
        for combo in kind.unique:
            values_u = (combo, tuple(json.dumps(rec.get(n), sort_keys=True) for n in combo))
            if values_u in siblings:
                what = " and ".join(combo)
                shown = ", ".join(str(rec.get(n)) for n in combo)
                self.add(
                    path,
                    combo[-1],
                    f"the {what} {shown!r} is used twice (also by {siblings[values_u]})",
                )
            else:
                siblings[values_u] = path
        extra = CHECKS.get(kind.name)
        if extra is not None:
            extra(self, path, rec)
        for child in kind.children:
            ck = KINDS[child]
            self.children(ck, path, rec.get(ck.list_name, None if ck.single else []), ctx)

    def children(self, kind: Kind, parent_path: str, value: Any, ctx: dict[str, str]) -> None:
        prefix = f"{parent_path}." if parent_path else ""
        if kind.single:
            if value is None:
                return
            self.record(kind, f"{prefix}{kind.list_name}", value, ctx, {})
            return
        if not isinstance(value, list):
            self.add(parent_path, kind.list_name, f"must be a list; got {_describe(value)}")
            return
        siblings: dict[Any, str] = {}
        for i, rec in enumerate(value):
            self.record(kind, f"{prefix}{kind.list_name}[{i}]", rec, ctx, siblings)

    def resolve(self) -> None:
        for p in self.pending:
            if p.target == "person":
                if not isinstance(p.value, str) or p.value not in self.people:
                    self.add(
                        p.path,
                        p.field,
                        f"{_describe(p.value)} is not the e-mail of anyone in 'people'",
                    )
                continue
            info = self.keys.get(p.value) if isinstance(p.value, str) else None
            if info is None:
                self.add(
                    p.path,
                    p.field,
                    f"refers to {_describe(p.value)}, which is not the key of any record "
                    f"in the file (a {p.target.replace('_', ' ')} was expected)",
                )
                continue
            if info.kind != p.target:
                self.add(
                    p.path,
                    p.field,
                    f"refers to {p.value!r}, which is a {info.kind.replace('_', ' ')}; "
                    f"a {p.target.replace('_', ' ')} was expected",
                )
                continue
            if p.scope == "machine" and info.machine != p.machine:
                self.add(p.path, p.field, f"refers to {p.value!r}, which is on another machine")
            elif p.scope == "assessment" and info.assessment != p.assessment:
                self.add(
                    p.path,
                    p.field,
                    f"refers to {p.value!r}, which belongs to another assessment revision",
                )


def _check_rating(chk: _Checker, path: str, rec: Mapping[str, Any]) -> None:
    method, params, edition = rec.get("method"), rec.get("parameters"), rec.get("edition")
    if method not in RATING_METHODS or not isinstance(params, dict) or not isinstance(edition, str):
        return
    editions = {"ISO 13849-1": edition, "IEC 62061": edition, "ANSI B11.0": edition}
    try:
        outcome = compute_rating(str(method), params, editions)
    except ValidationError as exc:
        for k, m in exc.errors.items():
            chk.add(path, f"parameters.{k}" if k != "edition" else "edition", m)
        return
    derived = rec.get("derived_level")
    if isinstance(derived, str) and outcome.level != derived:
        chk.warnings.append(
            f"{path}: the stored derived level {derived!r} differs from the level this version "
            f"derives from the same parameters ({outcome.level!r}); the stored one is kept"
        )
    override = rec.get("override_level")
    if override is not None:
        allowed = {"iso13849": PL_LEVELS, "iec62061": SIL_LEVELS, "ansi_b11": B11_LEVELS}[
            str(method)
        ]
        if override not in allowed:
            chk.add(
                path,
                "override_level",
                f"must be one of: {', '.join(allowed)}, or null; got {_describe(override)}",
            )


def _check_function(chk: _Checker, path: str, rec: Mapping[str, Any]) -> None:
    modes = rec.get("modes")
    if isinstance(modes, str) and modes:
        bad = [m for m in modes.split(",") if m not in OPERATING_MODES]
        if bad:
            chk.add(
                path,
                "modes",
                f"must be operating modes separated by commas ({', '.join(OPERATING_MODES)}); "
                f"got {modes!r}",
            )


def _check_checklist(chk: _Checker, path: str, rec: Mapping[str, Any]) -> None:
    days = rec.get("working_days")
    if isinstance(days, str) and (not days or set(days) - set("1234567")):
        chk.add(
            path,
            "working_days",
            f"must be ISO weekday numbers 1 (Monday) to 7, e.g. '12345'; got {days!r}",
        )


CHECKS: dict[str, Callable[[_Checker, str, Mapping[str, Any]], None]] = {
    "rating": _check_rating,
    "safety_function": _check_function,
    "checklist": _check_checklist,
}


def _check_people(chk: _Checker, value: Any) -> None:
    if not isinstance(value, list):
        chk.add("", "people", f"must be a list; got {_describe(value)}")
        return
    for i, p in enumerate(value):
        path = f"people[{i}]"
        if not isinstance(p, dict):
            chk.add(path, "", f"must be an object with email and name; got {_describe(p)}")
            continue
        for name in sorted(set(p) - {"email", "name"}):
            chk.add(path, name, "is not a field of people; allowed: email, name")
        email, name = p.get("email"), p.get("name")
        if not isinstance(email, str) or len(email) > 254 or not EMAIL.match(email):
            chk.add(path, "email", f"must be an e-mail address; got {_describe(email)}")
        elif email != email.lower():
            chk.add(path, "email", f"must be written in lower case; got {email!r}")
        elif email in chk.people:
            chk.add(path, "email", f"{email!r} is listed twice")
        else:
            chk.people.add(email)
        if not isinstance(name, str) or not name.strip() or len(name) > 120:
            chk.add(path, "name", "must be the person's name, 1 to 120 characters")


def _check_audit(chk: _Checker, value: Any) -> None:
    if not isinstance(value, list):
        chk.add("", "audit", f"must be a list; got {_describe(value)}")
        return
    audit_kind = Kind("audit", AuditEntry, "audit", tuple(F(n) for n in AUDIT_FIELDS))
    for i, e in enumerate(value):
        path = f"audit[{i}]"
        if not isinstance(e, dict):
            chk.add(path, "", f"must be an object (an audit entry); got {_describe(e)}")
            continue
        allowed = set(AUDIT_FIELDS) | set(AUDIT_KEYS)
        for name in sorted(set(e) - allowed):
            chk.add(
                path,
                name,
                f"is not a field of audit entries; allowed: {', '.join(sorted(allowed))}",
            )
        for f in audit_kind.fields:
            if f.name not in e:
                chk.add(path, f.name, "is missing; every audit entry needs it")
                continue
            if (
                f.name in ("before", "after")
                and e[f.name] is not None
                and not isinstance(e[f.name], dict)
            ):
                chk.add(path, f.name, f"must be an object or null; got {_describe(e[f.name])}")
                continue
            chk.value(audit_kind, path, f, e[f.name])
        record, machine = e.get("record"), e.get("machine")
        if record is not None:
            info = chk.keys.get(record) if isinstance(record, str) else None
            if record == "site":
                if e.get("entity") != "site":
                    chk.add(path, "record", "refers to the site, but the entity is not 'site'")
            elif info is None:
                chk.add(
                    path, "record", f"{_describe(record)} is not the key of a record in the file"
                )
            elif KINDS[info.kind].table.name != e.get("entity"):
                chk.add(
                    path,
                    "record",
                    f"refers to a {info.kind.replace('_', ' ')}, but the entity is "
                    f"{e.get('entity')!r}",
                )
        if e.get("entity") == "system":
            chk.add(path, "entity", "'system' entries belong to the register's log, not a site")
        if machine is not None:
            info = chk.keys.get(machine) if isinstance(machine, str) else None
            if info is None or info.kind != "machine":
                chk.add(path, "machine", f"{_describe(machine)} is not the key of a machine")
    chk.counts["audit"] = len(value)


def check_document(
    session: Session, data: Any, *, site_name: str | None = None, today: dt.date | None = None
) -> tuple[list[Problem], list[str], dict[str, int]]:
    """Every problem of an import document (empty when it can be imported), warnings, counts."""
    chk = _Checker(session, today or dt.date.today())
    if not isinstance(data, dict):
        chk.add("", "", f"the file must hold a JSON object (a site export); got {_describe(data)}")
        return chk.problems, chk.warnings, chk.counts
    if data.get("format") != FORMAT:
        chk.add(
            "",
            "format",
            f"must be {FORMAT!r} (a site exported by riskreg); got {_describe(data.get('format'))}",
        )
        return chk.problems, chk.warnings, chk.counts
    version = data.get("version")
    if isinstance(version, bool) or not isinstance(version, int):
        chk.add("", "version", f"must be a whole number; got {_describe(version)}")
        return chk.problems, chk.warnings, chk.counts
    if version > VERSION:
        chk.add(
            "",
            "version",
            f"the file is format version {version}, made by a newer riskreg; this version "
            f"reads version {VERSION}: upgrade riskreg to import it",
        )
        return chk.problems, chk.warnings, chk.counts
    if version < 1:
        chk.add("", "version", f"must be {VERSION}; got {version}")
        return chk.problems, chk.warnings, chk.counts
    allowed = {"format", "version", "site", "audit", *TOP_LISTS}
    for name in sorted(set(data) - allowed):
        chk.add("", name, f"is not part of a site export; allowed: {', '.join(sorted(allowed))}")
    _check_people(chk, data.get("people", []))
    site = data.get("site")
    if not isinstance(site, dict):
        chk.add("", "site", f"must be an object with the site's settings; got {_describe(site)}")
    else:
        site = dict(site)
        if site_name is not None:
            site["name"] = site_name
        chk.record(SITE, "site", site, {}, {})
        name = site.get("name")
        if isinstance(name, str) and session.scalar(select(Site.id).where(Site.name == name)):
            chk.add(
                "site",
                "name",
                f"a site named {name!r} already exists in this register; import under "
                "another name or into another register",
            )
    for kind_name in ("file", "component", *SITE_CHILDREN):
        kind = KINDS[kind_name]
        chk.children(kind, "", data.get(kind.list_name, []), {})
    chk.resolve()
    _check_audit(chk, data.get("audit", []))
    return chk.problems, chk.warnings, chk.counts


# --- import: writing ----------------------------------------------------------------------


def _db_value(kind: Kind, name: str, v: Any) -> Any:
    if v is None:
        return None
    t = _column_type(kind, name)
    if t == "date":
        return dt.date.fromisoformat(v)
    if t == "datetime":
        d = dt.datetime.fromisoformat(v)
        if d.tzinfo is None:
            d = d.replace(tzinfo=UTC)
        return d.astimezone(UTC)
    if t == "float":
        return float(v)
    return v


def _batched_kinds() -> frozenset[str]:
    """Kinds whose records can be inserted many at a time: nothing refers to them, and
    they have no children, links or deferred references (a shift check, a rating)."""
    targets = {r.target for k in KINDS.values() for r in k.refs}
    targets |= {x.target for k in KINDS.values() for x in (*k.links, *k.json_refs)}
    return frozenset(
        name
        for name, k in KINDS.items()
        if k.parent is not None
        and name not in targets
        and not k.children
        and not k.links
        and not any(r.deferred for r in k.refs)
    )


BATCH_ROWS = 1000


class _Writer:
    def __init__(self, session: Session) -> None:
        self.conn = session.connection()
        self.ids: dict[str, int] = {}
        self.people: dict[str, int] = {}
        self.deferred: list[tuple[Kind, int, str, str]] = []
        self.components_reused = 0
        self.reused: set[str] = set()  # keys of library parts already in the register
        self.audit_kept = 0
        # records waiting to be inserted together: kind → [(key, values)]
        self.batched = _batched_kinds()
        self.waiting: dict[str, list[tuple[str, dict[str, Any]]]] = {}

    def insert(self, table: Table, values: dict[str, Any]) -> int:
        result = self.conn.execute(insert(table), values)
        pk = result.inserted_primary_key
        assert pk is not None
        return int(pk[0])

    def insert_later(self, kind: Kind, key: str, values: dict[str, Any]) -> None:
        """Queue a record of a batched kind; one INSERT per BATCH_ROWS of them (a round
        trip per record is what made an import slow on a database server)."""
        rows = self.waiting.setdefault(kind.name, [])
        rows.append((key, values))
        if len(rows) >= BATCH_ROWS:
            self.flush(kind.name)

    def flush(self, kind_name: str | None = None) -> None:
        """Insert the queued records (of one kind, or all) in the order they came, so
        that their ids follow the document as when inserted one by one."""
        for name in [kind_name] if kind_name else list(self.waiting):
            rows = self.waiting.pop(name, [])
            table = KINDS[name].table
            start = 0
            while start < len(rows):  # runs of records that set the same columns
                columns = tuple(rows[start][1])
                end = start
                while end < len(rows) and tuple(rows[end][1]) == columns:
                    end += 1
                run = rows[start:end]
                if self.conn.dialect.name == "postgresql":
                    ids = self._insert_many_pg(table, columns, [v for _k, v in run])
                else:
                    result = self.conn.execute(
                        insert(table).returning(table.c.id, sort_by_parameter_order=True),
                        [v for _k, v in run],
                    )
                    ids = [int(i) for i in result.scalars()]
                for (key, _values), new_id in zip(run, ids, strict=True):
                    self.ids[key] = new_id
                start = end

    def _insert_many_pg(
        self, table: Table, columns: tuple[str, ...], rows: list[dict[str, Any]]
    ) -> list[int]:
        """One short INSERT … RETURNING run for every row by the driver's executemany
        (pipelined, prepared once): a multi-row INSERT of thousands of parameters is
        parsed again on every run by the driver, which costs more than the rows."""
        from psycopg.types.json import Json

        cols = [table.c[c] for c in columns]
        processors = [c.type.bind_processor(self.conn.dialect) for c in cols]
        as_json = [isinstance(c.type, JSON) for c in cols]
        params = []
        for values in rows:
            out = []
            for c, proc, js in zip(columns, processors, as_json, strict=True):
                v = values[c]
                if js:
                    v = None if v is None else Json(v)
                elif proc is not None:
                    v = proc(v)
                out.append(v)
            params.append(out)
        names = ", ".join(f'"{c}"' for c in columns)
        marks = ", ".join(["%s"] * len(columns))
        sql = f'INSERT INTO "{table.name}" ({names}) VALUES ({marks}) RETURNING id'
        dbapi = self.conn.connection.driver_connection
        assert dbapi is not None
        ids: list[int] = []
        with dbapi.cursor() as cur:
            cur.executemany(sql, params, returning=True)
            while True:
                row = cur.fetchone()
                assert row is not None
                ids.append(int(row[0]))
                if not cur.nextset():
                    break
        return ids

    def people_in(self, people: Sequence[Mapping[str, str]], now: dt.datetime) -> list[str]:
        existing = {e.lower(): i for i, e in self.conn.execute(select(User.id, User.email)).all()}
        created = []
        for p in people:
            email = p["email"]
            if email in existing:
                self.people[email] = existing[email]
                continue
            uid = self.insert(
                _table(User),
                {
                    "email": email,
                    "name": p["name"].strip(),
                    "password_hash": LOCKED_PASSWORD,
                    "role": "viewer",
                    "active": False,
                    "created_at": now,
                },
            )
            self.people[email] = uid
            created.append(email)
        return created

    def row(self, kind: Kind, rec: Mapping[str, Any], parent_id: int | None) -> dict[str, Any]:
        values: dict[str, Any] = {}
        for f in kind.fields:
            if f.name in rec:
                values[f.name] = _db_value(kind, f.name, rec[f.name])
                if values[f.name] is None and _column_type(kind, f.name) == "json":
                    values[f.name] = null()  # SQL NULL, not the JSON text 'null'
        for r in kind.refs:
            ref = rec.get(r.name)
            if r.deferred or ref is None:
                continue
            values[r.column] = self.people[ref] if r.target == "person" else self.ids[ref]
        for j in kind.json_refs:
            values[j.column] = [self.ids[k] for k in rec.get(j.name, [])]
        if kind.parent_column and parent_id is not None:
            values[kind.parent_column] = parent_id
        return values

    def write(self, kind: Kind, rec: Mapping[str, Any], parent_id: int | None) -> int | None:
        """Insert a record and its children; a record of a batched kind is queued (its id,
        None here, is known once flushed)."""
        values = self.row(kind, rec, parent_id)
        if kind.name in self.batched:
            if not any(isinstance(v, ClauseElement) for v in values.values()):
                self.insert_later(kind, rec["key"], values)
                return None
            self.flush(kind.name)  # the queued ones first: ids in the document's order
        new_id = self.insert(kind.table, values)
        if kind.name != "site":
            self.ids[rec["key"]] = new_id
        for r in kind.refs:
            if r.deferred and rec.get(r.name) is not None:
                self.deferred.append((kind, new_id, r.column, rec[r.name]))
        for link in kind.links:
            for k in rec.get(link.name, []):
                self.conn.execute(insert(link.table), {link.own: new_id, link.other: self.ids[k]})
        for child in kind.children:
            ck = KINDS[child]
            value = rec.get(ck.list_name)
            for c in ([value] if value else []) if ck.single else (value or []):
                self.write(ck, c, new_id)
        return new_id

    def component(self, rec: Mapping[str, Any], taken: set[int]) -> None:
        """Reuse an identical part of the library when there is one, else add it."""
        kind = KINDS["component"]
        values = self.row(kind, rec, None)
        table = kind.table
        q = select(table.c.id)
        for f in kind.fields:
            col = table.c[f.name]
            v = values.get(f.name, None)
            q = q.where(col.is_(None) if v is None else col == v)
        for (cid,) in self.conn.execute(q.order_by(table.c.id)).all():
            if cid not in taken:
                taken.add(cid)
                self.ids[rec["key"]] = cid
                self.reused.add(rec["key"])
                self.components_reused += 1
                return
        self.ids[rec["key"]] = self.insert(table, values)

    def finish_deferred(self) -> None:
        self.flush()
        for kind, new_id, column, key in self.deferred:
            self.conn.execute(
                update(kind.table).where(kind.table.c.id == new_id).values({column: self.ids[key]})
            )

    def audit(self, entries: Sequence[Mapping[str, Any]], site_id: int) -> None:
        users = {e.lower(): i for i, e in self.conn.execute(select(User.id, User.email)).all()}
        table = _table(AuditEntry)
        audit_kind = Kind("audit", AuditEntry, "audit", ())
        rows: list[dict[str, Any]] = []
        for e in entries:
            record = e.get("record")
            if record in self.reused:
                self.audit_kept += 1  # a shared part's history is in the register already
                continue
            entity_id = None
            if record == "site":
                entity_id = site_id
            elif record is not None:
                entity_id = self.ids[record]
            machine = e.get("machine")
            email = e.get("user_email") or ""
            rows.append(
                {
                    "at": _db_value(audit_kind, "at", e["at"]),
                    "user_id": users.get(email.lower()) if email else None,
                    "user_email": email,
                    "action": e["action"],
                    "entity": e["entity"],
                    "entity_id": entity_id,
                    "site_id": site_id,
                    "machine_id": self.ids[machine] if machine else None,
                    "before": e.get("before"),
                    "after": e.get("after"),
                }
            )
            if len(rows) >= 1000:
                self.conn.execute(insert(table), rows)
                rows = []
        if rows:
            self.conn.execute(insert(table), rows)


def import_site(
    session: Session,
    data: Mapping[str, Any] | bytes | str,
    *,
    actor_email: str | None = None,
    site_name: str | None = None,
    instance_path: str | os.PathLike[str] | None = None,
    today: dt.date | None = None,
) -> ImportReport:
    """Check the whole document; when nothing is wrong, write the site in one transaction.

    ``data`` is the parsed document, or the file's bytes (then the encoding and the
    JSON are checked too). ``site_name`` imports under another name. With
    ``instance_path``, evidence files missing from its ``evidence/`` folder are
    warned about. Nothing is written when the report lists problems.
    """
    report = ImportReport()
    if session.new or session.dirty or session.deleted:
        raise ValueError("import_site needs a session without pending changes")
    if isinstance(data, (bytes, str)):
        raw = data.encode("utf-8", "surrogatepass") if isinstance(data, str) else data
        report.file_sha256 = hashlib.sha256(raw).hexdigest()
        parsed, problems = parse_document(data)
        if problems:
            report.problems = problems
            return report
        doc: Any = parsed
    else:
        doc = data
    problems, warnings, counts = check_document(session, doc, site_name=site_name, today=today)
    report.problems, report.warnings, report.counts = problems, warnings, counts
    if problems:
        return report
    site_rec = dict(doc["site"])
    if site_name is not None:
        site_rec["name"] = site_name
    report.site_name = site_rec["name"]
    if instance_path is not None:
        for i, f in enumerate(doc.get("files", [])):
            if not evidence.evidence_path(instance_path, f["sha256"]).exists():
                report.warnings.append(
                    f"files[{i}]: {f['filename']!r} (SHA-256 {f['sha256'][:12]}…) is not in "
                    "the evidence folder; copy it from the register the file came from"
                )
    now = dt.datetime.now(UTC)
    try:
        w = _Writer(session)
        report.people_created = w.people_in(doc.get("people", []), now)
        site_id = w.write(SITE, site_rec, None)
        assert site_id is not None  # a site is never queued
        report.site_id = site_id
        for rec in doc.get("files", []):
            w.write(KINDS["file"], rec, None)
        taken: set[int] = set()
        for rec in doc.get("components", []):
            w.component(rec, taken)
        for name in ("area", "instrument", "machine", "interval"):
            kind = KINDS[name]
            for rec in doc.get(kind.list_name, []):
                w.write(kind, rec, site_id)
        w.finish_deferred()
        w.audit(doc.get("audit", []), site_id)
        actor_id = None
        if actor_email:
            actor_id = session.scalar(
                select(User.id).where(func.lower(User.email) == actor_email.strip().lower())
            )
        w.conn.execute(
            insert(_table(AuditEntry)),
            {
                "at": now,
                "user_id": actor_id,
                "user_email": (actor_email or "").strip().lower(),
                "action": "import",
                "entity": "system",
                "entity_id": None,
                "site_id": None,
                "machine_id": None,
                "before": None,
                "after": {
                    "event": "site imported",
                    "site": report.site_name,
                    "site_id": site_id,
                    "format": FORMAT,
                    "version": doc["version"],
                    "file_sha256": report.file_sha256,
                    "counts": counts,
                    "components_reused": w.components_reused,
                    "audit_entries_of_reused_components": w.audit_kept,
                    "people_created": report.people_created,
                },
            },
        )
        due.mark_site(session, site_id)  # written past the session's hooks
        session.commit()
    except SQLAlchemyError as exc:
        session.rollback()
        detail = " ".join(str(getattr(exc, "orig", None) or exc).split())[:300]
        report.problems.append(
            Problem("", "", f"the database refused the import ({detail}); nothing was written")
        )
        report.site_id = None
        return report
    except BaseException:
        session.rollback()
        raise
    if report.people_created:
        report.warnings.append(
            f"{len(report.people_created)} person(s) named in the file had no account here and "
            "were added as inactive viewers that cannot log in: " + ", ".join(report.people_created)
        )
    report.accepted = True
    return report


# --- tables for spreadsheets --------------------------------------------------------------

TABLES = ("machines", "hazards", "due")
TABLE_FORMATS = ("csv", "xlsx")
FORMULA_START = ("=", "+", "-", "@", "\t", "\r")


def _yes(v: bool | None) -> str:
    return "" if v is None else ("yes" if v else "no")


def _params(p: Mapping[str, Any] | None) -> str:
    return ", ".join(f"{k}={v}" for k, v in (p or {}).items())


def table_rows(
    session: Session, site: Site, which: str, *, today: dt.date | None = None
) -> tuple[list[str], list[list[Any]]]:
    """The header and rows of one table (plain values: text, numbers, dates)."""
    from .register import current_rating, site_overview

    if which == "machines":
        head = [
            "asset_tag",
            "name",
            "kind",
            "area",
            "maker",
            "model",
            "serial",
            "year",
            "location",
            "active",
            "do_not_operate",
            "do_not_operate_reason",
            "assessment_revision",
            "assessment_status",
            "open_hazards",
            "highest_plr",
            "highest_sil",
            "proposed_measures",
        ]
        current = _current_assessments(session, site)
        rows = []
        for r in sorted(
            site_overview(session, site, include_retired=True), key=lambda r: r.machine.asset_tag
        ):
            m = r.machine
            a = current.get(m.id)
            rows.append(
                [
                    m.asset_tag,
                    m.name,
                    MACHINE_KINDS.get(m.kind, m.kind),
                    r.area_name,
                    m.maker,
                    m.model,
                    m.serial,
                    m.year,
                    m.location,
                    _yes(m.active),
                    _yes(m.do_not_operate),
                    m.do_not_operate_reason,
                    a.revision if a else None,
                    ASSESSMENT_STATUSES.get(a.status, a.status) if a else "",
                    r.open_hazards,
                    r.highest_plr or "",
                    r.highest_sil or "",
                    r.proposed_measures,
                ]
            )
        return head, rows
    if which == "hazards":
        head = [
            "asset_tag",
            "machine",
            "revision",
            "hazard",
            "phase",
            "task",
            "hazard_group",
            "hazard_type",
            "danger_zone",
            "event",
            "harm",
            "persons_exposed",
            "initial_method",
            "initial_parameters",
            "initial_level",
            "initial_overridden",
            "residual_method",
            "residual_parameters",
            "residual_level",
            "residual_overridden",
            "residual_accepted_by",
            "residual_accepted_on",
        ]
        current = _current_assessments(session, site)
        machines = {
            m.id: m for m in session.scalars(select(Machine).where(Machine.site_id == site.id))
        }
        emails = dict(session.execute(select(User.id, User.email)).all())
        rows = []
        for mid, a in sorted(current.items(), key=lambda x: machines[x[0]].asset_tag):
            m = machines[mid]
            for n, h in enumerate(a.hazards, start=1):
                if h.archived:
                    continue
                cells: list[Any] = [
                    m.asset_tag,
                    m.name,
                    a.revision,
                    n,
                    PHASES.get(h.task.phase, h.task.phase) if h.task else "",
                    h.task.description if h.task else "",
                    HAZARD_GROUPS.get(h.hazard_group, h.hazard_group),
                    h.hazard_type,
                    h.danger_zone,
                    h.event,
                    h.harm,
                    h.persons_exposed,
                ]
                for stage in ("initial", "residual"):
                    rating = current_rating(h, stage)
                    if rating is None:
                        cells += ["", "", "", ""]
                    else:
                        cells += [
                            rating.method,
                            _params(rating.parameters),
                            rating.level,
                            _yes(rating.override_level is not None),
                        ]
                accepted = h.residual_accepted_at
                cells += [
                    emails.get(h.residual_accepted_by_id, "") if h.residual_accepted_by_id else "",
                    (accepted.date() if accepted else None),
                ]
                rows.append(cells)
        return head, rows
    if which == "due":
        head = [
            "due_date",
            "status",
            "days_overdue",
            "what",
            "asset_tag",
            "machine",
            "area",
            "safeguard",
            "last_done",
            "interval_days",
            "detail",
        ]
        due_rows: list[list[Any]] = [
            [
                i.due_date,
                i.status,
                i.days_overdue,
                i.kind_label,
                i.machine,
                i.machine_name,
                i.area,
                i.safeguard or "",
                i.last_done,
                i.interval_days,
                i.detail,
            ]
            for i in due.due_items(session, site, today=today)
        ]
        return head, due_rows
    raise ValidationError({"table": f"Choose a table: {', '.join(TABLES)}; got {which!r}."})


def _current_assessments(session: Session, site: Site) -> dict[int, Assessment]:
    out: dict[int, Assessment] = {}
    rows = session.scalars(
        select(Assessment)
        .join(Machine, Machine.id == Assessment.machine_id)
        .where(Machine.site_id == site.id, Assessment.status != "superseded")
    )
    for a in rows:
        if a.machine_id not in out or a.revision > out[a.machine_id].revision:
            out[a.machine_id] = a
    return out


def _csv_cell(v: Any) -> str:
    if v is None:
        return ""
    if isinstance(v, (dt.date, dt.datetime)):
        return v.isoformat()
    if isinstance(v, str):
        # a spreadsheet would run text that starts like a formula: keep it text
        return "'" + v if v.startswith(FORMULA_START) else v
    return str(v)


def export_table(
    session: Session, site: Site, which: str, fmt: str, *, today: dt.date | None = None
) -> bytes:
    """One table as CSV (UTF-8 with a byte-order mark, a header row) or XLSX."""
    if fmt not in TABLE_FORMATS:
        raise ValidationError({"format": f"Choose csv or xlsx; got {fmt!r}."})
    head, rows = table_rows(session, site, which, today=today)
    if fmt == "csv":
        buf = io.StringIO()
        writer = csv.writer(buf, lineterminator="\r\n")
        writer.writerow(head)
        for r in rows:
            writer.writerow([_csv_cell(v) for v in r])
        return buf.getvalue().encode("utf-8-sig")
    return _xlsx(which, head, rows)


def _xlsx(title: str, head: list[str], rows: list[list[Any]]) -> bytes:
    from openpyxl import Workbook  # type: ignore[import-untyped]
    from openpyxl.cell.cell import ILLEGAL_CHARACTERS_RE  # type: ignore[import-untyped]
    from openpyxl.styles import Font  # type: ignore[import-untyped]
    from openpyxl.utils import get_column_letter  # type: ignore[import-untyped]

    wb = Workbook()
    ws = wb.active
    assert ws is not None
    ws.title = title
    ws.append(head)
    for c in ws[1]:
        c.font = Font(bold=True)
    widths = [len(h) for h in head]
    for r, values in enumerate(rows, start=2):
        for col, v in enumerate(values, start=1):
            cell = ws.cell(row=r, column=col)
            if isinstance(v, str):
                v = ILLEGAL_CHARACTERS_RE.sub("\ufffd", v)
                cell.value = v
                cell.data_type = "s"  # text stays text, even when it starts with '='
            else:
                cell.value = v
                if isinstance(v, dt.date):
                    cell.number_format = "yyyy-mm-dd"
            widths[col - 1] = max(widths[col - 1], min(60, len(str(v or ""))))
    for col, w in enumerate(widths, start=1):
        ws.column_dimensions[get_column_letter(col)].width = w + 2
    ws.freeze_panes = "A2"
    buf = io.BytesIO()
    wb.save(buf)
    return buf.getvalue()


# --- the documented schema ----------------------------------------------------------------


def _num_text(x: float) -> str:
    return f"{int(x)}" if float(x).is_integer() else f"{x:g}"


def field_reference() -> str:
    """The field tables of docs/export-format.md, made from the rules above (a test checks
    that the document carries exactly this text)."""
    value_names = {
        "str": "text",
        "int": "whole number",
        "float": "number",
        "bool": "true/false",
        "date": "date",
        "datetime": "date-time",
        "json": "JSON",
    }
    shapes = {
        "dict": "object",
        "str_dict": "object of texts",
        "str_list": "list of texts",
        "num_list": "list of numbers",
    }
    out: list[str] = []
    for k in all_kinds():
        out += [f"### `{k.list_name}`", "", "| field | value | rules |", "|---|---|---|"]
        if k.name != "site":
            out.append("| `key` | text | the record's export key, unique in the file |")
        for f in k.fields:
            col = k.table.c[f.name]
            t = _column_type(k, f.name)
            value = shapes.get(f.shape, value_names[t]) if t == "json" else value_names[t]
            if col.nullable:
                value += " or null"
            rules: list[str] = []
            if f.choices:
                rules.append("one of " + ", ".join(f"`{c}`" for c in f.choices))
            elif f.name == "sha256":
                rules.append("64 lower-case hexadecimal digits")
            elif t == "str":
                length = getattr(col.type, "length", None)
                limit = min(f.limit or length or TEXT_LIMIT, length or TEXT_LIMIT)
                rules.append(f"at most {limit} characters")
            if f.nonempty:
                rules.append("not empty")
            if f.lo is not None or f.hi is not None:
                unit = f" {f.unit}" if f.unit else ""
                lo = "" if f.lo is None else ("> " if f.lo_open else "≥ ") + _num_text(f.lo)
                hi = "" if f.hi is None else "≤ " + _num_text(f.hi)
                if f.name == "year":
                    hi = "≤ this year"
                each = "each " if f.shape == "num_list" else ""
                rules.append(each + " and ".join(x for x in (lo, hi) if x) + unit)
            if f.items:
                rules.append(f"{f.items[0]} to {f.items[1]} items")
            if f.past:
                rules.append("not in the future, not before 1950")
            if col.default is not None or col.server_default is not None or col.nullable:
                rules.append("may be left out")
            out.append(f"| `{f.name}` | {value} | {'; '.join(rules)} |")
        for r in k.refs:
            noun = r.target.replace("_", " ")
            target = (
                "e-mail of a person in `people`"
                if r.target == "person"
                else f"key of {'an' if noun[0] in 'aeiou' else 'a'} {noun}"
            )
            scope = f" of the same {r.scope}" if r.scope else ""
            note = "set after every record is written" if r.deferred else ""
            out.append(f"| `{r.name}` | {target}{scope}, or null | {note} |")
        lists: list[Links | JsonRefs] = [*k.links, *k.json_refs]
        for many in lists:
            scope = f" of the same {many.scope}" if many.scope else ""
            out.append(
                f"| `{many.name}` | list of keys of {many.target.replace('_', ' ')}s{scope} | |"
            )
        for c in k.children:
            ck = KINDS[c]
            what = "object or null" if ck.single else "list"
            out.append(f"| `{ck.list_name}` | {what}: `{ck.list_name}` below | |")
        out.append("")
    return "\n".join(out)
