"""Synthetic registers for the benchmarks, built fast and the same every time.

    .venv/bin/python bench/generate.py --size 500 [--out bench/out/register-500.sqlite]

Two steps:

1. **Templates through the services.** A small register is built in a scratch
   SQLite file with the real services (``riskreg.services``): for every machine
   kind one machine with 4 tasks and 20 hazards, each rated (half of them with a
   residual rating too, some re-rated so that the earlier rating is superseded),
   3 safeguards with their protective measures, a safety function with its parts,
   press data, a stopping-time measurement with its distance checks, a
   start-of-shift checklist and a lockout procedure. Each kind comes in three
   forms: a draft, an approved revision, and an approved revision reopened by a
   modification (a second, draft revision; a safeguard to validate again). So every
   stored derivation, snapshot and parameter set has exactly the shape the
   services write.
2. **Copies by bulk insert.** The target database is migrated with Alembic, then
   the templates are copied ``size`` times (SQLAlchemy Core ``insert()`` with
   executemany, in batches, with new ids and every reference remapped), and a year
   of history is generated straight into the tables: functional tests about every
   90 days and a yearly inspection per safeguard (about 1 % failing, each failure
   with its corrective action and a later re-test), weekly press inspections on
   the mechanical presses that need them, start-of-shift checks on every working
   day for every shift (a few missed, a few with a failed item and its closed
   corrective action), and the audit trail's "create" entries of machines, hazards
   and verifications.

A fixed seed drives every choice, and every date counts back from the anchor day
(``--anchor``, default today), so the same size, seed and anchor give the same
database. All machines belong to one site, in areas of ``AREA_SIZE`` machines: the
per-site pages see the whole register.
"""

from __future__ import annotations

import argparse
import datetime as dt
import json
import random
import sys
import tempfile
import time
from collections.abc import Iterator
from dataclasses import dataclass
from pathlib import Path
from typing import Any

ROOT = Path(__file__).resolve().parent.parent
if str(ROOT) not in sys.path:
    sys.path.insert(0, str(ROOT))

from sqlalchemy import Date, DateTime, Engine, Table, create_engine, insert, select  # noqa: E402
from sqlalchemy.orm import Session  # noqa: E402

from riskreg import migrate  # noqa: E402
from riskreg.db import make_engine, session_factory  # noqa: E402
from riskreg.model import Base  # noqa: E402
from riskreg.services import (  # noqa: E402
    audit,
    due,
    register,
    revisions,
    safeguards,
    users,
    verification,
)

GENERATOR_VERSION = 2  # 2: the due items stored (due_item)
SEED = 20260417
AREA_SIZE = 25
BATCH = 50  # machines per batch of inserts
PASSWORD = "bench-password-2026"
SITE_NAME = "Bench Works"
PEOPLE = [
    ("admin@bench.invalid", "Bench Administrator", "admin"),
    ("approver@bench.invalid", "Bench Approver", "approver"),
    ("assessor@bench.invalid", "Bench Assessor", "assessor"),
    ("viewer@bench.invalid", "Bench Viewer", "viewer"),
]
# tables shared by all machines: copied once, ids kept
# worked out from the rest once the register is loaded (services.due), never copied
DERIVED = {"due_item", "due_refresh"}
SHARED = {"site", "area", "user_account", "component", "evidence_file", "instrument", "audit_entry"}
FITTERS = ("Maintenance fitter A", "Maintenance fitter B", "Maintenance fitter C")
OPERATORS = ("Operator 1", "Operator 2", "Operator 3", "Operator 4", "Operator 5")
INSPECTOR = "Maintenance lead"

# --- what the templates are made of ----------------------------------------------------

