"""Build the demo plant: Ostrander Vale Pressworks, an invented metal-forming plant.

Every name, person, machine and number here is invented for the demo.
"""

from __future__ import annotations

import datetime as dt
from typing import Any

from sqlalchemy import select
from sqlalchemy.orm import Session

from riskreg.model import Machine
from riskreg.services import register, safeguards, users, verification
from riskreg.services.audit import set_actor

DEMO_PASSWORD = "demo-password-2026"


def days_ago(n: int) -> dt.date:
    """Demo dates are relative to the day the demo is built."""
    return dt.date.today() - dt.timedelta(days=n)


SITE = "Ostrander Vale Pressworks"

PEOPLE = [
    ("admin@ostrander.invalid", "Rasmus Tollefsen-Aird", "admin"),
    ("approver@ostrander.invalid", "Ines Halvorsen-Reyes", "approver"),
    ("assessor@ostrander.invalid", "Tobiah Marsh-Quill", "assessor"),
    ("viewer@ostrander.invalid", "Dagny Okafor-Lind", "viewer"),
]

AREAS = ("Press shop", "Fabrication", "Welding and assembly")

# asset tag, name, kind, area, maker, model, serial, year, location
MACHINES = [
    (
        "PR-101",
        "250 t straight-side press",
        "mechanical_press",
        "Press shop",
        "Hollin Forge Works",
        "SS-250",
        "HF-88213",
        1998,
        "Bay 1, line A",
    ),
    (
        "PR-102",
        "160 t gap press (two operators)",
        "mechanical_press",
        "Press shop",
        "Hollin Forge Works",
        "GP-160",
        "HF-90544",
        1994,
        "Bay 1, line B",
    ),
    (
        "PR-103",
        "110 t OBI press",
        "mechanical_press",
        "Press shop",
        "Karsk Machinery",
        "OB-110",
        "K-11071",
        2009,
        "Bay 2",
    ),
    (
        "PR-104",
        "60 t full-revolution press",
        "mechanical_press",
        "Press shop",
        "Karsk Machinery",
        "FR-60",
        "K-06002",
        1981,
        "Bay 2, corner",
    ),
    (
        "HP-201",
        "400 t hydraulic deep-draw press",
        "hydraulic_press",
        "Press shop",
        "Velmar Hydraulik",
        "DD-400",
        "VH-4417",
        2015,
        "Bay 3",
    ),
    (
        "PB-301",
        "135 t press brake",
        "press_brake",
        "Fabrication",
        "Brenvik Tools",
        "PB-135/3100",
        "BT-31877",
        2012,
        "Fab hall north",
    ),
    (
        "PB-302",
        "80 t press brake",
        "press_brake",
        "Fabrication",
        "Brenvik Tools",
        "PB-80/2500",
        "BT-22190",
        2004,
        "Fab hall north",
    ),
    (
        "SH-401",
        "3 m guillotine shear",
        "shear",
        "Fabrication",
        "Tessaly Shears",
        "GS-3006",
        "TS-3006-17",
        2007,
        "Fab hall south",
    ),
    (
        "SH-402",
        "1.5 m foot shear",
        "shear",
        "Fabrication",
        "Tessaly Shears",
        "FS-1516",
        "TS-1516-02",
        1989,
        "Maintenance shop",
    ),
    (
        "RC-501",
        "Robot spot-welding cell",
        "robot_cell",
        "Welding and assembly",
        "Orrin Automation",
        "SW-2",
        "OA-5501",
        2018,
        "Weld line 1",
    ),
    (
        "RC-502",
        "Robot palletising cell",
        "robot_cell",
        "Welding and assembly",
        "Orrin Automation",
        "PL-1",
        "OA-5502",
        2021,
        "Dispatch",
    ),
    (
        "CV-601",
        "Part-transfer belt conveyor",
        "conveyor",
        "Welding and assembly",
        "Linnet Conveying",
        "BC-600",
        "LC-0601",
        2016,
        "Weld line 1 to paint",
    ),
    (
        "CV-602",
        "Scrap chute conveyor",
        "conveyor",
        "Press shop",
        "Linnet Conveying",
        "SC-400",
        "LC-0602",
        2003,
        "Under PR-101 and PR-102",
    ),
]

LIMITS: dict[str, dict[str, str]] = {
    "mechanical_press": {
        "scope": "Press, its die sets in use, feeding and part removal, die change.",
        "intended_use": "Blanking and forming of steel sheet up to 3 mm, hand-fed and "
        "single-stroke.",
        "foreseeable_misuse": "Reaching into the die to re-position a blank; tying down a "
        "button to run continuously; running with the guard removed after die change.",
        "space_limits": "Press footprint plus 1.5 m working area at the front; rear scrap chute.",
        "time_limits": "Clutch and brake linings replaced per maker; die sets rotated weekly.",
        "persons_exposed": "Press operators, die setters, maintenance fitters, passers-by in "
        "the aisle.",
    },
    "press_brake": {
        "scope": "Press brake with its tooling, front and rear of the machine.",
        "intended_use": "Bending sheet up to 6 mm, small parts held by hand.",
        "foreseeable_misuse": "Holding the part close to the bend line; muting the protective "
        "device for narrow boxes.",
        "persons_exposed": "Operators (one or two), setters, maintenance.",
    },
}

