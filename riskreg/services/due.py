"""What is due: every verification, check, replacement, inspection and calibration
with its next date, computed with a fixed number of set-based queries."""

from __future__ import annotations

import datetime as dt
from dataclasses import asdict, dataclass
from typing import Any

from sqlalchemy import func, select
from sqlalchemy.orm import Session

from riskreg.engineering import pl
from riskreg.model import (
    Area,
    Assessment,
    Instrument,
    LockoutProcedure,
    Machine,
    Modification,
    PressProfile,
    Safeguard,
    SafetyFunction,
    SafetyFunctionPart,
    ShiftCheck,
    ShiftChecklist,
    Site,
    StoppingTimeMeasurement,
    Verification,
    VerificationInterval,
)

from .safeguards import DISTANCE_KINDS
from .verification import KINDS

OTHER_KINDS = {
    "replacement": "Component replacement at T10d (ISO 13849-1) [std, from memory]",
    "lockout": "Energy-control procedure inspection, at least yearly "
    "(29 CFR 1910.147(c)(6)) [reg, from memory]",
    "calibration": "Instrument calibration, per the maker, often yearly [practice]",
    "shift_check": "Start-of-shift checks [practice]",
}
LABELS = {k: v.label for k, v in KINDS.items()} | {
    "replacement": "Component replacement (T10d)",
    "lockout": "Lockout procedure inspection",
    "calibration": "Instrument calibration",
    "shift_check": "Start-of-shift checks missed",
}
SHIFT_WINDOW_DAYS = 30


@dataclass(frozen=True)
class DueItem:
    machine: str  # asset tag; "" for site items such as instruments
    machine_id: int | None
    machine_name: str
    area: str
    safeguard: str | None
    safeguard_id: int | None
    kind: str
    kind_label: str
    last_done: dt.date | None
    interval_days: int | None
    due_date: dt.date
    days_overdue: int
    detail: str

    @property
    def status(self) -> str:
        if self.days_overdue > 0:
            return "overdue"
        if self.days_overdue >= -7:
            return "within 7 days"
        if self.days_overdue >= -30:
            return "within 30 days"
        return "later"

    def to_json(self) -> dict[str, Any]:
        d = asdict(self)
        d["due_date"] = self.due_date.isoformat()
        d["last_done"] = self.last_done.isoformat() if self.last_done else None
        d["status"] = self.status
        return d


