"""A starting list of the usual hazards per machine kind.

An assessment can start from these; each entry is a prompt for the assessor,
not a finding: every hazard must still be confirmed and rated on the machine.
The entries are common practice of the trade for these machines [practice].
"""

from __future__ import annotations

from typing import Any

from sqlalchemy.orm import Session

from riskreg.model import Assessment, Hazard, Task

from .register import _editable

# kind → list of (phase, task, hazard group, hazard type, danger zone, event, harm)
LIBRARY: dict[str, list[tuple[str, str, str, str, str, str, str]]] = {
    "mechanical_press": [
        (
            "operation",
            "Hand-feed blanks and remove parts",
            "mechanical",
            "crushing",
            "Between upper and lower die",
            "Hand in the die space when the slide descends",
            "Amputation of fingers or hand",
        ),
        (
            "operation",
            "Hand-feed blanks and remove parts",
            "mechanical",
            "ejection of parts",
            "Die area",
            "Part or scrap thrown from the die",
            "Eye or face injury",
        ),
        (
            "setting",
            "Die change",
            "mechanical",
            "crushing",
            "Die space and bolster",
            "Slide drifts or strokes while hands are between the dies",
            "Crushing of hands or arms",
        ),
        (
            "maintenance",
            "Clutch and brake adjustment",
            "mechanical",
            "entanglement",
            "Flywheel, belts and crank",
            "Clothing caught by rotating flywheel or belts",
            "Severe injury of arm",
        ),
        (
            "operation",
            "Running the press",
            "noise",
            "impulsive noise",
            "Operator position",
            "Repeated exposure to impact noise",
            "Hearing loss",
        ),
    ],
    "hydraulic_press": [
        (
            "operation",
            "Load and unload parts",
            "mechanical",
            "crushing",
            "Between ram and bed",
            "Ram closes with a hand in the tool area",
            "Crushing or amputation of hands",
        ),
        (
            "maintenance",
            "Hose and valve work",
            "mechanical",
            "high-pressure fluid injection or ejection",
            "Hydraulic circuit",
            "Pin-hole leak or burst hose under pressure",
            "Injection injury",
        ),
        (
            "setting",
            "Tool change",
            "mechanical",
            "crushing",
            "Tool area",
            "Ram descends under gravity when the circuit is opened",
            "Crushing",
        ),
    ],
    "press_brake": [
        (
            "operation",
            "Hold and bend sheet",
            "mechanical",
            "crushing",
            "Between punch and die",
            "Fingers trapped at the bend line",
            "Amputation of fingers",
        ),
        (
            "operation",
            "Hold and bend sheet",
            "mechanical",
            "impact",
            "In front of the die",
            "Sheet whips up during the bend",
            "Face or chest injury",
        ),
        (
            "setting",
            "Tool change",
            "mechanical",
            "cutting or severing",
            "Tool clamping",
            "Sharp punch edges handled",
            "Cuts",
        ),
    ],
    "shear": [
        (
            "operation",
            "Feed sheet to the blade",
            "mechanical",
            "cutting or severing",
            "Blade line",
            "Hand reaches the blade through the feed opening",
            "Amputation of fingers",
        ),
        (
            "operation",
            "Feed sheet to the blade",
            "mechanical",
            "crushing",
            "Hold-down feet",
            "Fingers under the hold-downs",
            "Crushed fingers",
        ),
        (
            "operation",
            "Collect sheared parts",
            "mechanical",
            "cutting or severing",
            "Rear of the shear",
            "Sharp edges of sheared parts",
            "Cuts",
        ),
    ],
    "robot_cell": [
        (
            "operation",
            "Load parts at the fixture",
            "mechanical",
            "impact",
            "Robot working envelope",
            "Robot moves while a person is in the cell",
            "Impact or crushing injury",
        ),
        (
            "fault_finding",
            "Clear a jam in the cell",
            "mechanical",
            "crushing",
            "Between robot and fixture",
            "Unexpected start-up during fault finding",
            "Crushing",
        ),
        (
            "setting",
            "Teach a program",
            "mechanical",
            "impact",
            "Robot envelope",
            "Robot moves faster than expected in teach mode",
            "Impact injury",
        ),
    ],
    "conveyor": [
        (
            "operation",
            "Clear parts at the transfer",
            "mechanical",
            "drawing-in or trapping",
            "Belt and return roller",
            "Hand drawn into the in-running nip",
            "Arm injury",
        ),
        (
            "cleaning",
            "Clean under the belt",
            "mechanical",
            "entanglement",
            "Drive shaft and chain",
            "Clothing caught by the drive",
            "Severe injury",
        ),
    ],
    "other": [
        (
            "operation",
            "Normal operation",
            "mechanical",
            "crushing",
            "Moving parts",
            "Body part reaches a moving part",
            "Injury",
        ),
    ],
}


def entries(kind: str) -> list[dict[str, Any]]:
    return [
        {
            "phase": p,
            "task": t,
            "hazard_group": g,
            "hazard_type": ht,
            "danger_zone": z,
            "event": e,
            "harm": h,
        }
        for p, t, g, ht, z, e, h in LIBRARY.get(kind, LIBRARY["other"])
    ]


def start_from_library(session: Session, assessment: Assessment, kind: str | None = None) -> int:
    """Add the library's tasks and hazards (unrated) to a draft assessment."""
    _editable(assessment)
    kind = kind or assessment.machine.kind
    tasks: dict[tuple[str, str], Task] = {(t.phase, t.description): t for t in assessment.tasks}
    count = 0
    for e in entries(kind):
        key = (e["phase"], e["task"])
        if key not in tasks:
            tasks[key] = Task(assessment=assessment, phase=e["phase"], description=e["task"])
            session.add(tasks[key])
        session.add(
            Hazard(
                assessment=assessment,
                task=tasks[key],
                hazard_group=e["hazard_group"],
                hazard_type=e["hazard_type"],
                danger_zone=e["danger_zone"],
                event=e["event"],
                harm=e["harm"],
            )
        )
        count += 1
    session.commit()
    return count