# tag → list of (task key, hazard dict, initial rating dict, residual rating dict or None)
R = dict[str, Any]


def iso(s: str, f: str, p: str, stage: str = "initial", **extra: Any) -> R:
    return {
        "method": "iso13849",
        "stage": stage,
        "severity": s,
        "frequency": f,
        "avoidance": p,
        **extra,
    }


TASKS: dict[str, list[tuple[str, str, str, str]]] = {
    # key, phase, description, who / how often
    "mechanical_press": [
        ("feed", "operation", "Hand-feed blanks and remove parts", "press operator|every stroke"),
        ("die", "setting", "Die change", "die setter|weekly"),
        ("brake", "maintenance", "Clutch and brake adjustment", "maintenance fitter|yearly"),
        ("clean", "cleaning", "Clear slugs from the die and bolster", "press operator|every shift"),
    ],
    "hydraulic_press": [
        ("load", "operation", "Load blanks and unload drawn parts", "press operator|every cycle"),
        ("tool", "setting", "Tool change", "die setter|monthly"),
        ("hyd", "maintenance", "Hose and valve replacement", "maintenance fitter|as needed"),
    ],
    "press_brake": [
        ("bend", "operation", "Hold and bend sheet", "operator|every bend"),
        ("tool", "setting", "Tool change and back-gauge setting", "setter|daily"),
    ],
    "shear": [
        ("feed", "operation", "Feed sheet to the blade", "operator|every cut"),
        ("rear", "operation", "Collect cut parts at the rear", "operator|every cut"),
        ("blade", "maintenance", "Blade change and gap setting", "maintenance fitter|yearly"),
    ],
    "robot_cell": [
        ("load", "operation", "Load parts at the turntable", "operator|every cycle"),
        ("jam", "fault_finding", "Clear a jam inside the cell", "operator|weekly"),
        ("teach", "setting", "Teach and touch up programs", "robot technician|monthly"),
    ],
    "conveyor": [
        ("clear", "operation", "Clear parts stuck at the transfer", "operator|daily"),
        ("clean", "cleaning", "Clean under the belt", "cleaner|weekly"),
    ],
}