def due_items(
    session: Session,
    site: Site,
    *,
    today: dt.date | None = None,
    within_days: int | None = None,
    area: str | None = None,
    machine_id: int | None = None,
    kind: str | None = None,
) -> list[DueItem]:
    """Every due item of a site, soonest first; ``within_days`` keeps those due by then."""
    today = today or dt.date.today()
    mq = (
        select(Machine, Area.name)
        .outerjoin(Area, Area.id == Machine.area_id)
        .where(Machine.site_id == site.id, Machine.active.is_(True))
    )
    if area:
        mq = mq.where(Area.name == area)
    if machine_id:
        mq = mq.where(Machine.id == machine_id)
    machines = {m.id: (m, a or "") for m, a in session.execute(mq)}
    ids = list(machines)
    items: list[DueItem] = []

    intervals: dict[tuple[int | None, str], int] = {
        (r.safeguard_id, r.kind): r.days
        for r in session.scalars(
            select(VerificationInterval).where(VerificationInterval.site_id == site.id)
        )
    }

    def interval(k: str, sg_id: int | None) -> int | None:
        if (sg_id, k) in intervals:
            return intervals[(sg_id, k)]
        if (None, k) in intervals:
            return intervals[(None, k)]
        return KINDS[k].default_days

    def add(
        m: Machine | None,
        sg: Safeguard | None,
        k: str,
        last: dt.date | None,
        every: int | None,
        due: dt.date,
        detail: str = "",
    ) -> None:
        area_name = machines[m.id][1] if m is not None else ""
        items.append(
            DueItem(
                machine=m.asset_tag if m else "",
                machine_id=m.id if m else None,
                machine_name=m.name if m else "",
                area=area_name,
                safeguard=sg.label if sg else None,
                safeguard_id=sg.id if sg else None,
                kind=k,
                kind_label=LABELS[k],
                last_done=last,
                interval_days=every,
                due_date=due,
                days_overdue=(today - due).days,
                detail=detail,
            )
        )

    if ids:
        guards = list(
            session.scalars(
                select(Safeguard)
                .where(Safeguard.machine_id.in_(ids), Safeguard.status == "installed")
                .order_by(Safeguard.id)
            )
        )
        last_pass = {
            (sid, k): d
            for sid, k, d in session.execute(
                select(
                    Verification.safeguard_id,
                    Verification.kind,
                    func.max(Verification.performed_on),
                )
                .where(
                    Verification.machine_id.in_(ids),
                    Verification.result != "fail",
                    Verification.safeguard_id.is_not(None),
                )
                .group_by(Verification.safeguard_id, Verification.kind)
            )
        }
        modified: dict[int, dt.date] = {}
        for made_on, sg_ids in session.execute(
            select(Modification.made_on, Modification.safeguard_ids).where(
                Modification.machine_id.in_(ids)
            )
        ):
            for sid in sg_ids or []:
                modified[sid] = max(modified.get(sid, made_on), made_on)
        for sg in guards:
            m = machines[sg.machine_id][0]
            if sg.needs_revalidation:
                since = modified.get(sg.id, today)
                add(
                    m,
                    sg,
                    "full_validation",
                    last_pass.get((sg.id, "full_validation")),
                    None,
                    since,
                    f"modified on {since}: validate the safety function again "
                    "(ISO 13849-2) before relying on it",
                )
            for k in ("functional_test", "inspection"):
                every = interval(k, sg.id)
                if every is None:
                    continue
                last = last_pass.get((sg.id, k))
                start = last or sg.created_at.date()
                due = start + dt.timedelta(days=every) if last else start
                add(
                    m,
                    sg,
                    k,
                    last,
                    every,
                    due,
                    "" if sg.trusted else "NOT TRUSTED: the last verification failed",
                )
        # stopping time, per machine with a distance-dependent safeguard
        needs_stop = {sg.machine_id for sg in guards if sg.kind in DISTANCE_KINDS}
        last_stop = dict(
            session.execute(
                select(
                    StoppingTimeMeasurement.machine_id,
                    func.max(StoppingTimeMeasurement.measured_on),
                )
                .where(StoppingTimeMeasurement.machine_id.in_(ids))
                .group_by(StoppingTimeMeasurement.machine_id)
            ).all()
        )
        for mid in sorted(needs_stop):
            m = machines[mid][0]
            every = interval("stopping_time", None)
            last = last_stop.get(mid)
            due = last + dt.timedelta(days=every or 365) if last else m.created_at.date()
            add(
                m,
                None,
                "stopping_time",
                last,
                every,
                due,
                "" if last else "never measured: no distance can be trusted",
            )
        # weekly press inspection, mechanical presses not exempt by (b)(13) and (b)(14)
        profiles = {
            p.machine_id: p
            for p in session.scalars(select(PressProfile).where(PressProfile.machine_id.in_(ids)))
        }
        last_weekly = dict(
            session.execute(
                select(Verification.machine_id, func.max(Verification.performed_on))
                .where(
                    Verification.machine_id.in_(ids),
                    Verification.kind == "weekly_press",
                    Verification.result != "fail",
                )
                .group_by(Verification.machine_id)
            ).all()
        )
        for mid, (m, _a) in sorted(machines.items()):
            if m.kind != "mechanical_press":
                continue
            p = profiles.get(mid)
            if p is not None and p.brake_monitor and p.control_reliable:
                continue
            every = interval("weekly_press", None) or 7
            last = last_weekly.get(mid)
            due = last + dt.timedelta(days=every) if last else m.created_at.date()
            add(m, None, "weekly_press", last, every, due)
        # component replacement at T10d (parts of current assessments with a usage)
        current = (
            select(func.max(Assessment.id))
            .where(Assessment.machine_id.in_(ids), Assessment.status != "superseded")
            .group_by(Assessment.machine_id)
        )
        for part, machine_of in session.execute(
            select(SafetyFunctionPart, Assessment.machine_id)
            .join(SafetyFunction, SafetyFunction.id == SafetyFunctionPart.safety_function_id)
            .join(Assessment, Assessment.id == SafetyFunction.assessment_id)
            .where(
                Assessment.id.in_(current),
                SafetyFunctionPart.b10d.is_not(None),
                SafetyFunctionPart.installed_on.is_not(None),
            )
        ):
            try:
                c = pl.component_mttfd(
                    float(part.b10d),
                    float(part.days_per_year or 0),
                    float(part.hours_per_day or 0),
                    float(part.cycle_time_s or 0),
                )
            except ValueError:
                continue
            due = part.installed_on + dt.timedelta(days=round(c.t10d_years * 365.25))
            add(
                machines[machine_of][0],
                None,
                "replacement",
                part.installed_on,
                None,
                due,
                f"{part.name}: T10d = {c.t10d_years:.1f} years",
            )
        for lp in session.scalars(
            select(LockoutProcedure).where(LockoutProcedure.machine_id.in_(ids))
        ):
            m = machines[lp.machine_id][0]
            last = lp.last_inspected_on
            due = last + dt.timedelta(days=lp.interval_days) if last else m.created_at.date()
            add(m, None, "lockout", last, lp.interval_days, due, lp.title)
        # start-of-shift checks: one line per machine whose checks were missed
        start = today - dt.timedelta(days=SHIFT_WINDOW_DAYS)
        lists = {
            c.machine_id: c
            for c in session.scalars(
                select(ShiftChecklist).where(ShiftChecklist.machine_id.in_(ids))
            )
        }
        done: dict[int, set[tuple[dt.date, int]]] = {}
        for mid, day, shift in session.execute(
            select(ShiftCheck.machine_id, ShiftCheck.shift_date, ShiftCheck.shift).where(
                ShiftCheck.machine_id.in_(list(lists)), ShiftCheck.shift_date >= start
            )
        ):
            done.setdefault(mid, set()).add((day, shift))
        for mid, cl in lists.items():
            missed: list[dt.date] = []
            day = max(start, cl.active_since)
            while day < today:
                if str(day.isoweekday()) in cl.working_days:
                    for s in range(1, cl.shifts_per_day + 1):
                        if (day, s) not in done.get(mid, set()):
                            missed.append(day)
                day += dt.timedelta(days=1)
            if missed:
                add(
                    machines[mid][0],
                    None,
                    "shift_check",
                    None,
                    1,
                    missed[0],
                    f"{len(missed)} shift check(s) missed since {missed[0]} "
                    f"(last {SHIFT_WINDOW_DAYS} days)",
                )
    if not machine_id and not area:
        for ins in session.scalars(
            select(Instrument).where(Instrument.site_id == site.id, Instrument.active.is_(True))
        ):
            last = ins.calibrated_on
            due = last + dt.timedelta(days=ins.calibration_interval_days) if last else today
            items.append(
                DueItem(
                    machine="",
                    machine_id=None,
                    machine_name="",
                    area="",
                    safeguard=None,
                    safeguard_id=None,
                    kind="calibration",
                    kind_label=LABELS["calibration"],
                    last_done=last,
                    interval_days=ins.calibration_interval_days,
                    due_date=due,
                    days_overdue=(today - due).days,
                    detail=f"{ins.name}{' (' + ins.serial + ')' if ins.serial else ''}"
                    + ("" if last else ": no calibration recorded"),
                )
            )
    if kind:
        items = [i for i in items if i.kind == kind]
    if within_days is not None:
        limit = today + dt.timedelta(days=within_days)
        items = [i for i in items if i.due_date <= limit]
    items.sort(key=lambda i: (i.due_date, i.machine, i.safeguard or "", i.kind))
    return items


def counts(items: list[DueItem]) -> dict[str, int]:
    out = {"overdue": 0, "within 7 days": 0, "within 30 days": 0}
    for i in items:
        if i.status in out:
            out[i.status] += 1
    return out