# kind → (share of the fleet, asset-tag prefix, machine name, safeguards)
LIGHT_CURTAIN = {
    "kind": "light_curtain",
    "label": "Front light curtain",
    "response_time_ms": "20",
    "installed_distance_mm": "450",
    "espe_type": "4",
    "resolution_mm": "14",
    "blanking": "none",
    "restart_interlock": "y",
}
TWO_HAND = {
    "kind": "two_hand_control",
    "label": "Two-hand control station",
    "response_time_ms": "10",
    "installed_distance_mm": "650",
    "simultaneous": "y",
    "cessation": "y",
    "reinitiation": "y",
    "synchronous_window_ms": "500",
    "category": "4",
    "spacing_mm": "600",
    "operators": "1",
    "stations": "1",
    "actuators_per_station": "2",
    "anti_repeat": "y",
}
REAR_DOOR = {
    "kind": "interlocking_guard",
    "label": "Rear interlocked door",
    "response_time_ms": "30",
    "installed_distance_mm": "900",
    "device_type": "4",
    "coding": "high",
    "motivation_to_defeat": "medium",
    "opening_c_mm": "120",
    "measures_against_defeat": ["hidden mounting"],
}
SIDE_GUARDS = {
    "kind": "fixed_guard",
    "label": "Fixed side guards",
    "opening_mm": "10",
    "opening_distance_mm": "80",
}
CELL_DOOR = {
    "kind": "interlocking_guard_locking",
    "label": "Cell door with guard locking",
    "response_time_ms": "30",
    "device_type": "4",
    "coding": "high",
    "motivation_to_defeat": "high",
    "measures_against_defeat": ["hidden mounting", "monitoring"],
}
FLOOR_MAT = {
    "kind": "pressure_mat",
    "label": "Floor mat at the loading station",
    "response_time_ms": "30",
    "installed_distance_mm": "1400",
}
BEAMS = {
    "kind": "multi_beam",
    "label": "Three-beam device at the infeed",
    "response_time_ms": "20",
    "installed_distance_mm": "1300",
    "espe_type": "4",
    "beams": "3",
}
ARCHETYPES: dict[str, tuple[int, str, str, list[dict[str, Any]]]] = {
    "mechanical_press": (30, "PR", "Mechanical press", [LIGHT_CURTAIN, TWO_HAND, REAR_DOOR]),
    "hydraulic_press": (10, "HP", "Hydraulic press", [LIGHT_CURTAIN, REAR_DOOR, SIDE_GUARDS]),
    "press_brake": (20, "PB", "Press brake", [LIGHT_CURTAIN, REAR_DOOR, SIDE_GUARDS]),
    "shear": (10, "SH", "Guillotine shear", [SIDE_GUARDS, REAR_DOOR, BEAMS]),
    "robot_cell": (15, "RC", "Robot cell", [CELL_DOOR, LIGHT_CURTAIN, FLOOR_MAT]),
    "conveyor": (15, "CV", "Conveyor", [SIDE_GUARDS, REAR_DOOR, BEAMS]),
}
FORMS = (("draft", 60), ("approved", 25), ("revised", 15))
TASKS = [
    ("operation", "Load and unload parts", "operator", "every cycle"),
    ("setting", "Tool change and setting", "setter", "weekly"),
    ("maintenance", "Maintenance and adjustment", "maintenance fitter", "monthly"),
    ("cleaning", "Cleaning and clearing jams", "operator", "every shift"),
]
HAZARD_TYPES = [
    ("crushing", "Between the moving and the fixed tool", "Crushing of fingers or hand"),
    ("shearing", "At the closing edges", "Amputation of fingers"),
    ("cutting or severing", "Tool edges", "Deep cut to the hand"),
    ("entanglement", "Drive belts and shafts", "Arm caught and twisted"),
    ("drawing-in or trapping", "Rollers and infeed", "Hand drawn in"),
    ("impact", "Moving carriage", "Bruising or fracture"),
    ("ejection of parts", "Tool area", "Eye or face injury"),
    ("high-pressure fluid injection or ejection", "Hoses and fittings", "Injection injury"),
]
OTHER_GROUPS = [
    ("electrical", "Live parts in the control cabinet", "Electric shock"),
    ("noise", "Working position", "Hearing damage"),
    ("ergonomic", "Loading station", "Back strain"),
    ("thermal", "Hot hydraulic parts", "Burns"),
]
ISO_PARAMS = [("S2", "F2", "P2"), ("S2", "F2", "P1"), ("S2", "F1", "P2"), ("S2", "F1", "P1")]
ISO_PARAMS += [("S1", "F2", "P2"), ("S1", "F2", "P1"), ("S1", "F1", "P2"), ("S1", "F1", "P1")]


@dataclass(frozen=True)
class Template:
    machine_id: int
    kind: str
    form: str


def _iso(s: str, f: str, p: str, stage: str) -> dict[str, Any]:
    return {"method": "iso13849", "stage": stage, "severity": s, "frequency": f, "avoidance": p}


def _rating(rng: random.Random, kind: str, stage: str, serious: bool) -> dict[str, Any]:
    if kind == "robot_cell" and rng.random() < 0.5:
        return {
            "method": "iec62061",
            "stage": stage,
            "severity": str(rng.choice((3, 4)) if serious else rng.choice((1, 2))),
            "frequency": str(rng.choice((3, 4, 5))),
            "probability": str(rng.choice((2, 3, 4))),
            "avoidance": str(rng.choice((1, 3, 5))),
        }
    if kind == "conveyor" and rng.random() < 0.3:
        return {
            "method": "ansi_b11",
            "stage": stage,
            "severity": rng.choice(("serious", "moderate") if serious else ("minor", "moderate")),
            "probability": rng.choice(("likely", "unlikely")),
        }
    s, f, p = rng.choice(ISO_PARAMS[:4] if serious else ISO_PARAMS[4:])
    return _iso(s, f, p, stage)