HAZARDS: dict[str, list[tuple[str, dict[str, str], R, R | None]]] = {
    "mechanical_press": [
        (
            "feed",
            {
                "hazard_type": "crushing",
                "danger_zone": "Between upper and lower die",
                "event": "Hand in the die space when the slide descends",
                "harm": "Amputation of fingers or hand",
                "persons_exposed": "operator",
            },
            iso("S2", "F2", "P2"),
            iso("S2", "F2", "P2", "residual"),
        ),
        (
            "feed",
            {
                "hazard_type": "ejection of parts",
                "danger_zone": "Die area",
                "event": "Slug or part thrown from the die",
                "harm": "Eye or face injury",
                "persons_exposed": "operator, passers-by",
            },
            iso("S1", "F2", "P1"),
            None,
        ),
        (
            "die",
            {
                "hazard_type": "crushing",
                "danger_zone": "Die space and bolster",
                "event": "Slide drifts or is stroked while hands are between the dies",
                "harm": "Crushing of hands or arms",
                "persons_exposed": "die setter",
            },
            iso("S2", "F1", "P2"),
            iso("S2", "F1", "P1", "residual"),
        ),
        (
            "brake",
            {
                "hazard_type": "entanglement",
                "danger_zone": "Flywheel and belts",
                "event": "Sleeve caught by the coasting flywheel",
                "harm": "Severe arm injury",
                "persons_exposed": "maintenance fitter",
            },
            iso("S2", "F1", "P1"),
            None,
        ),
        (
            "clean",
            {
                "hazard_type": "cutting or severing",
                "danger_zone": "Die edges",
                "event": "Hand cut on the die's cutting edge while clearing slugs",
                "harm": "Deep cut to the hand",
                "persons_exposed": "operator",
            },
            iso("S1", "F2", "P1"),
            None,
        ),
    ],
    "hydraulic_press": [
        (
            "load",
            {
                "hazard_type": "crushing",
                "danger_zone": "Between ram and bed",
                "event": "Ram closes with a hand in the tool area",
                "harm": "Crushing or amputation of hands",
                "persons_exposed": "operator",
            },
            iso("S2", "F2", "P2"),
            iso("S2", "F2", "P1", "residual"),
        ),
        (
            "tool",
            {
                "hazard_type": "crushing",
                "danger_zone": "Tool area",
                "event": "Ram descends under gravity when the circuit is opened",
                "harm": "Crushing",
                "persons_exposed": "die setter",
            },
            iso("S2", "F1", "P2"),
            None,
        ),
        (
            "hyd",
            {
                "hazard_type": "high-pressure fluid injection or ejection",
                "danger_zone": "Hydraulic circuit",
                "event": "Pin-hole leak at a hose fitting",
                "harm": "Oil injection injury",
                "persons_exposed": "maintenance fitter",
            },
            iso("S2", "F1", "P1"),
            None,
        ),
    ],
    "press_brake": [
        (
            "bend",
            {
                "hazard_type": "crushing",
                "danger_zone": "Between punch and die",
                "event": "Fingers trapped at the bend line",
                "harm": "Amputation of fingers",
                "persons_exposed": "operator",
            },
            iso("S2", "F2", "P2"),
            iso("S2", "F2", "P1", "residual"),
        ),
        (
            "bend",
            {
                "hazard_type": "impact",
                "danger_zone": "In front of the die",
                "event": "Sheet whips up during the bend",
                "harm": "Face or chest injury",
                "persons_exposed": "operator",
            },
            iso("S1", "F2", "P1"),
            None,
        ),
        (
            "tool",
            {
                "hazard_type": "cutting or severing",
                "danger_zone": "Tool clamping",
                "event": "Hand cut on sharp punch edges",
                "harm": "Cuts",
                "persons_exposed": "setter",
            },
            iso("S1", "F1", "P1"),
            None,
        ),
    ],
    "shear": [
        (
            "feed",
            {
                "hazard_type": "cutting or severing",
                "danger_zone": "Blade line",
                "event": "Hand reaches the blade through the feed opening",
                "harm": "Amputation of fingers",
                "persons_exposed": "operator",
            },
            iso("S2", "F2", "P2"),
            iso("S2", "F2", "P1", "residual"),
        ),
        (
            "feed",
            {
                "hazard_type": "crushing",
                "danger_zone": "Hold-down feet",
                "event": "Fingers under the hold-downs",
                "harm": "Crushed fingers",
                "persons_exposed": "operator",
            },
            iso("S2", "F2", "P1"),
            None,
        ),
        (
            "rear",
            {
                "hazard_type": "cutting or severing",
                "danger_zone": "Rear of the shear",
                "event": "Reaching to the blade from the rear to retrieve a part",
                "harm": "Amputation",
                "persons_exposed": "operator",
            },
            iso("S2", "F1", "P2"),
            None,
        ),
        (
            "blade",
            {
                "hazard_type": "cutting or severing",
                "danger_zone": "Blade",
                "event": "Blade handled during change",
                "harm": "Deep cuts",
                "persons_exposed": "maintenance fitter",
            },
            iso("S1", "F1", "P2"),
            None,
        ),
    ],
    "robot_cell": [
        (
            "load",
            {
                "hazard_type": "impact",
                "danger_zone": "Robot working envelope",
                "event": "Robot moves while the operator reaches past the turntable",
                "harm": "Impact or crushing injury",
                "persons_exposed": "operator",
            },
            iso("S2", "F2", "P2"),
            iso("S2", "F2", "P1", "residual"),
        ),
        (
            "jam",
            {
                "hazard_type": "crushing",
                "danger_zone": "Between robot and fixture",
                "event": "Unexpected start while clearing a jam inside the cell",
                "harm": "Crushing",
                "persons_exposed": "operator",
            },
            iso("S2", "F1", "P2"),
            None,
        ),
        (
            "teach",
            {
                "hazard_type": "impact",
                "danger_zone": "Robot envelope",
                "event": "Robot moves faster than expected in teach mode",
                "harm": "Impact injury",
                "persons_exposed": "robot technician",
            },
            iso("S2", "F1", "P1"),
            None,
        ),
    ],
    "conveyor": [
        (
            "clear",
            {
                "hazard_type": "drawing-in or trapping",
                "danger_zone": "In-running nip at the return roller",
                "event": "Hand drawn into the nip while freeing a part",
                "harm": "Arm injury",
                "persons_exposed": "operator",
            },
            iso("S2", "F1", "P2"),
            None,
        ),
        (
            "clean",
            {
                "hazard_type": "entanglement",
                "danger_zone": "Drive shaft and chain",
                "event": "Clothing caught by the drive",
                "harm": "Severe injury",
                "persons_exposed": "cleaner",
            },
            iso("S2", "F1", "P1"),
            None,
        ),
    ],
}

