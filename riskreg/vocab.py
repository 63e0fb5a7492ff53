"""Controlled vocabularies of the register: value → label shown to people.

The values are stored; labels may be reworded without a migration.
"""

from __future__ import annotations

ROLES = {
    "viewer": "Viewer: reads everything",
    "assessor": "Assessor: records machines, hazards, ratings and measures",
    "approver": "Approver: as assessor, and approves assessments",
    "admin": "Administrator: as approver, and manages sites and people",
}
ROLE_RANK = {"viewer": 0, "assessor": 1, "approver": 2, "admin": 3}

MACHINE_KINDS = {
    "mechanical_press": "Mechanical power press",
    "hydraulic_press": "Hydraulic press",
    "press_brake": "Press brake",
    "shear": "Shear",
    "robot_cell": "Robot cell",
    "conveyor": "Conveyor",
    "other": "Other machine",
}

# ISO 12100:2010 5.4 life-cycle phases [std, from memory]
PHASES = {
    "transport": "Transport",
    "installation": "Installation",
    "commissioning": "Commissioning",
    "setting": "Setting / changeover (die change)",
    "operation": "Operation",
    "cleaning": "Cleaning",
    "fault_finding": "Fault finding",
    "maintenance": "Maintenance",
    "decommissioning": "Decommissioning",
}

# ISO 12100:2010 Annex B hazard groups [std, from memory]
HAZARD_GROUPS = {
    "mechanical": "Mechanical",
    "electrical": "Electrical",
    "thermal": "Thermal",
    "noise": "Noise",
    "vibration": "Vibration",
    "radiation": "Radiation",
    "materials": "Materials and substances",
    "ergonomic": "Ergonomic",
    "environment": "Associated with the environment of use",
    "combination": "Combination of hazards",
}

MECHANICAL_TYPES = (
    "crushing",
    "shearing",
    "cutting or severing",
    "entanglement",
    "drawing-in or trapping",
    "impact",
    "stabbing or puncture",
    "friction or abrasion",
    "high-pressure fluid injection or ejection",
    "ejection of parts",
)

ASSESSMENT_STATUSES = {
    "draft": "Draft",
    "in_review": "In review",
    "approved": "Approved",
    "superseded": "Superseded",
}

RATING_METHODS = {
    "iso13849": "ISO 13849-1 risk graph (S, F, P → PLr)",
    "iec62061": "IEC 62061 matrix (Se, Fr, Pr, Av → SIL)",
    "ansi_b11": "ANSI B11.0 matrix (severity × probability → risk level)",
}
RATING_STAGES = {"initial": "Before measures", "residual": "Residual (after measures)"}

# ISO 12100:2010 6.1 three-step method [std, from memory]
MEASURE_STEPS = {
    "inherent": "1. Inherently safe design",
    "safeguarding": "2. Safeguarding and complementary measures",
    "information": "3. Information for use",
}
MEASURE_KINDS = {
    "inherent_design": ("inherent", "Inherently safe design change"),
    "fixed_guard": ("safeguarding", "Fixed guard"),
    "interlocking_guard": ("safeguarding", "Interlocking guard"),
    "interlocking_guard_locking": ("safeguarding", "Interlocking guard with guard locking"),
    "light_curtain": ("safeguarding", "Light curtain"),
    "multi_beam": ("safeguarding", "Multi-beam device"),
    "pressure_mat": ("safeguarding", "Pressure-sensitive mat"),
    "two_hand_control": ("safeguarding", "Two-hand control device"),
    "hold_to_run": ("safeguarding", "Hold-to-run control"),
    "enabling_device": ("safeguarding", "Enabling device"),
    "emergency_stop": ("safeguarding", "Emergency stop (complementary measure)"),
    "warning": ("information", "Warning sign or signal"),
    "training": ("information", "Training"),
    "ppe": ("information", "Personal protective equipment"),
    "procedure": ("information", "Written procedure"),
}
MEASURE_STATUSES = {
    "proposed": "Proposed",
    "interim": "Interim",
    "installed": "Installed",
    "removed": "Removed",
}
OPERATING_MODES = ("run", "setting", "inch", "maintenance")


def label(vocab: dict[str, object], value: str) -> str:
    v = vocab.get(value, value)
    if isinstance(v, tuple):
        return str(v[1])
    return str(v)