def build_templates(session: Session, today: dt.date, rng: random.Random) -> list[Template]:
    """The template register, through the services (with their audit hook)."""
    people = {
        role: users.create_user(session, email, name, role, PASSWORD)
        for email, name, role in PEOPLE
    }
    audit.set_actor(session, people["assessor"])
    site = register.create_site(session, SITE_NAME)
    meters = [
        verification.save_instrument(
            session,
            site,
            {
                "name": f"Stop-time meter {i + 1}",
                "serial": f"STM-{1000 + i}",
                "calibrated_on": today - dt.timedelta(days=ago),
                "calibration_interval_days": 365,
            },
        )
        for i, ago in enumerate((40, 200, 380))
    ]
    out: list[Template] = []
    for kind, (_share, prefix, name, guards) in ARCHETYPES.items():
        for form, _w in FORMS:
            m = register.create_machine(
                session,
                site,
                {
                    "asset_tag": f"T-{prefix}-{form}",
                    "name": name,
                    "kind": kind,
                    "maker": "Synthetic Machine Co.",
                    "model": f"{prefix}-{rng.randint(100, 999)}",
                    "serial": f"S-{rng.randint(10000, 99999)}",
                    "year": rng.randint(1985, 2022),
                    "location": "Hall 1",
                },
                user=people["assessor"],
            )
            _fill_template(session, m, kind, guards, meters[0].id, today, rng, people, form)
            out.append(Template(m.id, kind, form))
    return out


def _fill_template(
    session: Session,
    m: Any,
    kind: str,
    guards: list[dict[str, Any]],
    meter_id: int,
    today: dt.date,
    rng: random.Random,
    people: dict[str, Any],
    form: str,
) -> None:
    assessor = people["assessor"]
    a = register.current_assessment(m)
    register.update_assessment(
        session,
        a,
        {
            "scope": f"The {kind.replace('_', ' ')} with its tools, loading and unloading.",
            "intended_use": "Forming and handling of sheet-metal parts.",
            "foreseeable_misuse": "Reaching into the tool area; running with a guard open.",
            "persons_exposed": "Operators, setters, maintenance fitters.",
        },
    )
    tasks = [
        register.add_task(
            session,
            a,
            {"phase": ph, "description": d, "performed_by": who, "frequency": often},
            commit=False,
        )
        for ph, d, who, often in TASKS
    ]
    session.commit()
    hazards = []
    for i in range(20):
        serious = i < 8
        if i < 16:
            htype, zone, harm = HAZARD_TYPES[i % len(HAZARD_TYPES)]
            group = "mechanical"
        else:
            htype, zone, harm = OTHER_GROUPS[i % len(OTHER_GROUPS)]
            group = htype
            htype = ""
        h = register.add_hazard(
            session,
            a,
            {
                "hazard_group": group,
                "hazard_type": htype,
                "danger_zone": zone,
                "event": f"{zone}: a person is hurt during {TASKS[i % 4][1].lower()} ({i + 1})",
                "harm": harm,
                "persons_exposed": TASKS[i % 4][2],
                "task_id": tasks[i % 4].id if i % 5 else None,
            },
            _rating(rng, kind, "initial", serious),
            user=assessor,
            commit=False,
        )
        hazards.append(h)
    session.commit()
    for i, h in enumerate(hazards):
        if i % 7 == 3:  # re-rated: the first rating stays, superseded
            register.rate_hazard(session, h, _rating(rng, kind, "initial", i < 8), user=assessor)
        if i % 2 == 0:
            register.rate_hazard(session, h, _rating(rng, kind, "residual", False), user=assessor)
    measures = []
    for j, g in enumerate(guards):
        measures.append(
            register.add_measure(
                session,
                a,
                {
                    "kind": g["kind"],
                    "status": "installed",
                    "description": f"{g['label']} guards the tool area",
                    "hazard_ids": [hazards[j].id, hazards[j + 3].id, hazards[j + 6].id],
                },
            )
        )
    register.add_measure(
        session,
        a,
        {"kind": "training", "status": "proposed", "hazard_ids": [hazards[16].id]},
    )
    sf = register.add_safety_function(
        session,
        a,
        {
            "name": f"Stop the hazardous motion when the {guards[0]['label'].lower()} trips",
            "trigger": "The safeguard detects a person",
            "reaction": "Stop before the danger zone can be reached; no restart until reset",
            "modes": "run,setting",
            "response_time_s": 0.03,
            "hazard_ids": [hazards[0].id, hazards[3].id],
        },
    )
    safeguards.save_part(
        session, sf, {"role": "input", "name": guards[0]["label"], "given_pl": "e"}
    )
    safeguards.save_part(session, sf, {"role": "logic", "name": "Safety relay", "given_pl": "e"})
    safeguards.save_part(
        session,
        sf,
        {
            "role": "output",
            "name": "Safety valve",
            "category": "4",
            "b10d": "20000000",
            "days_per_year": "240",
            "hours_per_day": "16",
            "cycle_time_s": "4",
            "dcavg_percent": "99",
            "ccf_points": "80",
        },
    )
    for j, g in enumerate(guards):
        data = dict(g)
        data["measure_id"] = measures[j].id
        safeguards.save_safeguard(session, m, data)
    if kind in ("mechanical_press", "hydraulic_press"):
        monitored = form != "draft"
        safeguards.save_press_profile(
            session,
            m,
            {
                "clutch": "part",
                "brake_monitor": "y" if monitored else "",
                "control_reliable": "y" if monitored and form == "revised" else "",
                "anti_repeat": "y",
                "single_stroke": "y",
            },
        )
        if monitored:
            safeguards.add_monitor_setting(
                session,
                m,
                {
                    "set_on": today - dt.timedelta(days=300),
                    "setpoint_ms": "260",
                    "set_by": assessor.name,
                    "note": "after brake relining",
                },
            )
    if any(g["kind"] in safeguards.DISTANCE_KINDS for g in guards):
        safeguards.record_measurement(
            session,
            m,
            {
                "measured_on": today - dt.timedelta(days=200),
                "trials_ms": ", ".join(str(rng.randint(150, 240)) for _ in range(5)),
                "position": "top of stroke",
                "instrument": "Stop-time meter 1",
                "instrument_id": meter_id,
                "measured_by": assessor.name,
            },
        )
    verification.save_checklist(
        session,
        m,
        {
            "items": [
                f"{guards[0]['label']}: works when tested",
                "Guards in place and fastened",
                "Emergency stop stops the machine",
            ],
            "shifts_per_day": str(1 + (len(kind) % 3)),
            "working_days": "12345",
            "active_since": today - dt.timedelta(days=400),
        },
    )
    verification.save_lockout(
        session,
        m,
        {
            "title": "Isolate and lock the main switch and the air supply",
            "last_inspected_on": today - dt.timedelta(days=200),
            "interval_days": 365,
            "inspected_by": INSPECTOR,
        },
    )
    if form in ("approved", "revised"):
        revisions.submit(session, a, assessor)
        revisions.approve(session, a, people["approver"])
    if form == "revised":
        first = safeguards.safeguards_of(m)[0]
        revisions.record_modification(
            session,
            m,
            {
                "kind": "guard",
                "description": "Tooling changed; the safeguard was moved",
                "made_on": today - dt.timedelta(days=30),
                "safeguard_ids": [first.id],
            },
            assessor,
        )