# tag → list of (kind, status, description, hazard index list)
MEASURES: dict[str, list[tuple[str, str, str, list[int]]]] = {
    "PR-101": [
        ("light_curtain", "installed", "14 mm light curtain across the die opening", [0]),
        ("fixed_guard", "installed", "Fixed side guards with feed opening", [0, 1]),
        ("procedure", "installed", "Die-change procedure with safety blocks", [2]),
    ],
    "PR-102": [
        (
            "two_hand_control",
            "installed",
            "Each of the two operators has a push-button pair wired in series",
            [0],
        ),
        (
            "two_hand_control",
            "proposed",
            "Two complete two-hand control stations with synchronous actuation",
            [0],
        ),
    ],
    "PR-103": [
        (
            "two_hand_control",
            "installed",
            "Two-hand control station with anti-tie-down and anti-repeat",
            [0],
        ),
        ("ppe", "installed", "Safety glasses in the press shop", [1]),
    ],
    "PR-104": [
        ("two_hand_control", "installed", "Two-hand trip, full-revolution clutch", [0]),
        ("fixed_guard", "proposed", "Barrier guard replacing the trip for small parts", [0]),
    ],
    "HP-201": [
        ("interlocking_guard", "installed", "Front sliding door, coded interlock", [0]),
        ("procedure", "installed", "Block the ram before opening the circuit", [1]),
    ],
    "PB-301": [("light_curtain", "installed", "Light curtain at the front of the tools", [0])],
    "PB-302": [
        ("hold_to_run", "interim", "Slow closing speed under hold-to-run foot pedal", [0]),
        ("light_curtain", "proposed", "Light curtain at the front of the tools", [0]),
    ],
    "SH-401": [
        ("fixed_guard", "installed", "Finger guard at the hold-downs", [0, 1]),
        ("interlocking_guard", "installed", "Rear guard interlocked with the stroke", [2]),
    ],
    "SH-402": [("fixed_guard", "proposed", "Finger guard across the blade line", [0])],
    "RC-501": [
        ("interlocking_guard", "installed", "Cell door with guard locking", [1]),
        ("light_curtain", "installed", "Light curtain at the turntable", [0]),
        ("enabling_device", "installed", "Three-position enabling device on the pendant", [2]),
    ],
    "RC-502": [("interlocking_guard", "installed", "Perimeter fence door interlock", [0, 1])],
    "CV-601": [("fixed_guard", "installed", "Nip guard at the return roller", [0])],
    "CV-602": [
        ("fixed_guard", "proposed", "Enclose the drive chain", [1]),
        ("training", "installed", "Lock-out before cleaning", [1]),
    ],
}


def build(session: Session) -> list[tuple[str, str]]:
    """Fill an empty, migrated database with the demo plant. Returns the logins."""
    people = {}
    for email, name, role in PEOPLE:
        people[role] = users.create_user(session, email, name, role, DEMO_PASSWORD, commit=False)
    session.commit()
    set_actor(session, people["assessor"])
    site = register.create_site(
        session,
        SITE,
        units="mm",
        distance_method="ISO",
        stop_time_allowance_percent=10.0,
        base_url="http://127.0.0.1:8080",
    )
    areas = {name: register.create_area(session, site, name) for name in AREAS}
    machines: dict[str, Machine] = {}
    for tag, name, kind, area, maker, model, serial, year, location in MACHINES:
        m = register.create_machine(
            session,
            site,
            {
                "asset_tag": tag,
                "name": name,
                "kind": kind,
                "area_id": areas[area].id,
                "maker": maker,
                "model": model,
                "serial": serial,
                "year": year,
                "location": location,
            },
            user=people["assessor"],
            commit=False,
        )
        machines[tag] = m
    session.commit()
    for tag, m in machines.items():
        a = register.current_assessment(m)
        register.update_assessment(
            session, a, dict(LIMITS.get(m.kind, {}), assessors=people["assessor"].name)
        )
        tasks = {}
        for key, phase, desc, who_often in TASKS[m.kind]:
            who, often = who_often.split("|")
            tasks[key] = register.add_task(
                session,
                a,
                {"phase": phase, "description": desc, "performed_by": who, "frequency": often},
                commit=False,
            )
        session.flush()
        hazards = []
        for key, hz, initial, residual in HAZARDS[m.kind]:
            h = register.add_hazard(
                session,
                a,
                dict(hz, hazard_group="mechanical", task_id=tasks[key].id),
                initial,
                user=people["assessor"],
                commit=False,
            )
            session.flush()
            if residual is not None:
                register.rate_hazard(session, h, residual, user=people["assessor"], commit=False)
            hazards.append(h)
        session.flush()
        for kind, status, desc, idx in MEASURES.get(tag, []):
            register.add_measure(
                session,
                a,
                {
                    "kind": kind,
                    "status": status,
                    "description": desc,
                    "hazard_ids": [hazards[i].id for i in idx],
                },
                commit=False,
            )
        session.commit()
    # A noise hazard on the press shop's loudest press, rated by IEC 62061 for contrast
    pr101 = register.current_assessment(machines["PR-101"])
    register.add_hazard(
        session,
        pr101,
        {
            "hazard_group": "noise",
            "hazard_type": "impulsive noise",
            "danger_zone": "Operator position",
            "event": "Repeated impact noise at every stroke",
            "harm": "Noise-induced hearing loss",
            "persons_exposed": "operator",
        },
    )
    register.set_do_not_operate(
        session,
        machines["SH-402"],
        True,
        "No guard across the blade line; use SH-401 until the finger guard is fitted.",
    )
    build_safeguards(session, machines, people["assessor"].name)
    build_verification_history(session, machines)
    return [(email, role) for email, _name, role in PEOPLE]


# Invented parts for the component library (makers and figures are made up).
COMPONENTS = [
    {
        "maker": "Corvane Sensing",
        "model": "SG-14/1200",
        "kind": "light curtain",
        "pl": "e",
        "category": "4",
        "pfhd": "2.6e-9",
        "response_time_ms": "15",
        "espe_type": "4",
        "document": "Corvane SG data sheet rev. 7 (demo)",
    },
    {
        "maker": "Halden Relays",
        "model": "SR-3",
        "kind": "safety relay",
        "pl": "e",
        "category": "4",
        "pfhd": "1.2e-9",
        "response_time_ms": "10",
        "document": "Halden SR-3 certificate (demo)",
    },
    {
        "maker": "Pellor Valves",
        "model": "DV-22",
        "kind": "double press valve",
        "b10d": "20000000",
        "category": "4",
        "document": "Pellor DV-22 data sheet (demo)",
    },
]

TWO_HAND_SERIES = {
    "simultaneous": "y",
    "cessation": "y",
    "category": "1",
    "spacing_mm": "600",
    "actuators_per_station": "2",
    "series_wired": "y",
}
TWO_HAND_III = {
    "simultaneous": "y",
    "cessation": "y",
    "reinitiation": "y",
    "synchronous_window_ms": "500",
    "category": "4",
    "spacing_mm": "600",
    "actuators_per_station": "2",
    "anti_repeat": "y",
}

# tag → list of (safeguard data)
SAFEGUARDS: dict[str, list[dict[str, Any]]] = {
    "PR-101": [
        {
            "kind": "light_curtain",
            "label": "Front light curtain",
            "component": 0,
            "response_time_ms": "20",
            "installed_distance_mm": "450",
            "espe_type": "4",
            "resolution_mm": "14",
            "blanking": "none",
            "restart_interlock": "y",
        }
    ],
    "PR-102": [
        dict(
            TWO_HAND_SERIES,
            kind="two_hand_control",
            label="Push-button pair at each operator",
            response_time_ms="0",
            installed_distance_mm="560",
            operators="2",
            stations="2",
        )
    ],
    "PR-103": [
        dict(
            TWO_HAND_III,
            kind="two_hand_control",
            label="Two-hand control station with anti-tie-down",
            response_time_ms="10",
            installed_distance_mm="650",
            operators="1",
            stations="1",
        )
    ],
    "PR-104": [
        dict(
            TWO_HAND_III,
            kind="two_hand_control",
            label="Two-hand trip station",
            response_time_ms="0",
            installed_distance_mm="700",
            operators="1",
            stations="1",
            category="3",
        )
    ],
    "HP-201": [
        {
            "kind": "interlocking_guard",
            "label": "Front sliding door interlock",
            "response_time_ms": "30",
            "installed_distance_mm": "900",
            "device_type": "4",
            "coding": "high",
            "motivation_to_defeat": "medium",
            "opening_c_mm": "120",
            "measures_against_defeat": ["hidden mounting"],
        }
    ],
    "PB-301": [
        {
            "kind": "light_curtain",
            "label": "Tool-front light curtain",
            "response_time_ms": "15",
            "installed_distance_mm": "420",
            "espe_type": "4",
            "resolution_mm": "14",
            "blanking": "none",
            "restart_interlock": "y",
        }
    ],
    "RC-501": [
        {
            "kind": "light_curtain",
            "label": "Turntable light curtain",
            "response_time_ms": "18",
            "installed_distance_mm": "950",
            "espe_type": "4",
            "resolution_mm": "30",
            "blanking": "none",
            "restart_interlock": "y",
            "person_can_stand_inside": "y",
        },
        {
            "kind": "interlocking_guard_locking",
            "label": "Cell door with guard locking",
            "response_time_ms": "20",
            "device_type": "4",
            "coding": "high",
            "motivation_to_defeat": "low",
        },
    ],
}

# tag → list of (days before today, trials in ms, position)
MEASUREMENTS: dict[str, list[tuple[int, str, str]]] = {
    "PR-101": [
        (362, "170, 175, 178", "90° of crank rotation"),
        (174, "180, 183, 185", "90° of crank rotation"),
        (13, "240, 246, 251", "90° of crank rotation"),
    ],
    "PR-102": [(90, "150, 152, 158", "90° of crank rotation")],
    "PR-103": [(48, "180, 184, 186", "90° of crank rotation")],
    "PR-104": [(102, "210, 214, 212", "90° of crank rotation")],
    "HP-201": [(124, "120, 126, 131", "ram at mid-stroke")],
    "PB-301": [(203, "95, 98, 101", "closing speed")],
    "RC-501": [(273, "310, 318, 322", "robot at full speed, axis 1")],
}
# The site's measuring instruments: name, serial, last calibrated (days ago), interval.
# ST-2, used for the measurements, is due for calibration within 30 days; the spare
# ST-1 is overdue.
INSTRUMENTS = [
    ("Stop-time meter ST-2", "STM2-0417", 345, 365),
    ("Stop-time meter ST-1 (spare)", "STM1-0112", 400, 365),
]