# --- the copies ----------------------------------------------------------------------------


def owned_tables() -> list[Table]:
    """Tables whose rows belong to one machine (through any chain of foreign keys),
    in the order they can be inserted."""
    owned = {"machine"}
    out = []
    for t in Base.metadata.sorted_tables:
        if t.name in SHARED or t.name in DERIVED or t.name == "machine":
            continue
        if any(fk.column.table.name in owned for fk in t.foreign_keys):
            owned.add(t.name)
            out.append(t)
    return out


def _fk_cols(t: Table, owned: set[str]) -> list[tuple[str, str]]:
    return [
        (fk.parent.name, fk.column.table.name)
        for fk in t.foreign_keys
        if fk.column.table.name in owned
    ]


@dataclass
class TemplateRows:
    """Each owned table's rows, grouped by the template machine they belong to."""

    machine: dict[int, dict[str, Any]]
    rows: dict[str, dict[int, list[dict[str, Any]]]]


def read_templates(engine: Engine, templates: list[Template]) -> TemplateRows:
    tables = owned_tables()
    names = {"machine"} | {t.name for t in tables}
    mt = Base.metadata.tables["machine"]
    owner: dict[str, dict[Any, int]] = {"machine": {}}
    machine_rows: dict[int, dict[str, Any]] = {}
    grouped: dict[str, dict[int, list[dict[str, Any]]]] = {}
    with engine.connect() as conn:
        for r in conn.execute(select(mt).order_by(mt.c.id)).mappings():
            machine_rows[r["id"]] = dict(r)
            owner["machine"][r["id"]] = r["id"]
        for t in tables:
            fks = _fk_cols(t, names)
            owner[t.name] = {}
            grouped[t.name] = {}
            order = [t.c.id] if "id" in t.c else list(t.primary_key.columns)
            for r in conn.execute(select(t).order_by(*order)).mappings():
                mid = next(
                    (owner[parent].get(r[col]) for col, parent in fks if r[col] is not None), None
                )
                if mid is None:
                    continue
                if "id" in t.c:
                    owner[t.name][r["id"]] = mid
                grouped[t.name].setdefault(mid, []).append(dict(r))
    return TemplateRows(machine_rows, grouped)


class Ids:
    """The next id of every table of the target database."""

    def __init__(self) -> None:
        self.next: dict[str, int] = {}

    def start(self, table: str, after: int) -> None:
        self.next[table] = after + 1

    def take(self, table: str) -> int:
        v = self.next.setdefault(table, 1)
        self.next[table] = v + 1
        return v