def build_safeguards(session: Session, machines: dict[str, Machine], assessor: str) -> None:
    """Safeguard records, press data, measurements (which run the distance checks and
    open corrective actions), a verified safety function and a weighed choice."""
    parts = [safeguards.save_component(session, c) for c in COMPONENTS]
    for tag, items in SAFEGUARDS.items():
        for item in items:
            data = dict(item)
            if "component" in data:
                data["component_id"] = parts[data.pop("component")].id
            measures = register.current_assessment(machines[tag]).measures
            match = next(
                (x for x in measures if x.kind == data["kind"] and x.status == "installed"), None
            )
            data["measure_id"] = match.id if match else None
            safeguards.save_safeguard(session, machines[tag], data)
    safeguards.save_press_profile(
        session,
        machines["PR-101"],
        {
            "clutch": "part",
            "brake_monitor": "y",
            "control_reliable": "y",
            "anti_repeat": "y",
            "single_stroke": "y",
        },
    )
    for ago, ms, note in (
        (1034, "220", "commissioning"),
        (174, "260", "raised after brake relining"),
    ):
        safeguards.add_monitor_setting(
            session,
            machines["PR-101"],
            {"set_on": days_ago(ago), "setpoint_ms": ms, "set_by": assessor, "note": note},
        )
    safeguards.save_press_profile(
        session,
        machines["PR-104"],
        {
            "clutch": "full",
            "engaging_points": "2",
            "revolution_time_ms": "500",
            "anti_repeat": "y",
            "single_stroke": "y",
        },
    )
    for tag in ("PR-102", "PR-103"):
        safeguards.save_press_profile(
            session,
            machines[tag],
            {
                "clutch": "part",
                "brake_monitor": "y",
                "control_reliable": tag == "PR-103" and "y",
                "anti_repeat": tag == "PR-103" and "y",
                "single_stroke": "y",
            },
        )
    site = machines["PR-101"].site
    meters = [
        verification.save_instrument(
            session,
            site,
            {
                "name": name,
                "serial": serial,
                "calibrated_on": days_ago(ago),
                "calibration_interval_days": every,
            },
        )
        for name, serial, ago, every in INSTRUMENTS
    ]
    for tag, rows in MEASUREMENTS.items():
        for ago, trials, position in rows:
            on = days_ago(ago)
            safeguards.record_measurement(
                session,
                machines[tag],
                {
                    "measured_on": on,
                    "trials_ms": trials,
                    "position": position,
                    "instrument": "Stop-time meter ST-2",
                    # the meter's current calibration covers the later measurements only
                    "instrument_id": meters[0].id
                    if verification.in_calibration(meters[0], on)
                    else None,
                    "measured_by": assessor,
                },
            )
    # PR-101: the stop function of the light curtain, verified part by part
    a = register.current_assessment(machines["PR-101"])
    crush = a.hazards[0]
    sf = register.add_safety_function(
        session,
        a,
        {
            "name": "Stop the slide when the light curtain is interrupted",
            "trigger": "Any beam of the front light curtain interrupted during the closing stroke",
            "reaction": "Stop the slide before a hand can reach the die; no restart until reset",
            "modes": "run,inch",
            "response_time_s": 0.035,
            "hazard_ids": [crush.id],
        },
    )
    safeguards.save_part(
        session,
        sf,
        {"role": "input", "name": "Front light curtain", "given_pl": "e", "given_pfhd": "2.6e-9"},
    )
    safeguards.save_part(
        session,
        sf,
        {"role": "logic", "name": "Safety relay SR-3", "given_pl": "e", "given_pfhd": "1.2e-9"},
    )
    safeguards.save_part(
        session,
        sf,
        {
            "role": "output",
            "name": "Double press valve DV-22",
            "category": "4",
            "b10d": "20000000",
            "days_per_year": "240",
            "hours_per_day": "16",
            "cycle_time_s": "4",
            "dcavg_percent": "99",
            "ccf_points": "80",
        },
    )
    safeguards.save_access(
        session,
        crush,
        {"access": "frequent", "hand_feeding": "y", "ejection": "y", "other_people_exposed": "y"},
    )
    options = [
        safeguards.add_option(session, crush, o)
        for o in (
            {
                "kind": "light_curtain",
                "reachable_pl": "e",
                "space_available_mm": "700",
                "cost": "9000",
                "effect_on_work": "Free hand feeding; no extra motion",
            },
            {
                "kind": "two_hand_control",
                "reachable_pl": "e",
                "space_available_mm": "700",
                "cost": "4000",
                "effect_on_work": "Both hands off the part each stroke; slower",
            },
            {
                "kind": "fixed_guard",
                "reachable_pl": None,
                "space_available_mm": None,
                "cost": "2500",
                "effect_on_work": "Blanks cannot be fed by hand through it",
            },
        )
    ]
    safeguards.choose_option(
        session,
        options[0],
        "Blanks are fed by hand every stroke, so a fixed guard is not "
        "workable; the curtain protects the second person who clears "
        "slugs, which a two-hand control would not.",
        assessor,
    )


# --- a year of verification history -------------------------------------------------------

FITTER = "Jonas Brekke-Lowe"  # maintenance fitter (invented)
INSPECTOR = "Marit Quennell-Sand"  # maintenance lead who certifies press inspections
OPERATORS = ("Aino Varga-Pell", "Kofi Lindqvist-Ames", "Sunniva Ortega-Rahm")
NOON = dt.time(12, 0)

# (tag, safeguard label) → list of (kind, days ago, result, notes, measured values)
History = list[tuple[str, int, str, str, str]]
CURTAIN_TEST = "14 mm test rod at the top, middle and bottom of the field: stop each time"
TWO_HAND_TEST = "Releasing either button stops the slide; one hand alone starts nothing"
GUARD_TEST = "Door opened at mid-stroke: the ram stops before the opening is 10 mm wide"
LOCK_TEST = "Door stays locked while the robot moves; unlocks only at standstill"


def _regular(kind: str, days: list[int], values: str) -> History:
    return [(kind, d, "pass", "", values) for d in days]


VERIFICATIONS: dict[tuple[str, str], History] = {
    ("PR-101", "Front light curtain"): _regular(
        "functional_test", [355, 265, 175, 80], CURTAIN_TEST
    )
    + [("inspection", 300, "pass", "Mounting, cabling and mirror clean and tight", "")],
    ("PR-102", "Push-button pair at each operator"): _regular(
        "functional_test", [370, 280, 190, 100], TWO_HAND_TEST
    )
    + [
        (
            "inspection",
            340,
            "remarks",
            "Button shrouds worn at station 2; replace them at the next die change.",
            "",
        )
    ],
    ("PR-103", "Two-hand control station with anti-tie-down"): _regular(
        "functional_test", [340, 250, 160, 70], TWO_HAND_TEST + "; a tied-down button is refused"
    )
    + [("inspection", 200, "pass", "Station bolted down; spacing 600 mm as recorded", "")],
    ("PR-104", "Two-hand trip station"): _regular(
        "functional_test", [350, 260, 170, 86], TWO_HAND_TEST
    )
    + [("inspection", 380, "pass", "Trip station and cabling in order", "")],
    ("HP-201", "Front sliding door interlock"): _regular(
        "functional_test", [360, 270, 180, 95], GUARD_TEST
    )
    + [
        ("inspection", 150, "pass", "Coded actuator and switch fixed with one-way screws", ""),
        (
            "functional_test",
            3,
            "fail",
            "The door opened 80 mm with the ram still moving: the actuator is loose on its "
            "bracket and the switch no longer sees the first part of the travel. Press "
            "stopped; fitter called.",
            "Door gap at the moment of detection: about 80 mm",
        ),
    ],
    ("PB-301", "Tool-front light curtain"): _regular("functional_test", [330, 240], CURTAIN_TEST)
    + [
        (
            "functional_test",
            150,
            "fail",
            "Beam 7 did not stop the ram: receiver lens dirty and its connector loose.",
            "Test rod not detected in the lower third of the field",
        ),
        ("functional_test", 146, "pass", "Re-test after the repair", CURTAIN_TEST),
        ("functional_test", 60, "pass", "", CURTAIN_TEST),
        ("inspection", 100, "pass", "Curtain brackets and cabling in order", ""),
    ],
    ("RC-501", "Turntable light curtain"): _regular(
        "functional_test", [300, 210, 120, 30], "30 mm test rod across the field: stop each time"
    )
    + [("inspection", 250, "pass", "", "")],
    ("RC-501", "Cell door with guard locking"): _regular(
        "functional_test", [310, 220, 130, 40], LOCK_TEST
    )
    + [("inspection", 355, "pass", "Lock and actuator tight; escape release works", "")],
}
PB301_CLOSING = (
    "Lens cleaned, connector replaced and tightened; the functional test passed four days "
    "after the failure (see that verification)."
)
# Weekly press inspections (29 CFR 1910.217(e)(1)(ii)) on the presses not exempt.
# PR-102's last one is 11 days old (overdue); PR-104 had a four-week gap in the summer.
WEEKLY = {"PR-102": (range(361, 10, -7), ()), "PR-104": (range(360, 2, -7), range(150, 181))}
WEEKLY_VALUES = (
    "Clutch/brake: stops within its setting; anti-repeat holds; single stroke per actuation"
)

CHECKLIST_CURTAIN = [
    "Light curtain: the test rod stops the slide at the top, middle and bottom",
    "Fixed side guards in place and fastened",
    "Single stroke: one stroke per actuation",
    "Emergency stop stops the press",
]
CHECKLIST_TWO_HAND = [
    "Two-hand control: releasing either button stops the slide",
    "Both buttons are needed to start a stroke",
    "Guards in place and fastened",
    "Emergency stop stops the press",
]
# tag → (items, shifts per day, shifts not checked as (working day, shift), failed
# checks as (working day, index of the item not passed, note)); working days count
# back from the last one before today (1) so that the week-end never hides them.
SHIFT_CHECKS: dict[str, tuple[list[str], int, set[tuple[int, int]], list[tuple[int, int, str]]]] = {
    "PR-101": (CHECKLIST_CURTAIN, 2, {(6, 2)}, []),
    "PR-102": (CHECKLIST_TWO_HAND, 1, {(9, 1), (10, 1)}, []),
    "PR-103": (
        CHECKLIST_TWO_HAND,
        1,
        set(),
        [(8, 2, "Left guard fixing screw missing; press not started until it was fitted.")],
    ),
    "PR-104": (CHECKLIST_TWO_HAND, 1, set(), []),
}
SHIFT_WINDOW = 28