@dataclass
class Plan:
    """What one copy looks like: its template, its place and its own dates."""

    index: int
    template: Template
    area_id: int
    shift_days: int  # added to the template's dates (template day → anchor, plus jitter)


def _jsonable(value: Any) -> Any:
    if isinstance(value, (dt.datetime, dt.date)):
        return value.isoformat()
    return value


class Generator:
    def __init__(
        self,
        conn: Any,
        tpl: TemplateRows,
        templates: list[Template],
        anchor: dt.date,
        built_on: dt.date,
        rng: random.Random,
        site_id: int,
        people: dict[str, int],
        instrument_ids: list[int],
    ) -> None:
        self.conn = conn
        self.tpl = tpl
        self.templates = templates
        self.anchor = anchor
        self.built_on = built_on
        self.rng = rng
        self.site_id = site_id
        self.people = people
        self.instrument_ids = instrument_ids
        self.tables = owned_tables()
        self.names = {"machine"} | {t.name for t in self.tables}
        self.ids = Ids()
        self.pending: dict[str, list[dict[str, Any]]] = {}
        self.counts: dict[str, int] = {}
        self.origin = dt.datetime.combine(anchor - dt.timedelta(days=400), dt.time(8, 0), dt.UTC)
        md = Base.metadata.tables
        self.date_cols = {
            t.name: [
                c.name for c in t.c if isinstance(c.type, Date) and not isinstance(c.type, DateTime)
            ]
            for t in md.values()
        }
        self.datetime_cols = {
            t.name: [c.name for c in t.c if isinstance(c.type, DateTime)] for t in md.values()
        }

    # -- output --------------------------------------------------------------------------

    def add(self, table: str, row: dict[str, Any]) -> None:
        self.pending.setdefault(table, []).append(row)

    def flush(self) -> None:
        md = Base.metadata.tables
        for t in Base.metadata.sorted_tables:
            rows = self.pending.pop(t.name, None)
            if not rows:
                continue
            for i in range(0, len(rows), 20000):
                self.conn.execute(insert(md[t.name]), rows[i : i + 20000])
            self.counts[t.name] = self.counts.get(t.name, 0) + len(rows)
        assert not self.pending

    # -- dates -----------------------------------------------------------------------------

    def _date(self, value: dt.date | None, shift: int) -> dt.date | None:
        if value is None:
            return None
        d = value + dt.timedelta(days=shift)
        return min(d, self.anchor - dt.timedelta(days=1))

    def _stamp(self, column: str, value: dt.datetime | None, k: int) -> dt.datetime | None:
        if value is None:
            return None
        offset = {
            "submitted_at": 10,
            "approved_at": 12,
            "residual_accepted_at": 20,
            "closed_at": 30,
        }
        return self.origin + dt.timedelta(days=offset.get(column, 0), seconds=k)

    # -- one copy ------------------------------------------------------------------------------

    def copy_machine(self, plan: Plan) -> None:
        rng = self.rng
        t = plan.template
        k = plan.index
        prefix = ARCHETYPES[t.kind][1]
        src = self.tpl.machine[t.machine_id]
        m = dict(src)
        m["id"] = self.ids.take("machine")
        m["site_id"] = self.site_id
        m["area_id"] = plan.area_id
        m["asset_tag"] = f"{prefix}-{k + 1:05d}"
        m["name"] = f"{ARCHETYPES[t.kind][2]} {k + 1}"
        m["serial"] = f"S-{rng.randint(100000, 999999)}"
        m["year"] = rng.randint(1980, 2023)
        m["location"] = f"Hall {1 + k // 500}, bay {1 + (k // 25) % 20}"
        m["created_at"] = self.origin + dt.timedelta(seconds=k)
        m["do_not_operate"] = False
        self.add("machine", m)
        self.audit("create", "machine", m, m["id"])
        maps: dict[str, dict[Any, int]] = {"machine": {t.machine_id: m["id"]}}
        copied: dict[str, list[dict[str, Any]]] = {}
        for table in self.tables:
            rows = self.tpl.rows[table.name].get(t.machine_id, [])
            if not rows:
                continue
            fks = _fk_cols(table, self.names)
            has_id = "id" in table.c
            tmap = maps.setdefault(table.name, {})
            out = []
            for r in rows:
                new = dict(r)
                if has_id:
                    new["id"] = self.ids.take(table.name)
                    tmap[r["id"]] = new["id"]
                for col, parent in fks:
                    if new[col] is not None:
                        new[col] = maps[parent][r[col]]
                if "origin_id" in new and new["origin_id"] is not None:
                    new["origin_id"] = tmap.get(new["origin_id"], new["origin_id"])
                for col in self.date_cols[table.name]:
                    new[col] = self._date(new[col], plan.shift_days)
                for col in self.datetime_cols[table.name]:
                    new[col] = self._stamp(col, new[col], k)
                out.append(new)
            copied[table.name] = out
        self._adjust(plan, m, maps, copied)
        self._history(plan, m, copied)
        for name, rows in copied.items():
            for r in rows:
                self.add(name, r)

    def _adjust(
        self,
        plan: Plan,
        m: dict[str, Any],
        maps: dict[str, dict[Any, int]],
        copied: dict[str, list[dict[str, Any]]],
    ) -> None:
        rng = self.rng
        for mod in copied.get("modification", []):
            mod["safeguard_ids"] = [maps["safeguard"][i] for i in mod["safeguard_ids"] or []]
        for part in copied.get("safety_function_part", []):
            if part["b10d"] is not None:
                part["installed_on"] = self.anchor - dt.timedelta(days=rng.randint(200, 3000))
        for lp in copied.get("lockout_procedure", []):
            lp["last_inspected_on"] = self.anchor - dt.timedelta(days=rng.randint(20, 420))
        for st in copied.get("stopping_time_measurement", []):
            st["measured_on"] = self.anchor - dt.timedelta(days=rng.randint(15, 420))
        for cl in copied.get("shift_checklist", []):
            cl["active_since"] = self.anchor - dt.timedelta(days=400)
        for a in copied.get("assessment", []):
            snap = a.get("snapshot")
            if snap and snap.get("stopping_time"):
                measured = copied.get("stopping_time_measurement") or [{}]
                snap = dict(snap, stopping_time=dict(snap["stopping_time"]))
                on = measured[0].get("measured_on")
                snap["stopping_time"]["measured_on"] = on.isoformat() if on else None
                a["snapshot"] = snap
        for h in copied.get("hazard", []):
            self.audit("create", "hazard", h, m["id"])

    def audit(self, action: str, entity: str, row: dict[str, Any], machine_id: int) -> None:
        self.add(
            "audit_entry",
            {
                "id": self.ids.take("audit_entry"),
                "at": row.get("created_at") or self.origin,
                "user_id": self.people["assessor"],
                "user_email": PEOPLE[2][0],
                "action": action,
                "entity": entity,
                "entity_id": row["id"],
                "site_id": self.site_id,
                "machine_id": machine_id,
                "before": None,
                "after": {k: _jsonable(v) for k, v in row.items() if k != "password_hash"},
            },
        )

    # -- a year of history -------------------------------------------------------------------

    def _verification(
        self,
        m: dict[str, Any],
        sg_id: int | None,
        kind: str,
        on: dt.date,
        result: str,
        **extra: Any,
    ) -> dict[str, Any]:
        v = {
            "id": self.ids.take("verification"),
            "machine_id": m["id"],
            "safeguard_id": sg_id,
            "kind": kind,
            "performed_on": on,
            "performed_by": self.rng.choice(FITTERS),
            "result": result,
            "measured_values": extra.get("measured_values", ""),
            "notes": extra.get("notes", ""),
            "press_serial": extra.get("press_serial", ""),
            "signature": extra.get("signature", ""),
            "instrument_id": None,
            "measurement_id": None,
            "created_at": dt.datetime.combine(on, dt.time(14, 0), dt.UTC),
        }
        return v

    def _action(
        self,
        m: dict[str, Any],
        sg_id: int | None,
        source: str,
        title: str,
        description: str,
        due_on: dt.date,
        closed: dt.date | None,
        verification_id: int | None,
    ) -> dict[str, Any]:
        return {
            "id": self.ids.take("corrective_action"),
            "machine_id": m["id"],
            "safeguard_id": sg_id,
            "source": source,
            "title": title,
            "description": description,
            "owner": "",
            "due_on": due_on,
            "status": "closed" if closed else "open",
            "closing_note": "Repaired and tested again." if closed else "",
            "verification_id": verification_id,
            "closing_evidence_id": None,
            "closed_at": dt.datetime.combine(closed, dt.time(15, 0), dt.UTC) if closed else None,
            "created_at": dt.datetime.combine(
                due_on - dt.timedelta(days=7), dt.time(14, 0), dt.UTC
            ),
        }

    def _history(
        self, plan: Plan, m: dict[str, Any], copied: dict[str, list[dict[str, Any]]]
    ) -> None:
        rng = self.rng
        anchor = self.anchor
        year_ago = anchor - dt.timedelta(days=365)
        verifs: list[dict[str, Any]] = []
        actions: list[dict[str, Any]] = []
        for sg in copied.get("safeguard", []):
            if sg["status"] != "installed":
                continue
            label = sg["label"]
            last_result = None
            # functional tests about every 90 days; an inspection about once a year
            schedule = []
            day = year_ago + dt.timedelta(days=rng.randint(0, 90))
            while day < anchor:
                schedule.append(("functional_test", day))
                day += dt.timedelta(days=rng.randint(80, 110))
            schedule.append(("inspection", anchor - dt.timedelta(days=rng.randint(10, 400))))
            schedule.sort(key=lambda x: x[1])
            for kind, on in schedule:
                roll = rng.random()
                if roll < 0.01:
                    notes = f"{label} did not stop the machine when tested; machine stopped."
                    v = self._verification(m, sg["id"], kind, on, "fail", notes=notes)
                    verifs.append(v)
                    retest = on + dt.timedelta(days=rng.randint(1, 5))
                    fixed = retest < anchor and rng.random() < 0.85
                    actions.append(
                        self._action(
                            m,
                            sg["id"],
                            "verification",
                            f"{label}: {verification.KINDS[kind].label.lower()} failed on {on}",
                            notes,
                            on + dt.timedelta(days=7),
                            retest if fixed else None,
                            v["id"],
                        )
                    )
                    last_result = "fail"
                    if fixed:
                        verifs.append(
                            self._verification(
                                m, sg["id"], kind, retest, "pass", notes="Re-test after the repair"
                            )
                        )
                        last_result = "pass"
                elif roll < 0.03:
                    verifs.append(
                        self._verification(
                            m, sg["id"], kind, on, "remarks", notes="Worn parts: replace them soon."
                        )
                    )
                    last_result = "remarks"
                else:
                    verifs.append(
                        self._verification(
                            m, sg["id"], kind, on, "pass", measured_values="Stops each time tested"
                        )
                    )
                    last_result = "pass"
            sg["trusted"] = last_result != "fail"
        # weekly press inspections, where 29 CFR 1910.217(e)(1)(ii) asks for them
        profile = (copied.get("press_profile") or [None])[0]
        if m["kind"] == "mechanical_press" and not (
            profile and profile["brake_monitor"] and profile["control_reliable"]
        ):
            day = year_ago + dt.timedelta(days=rng.randint(0, 6))
            stop = anchor - dt.timedelta(days=rng.choice((1, 2, 3, 4, 5, 6, 9, 12)))
            while day <= stop:
                verifs.append(
                    self._verification(
                        m,
                        None,
                        "weekly_press",
                        day,
                        "pass",
                        measured_values="Clutch/brake, anti-repeat and single stroke in order",
                        press_serial=m["serial"],
                        signature=INSPECTOR,
                    )
                )
                day += dt.timedelta(days=7)
        for v in verifs:
            self.audit("create", "verification", v, m["id"])
            self.add("verification", v)
        # start-of-shift checks on every working day, for every shift
        for cl in copied.get("shift_checklist", []):
            items = list(cl["items"])
            day = max(year_ago, cl["active_since"])
            n = 0
            while day < anchor:
                if str(day.isoweekday()) in cl["working_days"]:
                    for shift in range(1, cl["shifts_per_day"] + 1):
                        roll = rng.random()
                        if roll < 0.004:
                            continue  # not done
                        failed: list[str] = []
                        notes = ""
                        if roll > 0.997:
                            failed = [rng.choice(items)]
                            notes = "Fixed by maintenance before the shift started."
                            actions.append(
                                self._action(
                                    m,
                                    None,
                                    "shift check",
                                    f"{m['asset_tag']}: start-of-shift check failed on {day}",
                                    "Failed: " + "; ".join(failed) + ". " + notes,
                                    day + dt.timedelta(days=1),
                                    day,
                                    None,
                                )
                            )
                        n += 1
                        self.add(
                            "shift_check",
                            {
                                "id": self.ids.take("shift_check"),
                                "machine_id": m["id"],
                                "shift_date": day,
                                "shift": shift,
                                "performed_by": OPERATORS[(n + shift) % len(OPERATORS)],
                                "failed_items": failed,
                                "notes": notes,
                                "created_at": dt.datetime.combine(
                                    day, dt.time(6 + 8 * (shift - 1), 5), dt.UTC
                                ),
                            },
                        )
                day += dt.timedelta(days=1)
        copied.setdefault("corrective_action", []).extend(actions)