# tag → (procedure, last inspected days ago, interval)
LOCKOUTS = [
    ("PR-101", "Die change: main isolator off and locked, air dumped, safety blocks in", 200),
    ("PR-102", "Clutch and brake work: isolate, lock, release the flywheel energy", 380),
    ("HP-201", "Tool change: pump isolated, ram blocked, accumulator bled", 340),
    ("SH-401", "Blade change: isolator locked, blade beam lowered onto blocks", 90),
    ("RC-501", "Entering the cell: robot controller and air isolated and locked", 120),
]


def build_verification_history(session: Session, machines: dict[str, Machine]) -> None:
    """Verifications, weekly press inspections, start-of-shift checks and lockout
    procedures over the last year, dated back from today."""
    from riskreg.model import CorrectiveAction, Safeguard

    tag_of = {m.id: t for t, m in machines.items()}
    guards = {
        (tag_of[sg.machine_id], sg.label): sg
        for sg in session.scalars(select(Safeguard))
        if sg.machine_id in tag_of
    }
    records: list[tuple[int, Machine, dict[str, Any]]] = []
    for (tag, label), rows in VERIFICATIONS.items():
        sg = guards[(tag, label)]
        for kind, ago, result, notes, values in rows:
            records.append(
                (
                    ago,
                    machines[tag],
                    {
                        "kind": kind,
                        "safeguard_id": sg.id,
                        "performed_on": days_ago(ago),
                        "performed_by": FITTER,
                        "result": result,
                        "notes": notes,
                        "measured_values": values,
                    },
                )
            )
    for tag, (days, gap) in WEEKLY.items():
        m = machines[tag]
        for ago in days:
            if ago in gap:
                continue
            records.append(
                (
                    ago,
                    m,
                    {
                        "kind": "weekly_press",
                        "performed_on": days_ago(ago),
                        "performed_by": FITTER,
                        "result": "pass",
                        "measured_values": WEEKLY_VALUES,
                        "press_serial": m.serial,
                        "signature": INSPECTOR,
                    },
                )
            )
    # oldest first, so that trust follows the order of events
    for _ago, m, data in sorted(records, key=lambda r: -r[0]):
        # no files in the demo's records, so nothing is written under instance_path
        verification.record_verification(session, m, data, instance_path="instance")
    pb301 = guards[("PB-301", "Tool-front light curtain")]
    for action in session.scalars(
        select(CorrectiveAction).where(
            CorrectiveAction.safeguard_id == pb301.id, CorrectiveAction.status == "open"
        )
    ):
        safeguards.close_action(session, action, PB301_CLOSING)
        # the demo's history: due a week after the failure, closed at the re-test
        failed_on = days_ago(150)
        action.due_on = failed_on + dt.timedelta(days=7)
        action.closed_at = dt.datetime.combine(failed_on + dt.timedelta(days=4), NOON, dt.UTC)
    session.commit()

    failed_days: list[dt.date] = []
    for tag, (items, shifts, skipped, failed) in SHIFT_CHECKS.items():
        m = machines[tag]
        verification.save_checklist(
            session,
            m,
            {
                "items": items,
                "shifts_per_day": shifts,
                "working_days": "12345",
                "active_since": days_ago(SHIFT_WINDOW),
            },
        )
        fails = {n: (i, note) for n, i, note in failed}
        workdays = [d for d in map(days_ago, range(1, SHIFT_WINDOW + 1)) if d.isoweekday() <= 5]
        for n, day in sorted(enumerate(workdays, start=1), key=lambda x: x[1]):
            for shift in range(1, shifts + 1):
                if (n, shift) in skipped:
                    continue
                ok = list(items)
                note = ""
                if n in fails:
                    ok.pop(fails[n][0])
                    note = fails[n][1]
                    failed_days.append(day)
                verification.record_shift_check(
                    session,
                    m,
                    {
                        "shift_date": day,
                        "shift": shift,
                        "performed_by": OPERATORS[(n + shift) % len(OPERATORS)],
                        "ok_items": ok,
                        "notes": note,
                    },
                )
    for action in session.scalars(
        select(CorrectiveAction).where(
            CorrectiveAction.source == "shift check", CorrectiveAction.status == "open"
        )
    ):
        safeguards.close_action(
            session, action, "Screw fitted by maintenance during the same shift."
        )
        day = next((d for d in failed_days if str(d) in action.title), None)
        if day is not None:
            action.due_on = day + dt.timedelta(days=1)
            action.closed_at = dt.datetime.combine(day, NOON, dt.UTC)
    session.commit()

    for tag, title, ago in LOCKOUTS:
        verification.save_lockout(
            session,
            machines[tag],
            {
                "title": title,
                "last_inspected_on": days_ago(ago),
                "interval_days": 365,
                "inspected_by": INSPECTOR,
            },
        )