def _copy_shared(src: Engine, conn: Any) -> dict[str, list[dict[str, Any]]]:
    out = {}
    with src.connect() as s:
        for name in ("user_account", "site", "component", "instrument"):
            t = Base.metadata.tables[name]
            rows = [dict(r) for r in s.execute(select(t).order_by(t.c.id)).mappings()]
            if rows:
                conn.execute(insert(t), rows)
            out[name] = rows
    return out


def _plans(
    templates: list[Template],
    size: int,
    rng: random.Random,
    area_ids: list[int],
    anchor: dt.date,
    built_on: dt.date,
) -> Iterator[Plan]:
    kinds = list(ARCHETYPES)
    kind_weights = [ARCHETYPES[k][0] for k in kinds]
    forms = [f for f, _ in FORMS]
    form_weights = [w for _, w in FORMS]
    by = {(t.kind, t.form): t for t in templates}
    base_shift = (anchor - built_on).days
    for k in range(size):
        kind = rng.choices(kinds, kind_weights)[0]
        form = rng.choices(forms, form_weights)[0]
        yield Plan(k, by[(kind, form)], area_ids[k // AREA_SIZE], base_shift + rng.randint(-20, 0))


def generate(
    path: Path, size: int, *, anchor: dt.date | None = None, seed: int = SEED, log: Any = print
) -> dict[str, Any]:
    """Write a register of ``size`` machines to the SQLite file ``path`` (replaced)."""
    anchor = anchor or dt.date.today()
    built_on = dt.date.today()
    rng = random.Random(f"{seed}/{size}/{anchor.isoformat()}")
    started = time.perf_counter()
    for suffix in ("", "-wal", "-shm", ".meta.json"):
        p = Path(str(path) + suffix)
        if p.exists():
            p.unlink()
    path.parent.mkdir(parents=True, exist_ok=True)
    with tempfile.TemporaryDirectory() as tmp:
        tpl_engine = make_engine(f"sqlite:///{Path(tmp) / 'templates.sqlite'}")
        migrate.upgrade(tpl_engine)
        factory = session_factory(tpl_engine)
        audit.install(factory)
        with factory() as session:
            templates = build_templates(session, built_on, random.Random(f"{seed}/templates"))
        tpl = read_templates(tpl_engine, templates)
        log(f"  templates built through the services in {time.perf_counter() - started:.1f} s")

        target = make_engine(f"sqlite:///{path}")
        migrate.upgrade(target)
        head = migrate.current_revision(target)
        target.dispose()
        # the bulk load: one connection, foreign keys checked once at the end
        loader = create_engine(f"sqlite:///{path}")
        with loader.connect() as conn:
            conn.exec_driver_sql("PRAGMA foreign_keys=OFF")
            conn.exec_driver_sql("PRAGMA synchronous=OFF")
            conn.exec_driver_sql("PRAGMA journal_mode=MEMORY")
            conn.commit()
            with conn.begin():
                shared = _copy_shared(tpl_engine, conn)
                site_id = shared["site"][0]["id"]
                people = {r["role"]: r["id"] for r in shared["user_account"]}
                n_areas = (size + AREA_SIZE - 1) // AREA_SIZE
                area_t = Base.metadata.tables["area"]
                areas = [
                    {"id": i + 1, "site_id": site_id, "name": f"Line {i + 1:03d}"}
                    for i in range(n_areas)
                ]
                conn.execute(insert(area_t), areas)
                gen = Generator(
                    conn,
                    tpl,
                    templates,
                    anchor,
                    built_on,
                    rng,
                    site_id,
                    people,
                    [r["id"] for r in shared["instrument"]],
                )
                for name in ("audit_entry",):
                    gen.ids.start(name, 0)
                for i, plan in enumerate(
                    _plans(templates, size, rng, [a["id"] for a in areas], anchor, built_on)
                ):
                    gen.copy_machine(plan)
                    if (i + 1) % BATCH == 0:
                        gen.flush()
                    if (i + 1) % 1000 == 0:
                        log(f"  {i + 1} machines, {time.perf_counter() - started:.0f} s")
                gen.flush()
            with conn.begin():  # the due items as the register's first read would store them
                due.rewrite_site(conn, site_id)
            bad = conn.exec_driver_sql("PRAGMA foreign_key_check").fetchall()
            if bad:
                raise RuntimeError(f"broken references in the generated register: {bad[:5]}")
            conn.exec_driver_sql("ANALYZE")
            conn.exec_driver_sql("PRAGMA journal_mode=WAL")
            conn.commit()
        loader.dispose()
        tpl_engine.dispose()
    counts = dict(gen.counts, site=1, area=len(areas), user_account=len(PEOPLE))
    meta = {
        "generator_version": GENERATOR_VERSION,
        "seed": seed,
        "size": size,
        "anchor": anchor.isoformat(),
        "schema": head,
        "seconds": round(time.perf_counter() - started, 1),
        "rows": counts,
        "password": PASSWORD,
        "people": {role: email for email, _n, role in PEOPLE},
    }
    Path(str(path) + ".meta.json").write_text(json.dumps(meta, indent=2) + "\n")
    return meta


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--size", type=int, required=True)
    ap.add_argument("--out")
    ap.add_argument("--anchor", type=dt.date.fromisoformat, default=None)
    ap.add_argument("--seed", type=int, default=SEED)
    args = ap.parse_args()
    out = Path(args.out or ROOT / "bench" / "out" / f"register-{args.size}.sqlite")
    meta = generate(out, args.size, anchor=args.anchor, seed=args.seed)
    print(json.dumps(meta, indent=2))


if __name__ == "__main__":
    main()
