"""What is due: every verification, check, replacement, inspection and calibration
with its next date.

The whole computation is one SQL query (a ``UNION ALL`` of one ``SELECT`` per kind
of item, each with its due date worked out by the database), so the number of
statements does not depend on the size of the register and the database sorts,
counts and pages the items: :func:`due_items` gives them all (the CLI, the reports,
the calendar feed), :func:`due_page` one page with the counts of every section (the
due board), :func:`due_summary` the counts alone (the site overview). Three small
queries prepare it: the site's intervals, the T10d of each distinct component duty
(from the engineering core, ISO 13849-1 Annex C) and the working-day patterns of the
start-of-shift checklists. The statement is built once per shape (kinds, filters,
number of duties and of runs of working days) with every value bound, so SQLAlchemy
compiles it once; ``tests/services`` and ``tests/web`` check its items.

The pages read the items from a stored copy of that query's result (``due_item``),
kept exact by session hooks, the kinds that depend on the day worked out again for
the whole site on the first read of each day: see "the stored items" below; ``tests/services/test_due_store.py``
checks the copy against the query after every kind of write.
"""

from __future__ import annotations

import datetime as dt
import functools
import math
from dataclasses import asdict, dataclass
from typing import Any

from sqlalchemy import (
    Boolean,
    Connection,
    Date,
    Float,
    Integer,
    String,
    and_,
    bindparam,
    case,
    cast,
    delete,
    event,
    func,
    insert,
    inspect,
    literal,
    null,
    or_,
    select,
    type_coerce,
    union_all,
    update,
)
from sqlalchemy.dialects.postgresql import JSONB
from sqlalchemy.dialects.postgresql import insert as pg_insert
from sqlalchemy.dialects.sqlite import insert as sqlite_insert
from sqlalchemy.orm import Session, aliased, sessionmaker

from riskreg.engineering import pl
from riskreg.model import (
    Area,
    Assessment,
    DueItemRow,
    DueRefresh,
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

from .audit import _place
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
PAGE_SIZE = 100  # items per page of the due board
MAX_T10D_YEARS = 7000.0  # a longer T10d runs past the calendar (year 9999): no item
STATUSES = ("overdue", "within 7 days", "within 30 days", "later")


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


@dataclass(frozen=True)
class DuePage:
    """One page of the due items, soonest first, with the counts of all of them."""

    items: list[DueItem]
    counts: dict[str, int]  # every status of STATUSES, over all pages
    total: int
    page: int  # 1-based; a page past the end is brought back to the last one
    pages: int
    per_page: int

    @property
    def first(self) -> int:
        """Position (1-based) of the page's first item among all of them."""
        return (self.page - 1) * self.per_page + 1 if self.items else 0

    def page_of(self, status: str) -> int:
        """The page on which the items of a status start."""
        return page_of(self.counts, status, self.per_page)


def page_of(counts: dict[str, int], status: str, per_page: int = PAGE_SIZE) -> int:
    """The page of the due board on which the items of a status start (the statuses
    follow each other in the order of STATUSES)."""
    before = 0
    for s in STATUSES:
        if s == status:
            break
        before += counts[s]
    return before // per_page + 1


def counts(items: list[DueItem]) -> dict[str, int]:
    out = {"overdue": 0, "within 7 days": 0, "within 30 days": 0}
    for i in items:
        if i.status in out:
            out[i.status] += 1
    return out


# --- the query ---------------------------------------------------------------------------


@functools.lru_cache(maxsize=4096)
def _t10d_years(b10d: float, days_per_year: float, hours_per_day: float, cycle: float) -> float:
    """T10d of a component duty from the engineering core (ValueError when refused)."""
    return float(pl.component_mttfd(b10d, days_per_year, hours_per_day, cycle).t10d_years)


class _Dates:
    """Date arithmetic and text order, which the two databases spell differently."""

    def __init__(self, pg: bool) -> None:
        self.pg = pg

    def value(self, name: str, typ: Any) -> Any:
        """A value bound at execution (cast on PostgreSQL, which needs the type in a
        select list; on SQLite a CAST to DATE would make a number of it)."""
        p = bindparam(name, type_=typ)
        return cast(p, typ) if self.pg else p

    def day_of(self, stamp: Any) -> Any:
        """The date of a timestamp, as Python's ``.date()`` of the loaded value gives it."""
        return cast(stamp, Date) if self.pg else type_coerce(func.date(stamp), Date)

    def plus(self, day: Any, days: Any) -> Any:
        """``day`` plus ``days`` days (NULL when either is NULL)."""
        if self.pg:
            return type_coerce(cast(day, Date) + cast(days, Integer), Date)
        return type_coerce(func.date(day, func.printf("%+d days", days)), Date)

    def later(self, a: Any, b: Any) -> Any:
        """The later of two dates."""
        return func.greatest(a, b) if self.pg else type_coerce(func.max(a, b), Date)

    def days_between(self, a: Any, b: Any) -> Any:
        """Whole days from date ``a`` to date ``b``."""
        if self.pg:
            return cast(b, Date) - cast(a, Date)
        return cast(func.julianday(b) - func.julianday(a), Integer)

    def lists(self, json_list: Any, value: Any) -> Any:
        """True when the JSON list of numbers holds the value."""
        if self.pg:
            return cast(json_list, JSONB).contains(func.jsonb_build_array(value))
        each = func.json_each(json_list).table_valued("value")
        return select(each.c.value).where(each.c.value == value).exists()

    def text_key(self, expr: Any) -> Any:
        """Sort text by code point, as Python sorts strings."""
        return expr.collate("C") if self.pg else expr


COLUMNS = (
    ("due", Date),
    ("kind", String),
    ("machine_id", Integer),
    ("safeguard_id", Integer),
    ("last_done", Date),
    ("interval_days", Integer),
    ("tag", String),
    ("label", String),
    ("machine_name", String),
    ("area", String),
    ("text", String),
    ("serial", String),
    ("n", Integer),
    ("trusted", Boolean),
    ("ref", Integer),
    ("years", Float),  # T10d of a part to replace
)


def _select(**cols: Any) -> Any:
    """One SELECT of the union: every column of COLUMNS, missing ones NULL."""
    out = []
    for name, typ in COLUMNS:
        value = cols.get(name)
        if value is None:
            value = cast(null(), typ)  # typed: PostgreSQL takes an untyped NULL for text
        elif not isinstance(getattr(value, "type", None), typ):
            value = type_coerce(value, typ)
        out.append(value.label(name))
    return select(*out)


@dataclass(frozen=True)
class _Shape:
    """What decides the statement's text; every other value is bound."""

    pg: bool
    kinds: tuple[str, ...]
    area: bool
    machines: bool  # only the machines of a list (bound, expanding)
    within: bool
    calendar_free: tuple[str, ...]  # per-safeguard kinds with no interval at the site
    duties: int
    runs: int  # runs of working days in the start-of-shift window, over the patterns


_STATEMENTS: dict[_Shape, Any] = {}


class _Build:
    """The union of every kind of due item of one site, for one shape."""

    def __init__(self, shape: _Shape) -> None:
        self.shape = shape
        self.d = _Dates(shape.pg)

    def machines(self) -> Any:
        """The site's machines in service that pass the filters (a subquery of ids)."""
        q = select(Machine.id).where(
            Machine.site_id == bindparam("site_id", type_=Integer), Machine.active.is_(True)
        )
        if self.shape.area:
            q = q.join(Area, Area.id == Machine.area_id).where(
                Area.name == bindparam("area", type_=String)
            )
        if self.shape.machines:
            q = q.where(Machine.id.in_(bindparam("machine_ids", expanding=True)))
        return q

    @staticmethod
    def _machine_cols(m: Any, a: Any) -> dict[str, Any]:
        return {"machine_id": m.id, "tag": m.asset_tag, "machine_name": m.name, "area": a.name}

    @staticmethod
    def _last_pass(sg: Any, k: str) -> Any:
        """The newest passing verification of a kind of one safeguard (an index seek)."""
        return (
            select(func.max(Verification.performed_on))
            .where(
                Verification.safeguard_id == sg.id,
                Verification.kind == k,
                Verification.result != "fail",
            )
            .correlate(sg)
            .scalar_subquery()
        )

    @staticmethod
    def _last_passes(ids: Any, k: str, by: Any) -> Any:
        """The newest passing verification of a kind, per safeguard or per machine, over
        the machines' verifications (one range of ix_verification_due per machine). A
        grouped subquery: the database computes it once, however often it is used."""
        return (
            select(by.label("owner"), func.max(Verification.performed_on).label("last"))
            .where(
                Verification.machine_id.in_(ids),
                Verification.kind == k,
                Verification.result != "fail",
                by.is_not(None),
            )
            .group_by(by)
            .subquery(f"last_{k}")
        )

    # -- one SELECT per kind ------------------------------------------------------------

    def safeguard_kind(self, ids: Any, k: str) -> Any:
        """Functional tests and inspections: from the last pass, or at once when none."""
        d = self.d
        m, a, sg = aliased(Machine), aliased(Area), aliased(Safeguard)
        own = aliased(VerificationInterval)  # the safeguard's own interval wins
        if k in self.shape.calendar_free:
            every = own.days
        else:
            every = func.coalesce(own.days, self.d.value(f"days_{k}", Integer))
        lp = self._last_passes(ids, k, Verification.safeguard_id)
        last = lp.c.last
        q = (
            _select(
                due=func.coalesce(d.plus(last, every), d.day_of(sg.created_at)),
                kind=literal(k),
                safeguard_id=sg.id,
                last_done=last,
                interval_days=every,
                label=sg.label,
                trusted=sg.trusted,
                ref=sg.id,
                **self._machine_cols(m, a),
            )
            .select_from(sg)
            .join(m, m.id == sg.machine_id)
            .outerjoin(a, a.id == m.area_id)
            .outerjoin(
                own,
                and_(
                    own.site_id == bindparam("site_id", type_=Integer),
                    own.safeguard_id == sg.id,
                    own.kind == k,
                ),
            )
            .outerjoin(lp, lp.c.owner == sg.id)
            .where(sg.machine_id.in_(ids), sg.status == "installed")
        )
        if k in self.shape.calendar_free:
            q = q.where(own.days.is_not(None))
        return q

    def full_validation(self, ids: Any) -> Any:
        """After a modification: from the day of the latest one naming the safeguard."""
        m, a, sg = aliased(Machine), aliased(Area), aliased(Safeguard)
        mo = aliased(Modification)
        since = (
            select(func.max(mo.made_on))
            .where(mo.machine_id == sg.machine_id, self.d.lists(mo.safeguard_ids, sg.id))
            .correlate(sg)
            .scalar_subquery()
        )
        return (
            _select(
                due=func.coalesce(since, self.d.value("today", Date)),
                kind=literal("full_validation"),
                safeguard_id=sg.id,
                last_done=self._last_pass(sg, "full_validation"),
                label=sg.label,
                ref=sg.id,
                **self._machine_cols(m, a),
            )
            .select_from(sg)
            .join(m, m.id == sg.machine_id)
            .outerjoin(a, a.id == m.area_id)
            .where(
                sg.machine_id.in_(ids),
                sg.status == "installed",
                sg.needs_revalidation.is_(True),
            )
        )

    def stopping_time(self, ids: Any) -> Any:
        """Per machine with a distance-dependent safeguard."""
        d = self.d
        m, a = aliased(Machine), aliased(Area)
        stops = (
            select(
                StoppingTimeMeasurement.machine_id.label("owner"),
                func.max(StoppingTimeMeasurement.measured_on).label("last"),
            )
            .where(StoppingTimeMeasurement.machine_id.in_(ids))
            .group_by(StoppingTimeMeasurement.machine_id)
            .subquery("last_stop")
        )
        last = stops.c.last
        guarded = select(Safeguard.machine_id).where(
            Safeguard.machine_id.in_(ids),
            Safeguard.status == "installed",
            Safeguard.kind.in_(sorted(DISTANCE_KINDS)),
        )
        return (
            _select(
                due=func.coalesce(
                    d.plus(last, self.d.value("stop_days", Integer)), d.day_of(m.created_at)
                ),
                kind=literal("stopping_time"),
                last_done=last,
                interval_days=self.d.value("stop_every", Integer),
                ref=m.id,
                **self._machine_cols(m, a),
            )
            .select_from(m)
            .outerjoin(a, a.id == m.area_id)
            .outerjoin(stops, stops.c.owner == m.id)
            .where(m.id.in_(guarded))
        )

    def weekly_press(self, ids: Any) -> Any:
        """Mechanical presses not exempt by 1910.217(b)(13) and (b)(14)."""
        d = self.d
        m, a, p = aliased(Machine), aliased(Area), aliased(PressProfile)
        weekly = self._last_passes(ids, "weekly_press", Verification.machine_id)
        last = weekly.c.last
        every = self.d.value("weekly_days", Integer)
        return (
            _select(
                due=func.coalesce(d.plus(last, every), d.day_of(m.created_at)),
                kind=literal("weekly_press"),
                last_done=last,
                interval_days=every,
                ref=m.id,
                **self._machine_cols(m, a),
            )
            .select_from(m)
            .outerjoin(a, a.id == m.area_id)
            .outerjoin(p, p.machine_id == m.id)
            .outerjoin(weekly, weekly.c.owner == m.id)
            .where(
                m.id.in_(ids),
                m.kind == "mechanical_press",
                or_(
                    p.id.is_(None),
                    ~and_(p.brake_monitor.is_(True), p.control_reliable.is_(True)),
                ),
            )
        )

    def replacement(self, ids: Any) -> Any:
        """Parts of current assessments with a usage, at T10d; the duties' days bound."""
        d = self.d
        m, a = aliased(Machine), aliased(Area)
        part = aliased(SafetyFunctionPart)
        current = (
            select(func.max(Assessment.id))
            .where(Assessment.machine_id.in_(ids), Assessment.status != "superseded")
            .group_by(Assessment.machine_id)
        )
        same = [
            and_(
                part.b10d == bindparam(f"b10d_{i}", type_=Float),
                part.days_per_year == bindparam(f"dop_{i}", type_=Float),
                part.hours_per_day == bindparam(f"hop_{i}", type_=Float),
                part.cycle_time_s == bindparam(f"tc_{i}", type_=Float),
            )
            for i in range(self.shape.duties)
        ]
        years = case(
            *[(cond, self.d.value(f"duty_years_{i}", Float)) for i, cond in enumerate(same)]
        )
        days = case(
            *[(cond, self.d.value(f"duty_days_{i}", Integer)) for i, cond in enumerate(same)]
        )
        return (
            _select(
                due=d.plus(part.installed_on, days),
                kind=literal("replacement"),
                last_done=part.installed_on,
                text=part.name,
                years=years,
                ref=part.id,
                **self._machine_cols(m, a),
            )
            .select_from(part)
            .join(SafetyFunction, SafetyFunction.id == part.safety_function_id)
            .join(Assessment, Assessment.id == SafetyFunction.assessment_id)
            .join(m, m.id == Assessment.machine_id)
            .outerjoin(a, a.id == m.area_id)
            .where(Assessment.id.in_(current), part.installed_on.is_not(None), or_(*same))
        )

    def lockout(self, ids: Any) -> Any:
        d = self.d
        m, a, lp = aliased(Machine), aliased(Area), aliased(LockoutProcedure)
        return (
            _select(
                due=func.coalesce(
                    d.plus(lp.last_inspected_on, lp.interval_days), d.day_of(m.created_at)
                ),
                kind=literal("lockout"),
                last_done=lp.last_inspected_on,
                interval_days=lp.interval_days,
                text=lp.title,
                ref=lp.id,
                **self._machine_cols(m, a),
            )
            .select_from(lp)
            .join(m, m.id == lp.machine_id)
            .outerjoin(a, a.id == m.area_id)
            .where(lp.machine_id.in_(ids))
        )

    def shift_checks(self, ids: Any) -> Any:
        """One line per machine whose start-of-shift checks were missed in the window.

        First, per checklist and per run of consecutive working days of its pattern
        (bound), the checks recorded against those expected: one index range each.
        Then, for the checklists that fall short only, per working day, the shifts
        not recorded, for the first day missed and their number."""
        d = self.d
        m, a, cl = aliased(Machine), aliased(Area), aliased(ShiftChecklist)
        runs = union_all(
            *[
                select(
                    d.value(f"pattern_{i}", String).label("pattern"),
                    d.value(f"run_from_{i}", Date).label("d1"),
                    d.value(f"run_to_{i}", Date).label("d2"),
                )
                for i in range(self.shape.runs)
            ]
        ).cte("runs")
        first = d.later(runs.c.d1, cl.active_since)
        recorded = (
            select(func.count())
            .where(
                ShiftCheck.machine_id == cl.machine_id,
                ShiftCheck.shift_date >= first,
                ShiftCheck.shift_date <= runs.c.d2,
                ShiftCheck.shift >= 1,
                ShiftCheck.shift <= cl.shifts_per_day,
            )
            .correlate(cl, runs)
            .scalar_subquery()
        )
        per_run = (
            select(
                cl.machine_id.label("mid"),
                ((d.days_between(first, runs.c.d2) + 1) * cl.shifts_per_day).label("expected"),
                recorded.label("done"),
            )
            .select_from(cl)
            .join(runs, and_(runs.c.pattern == cl.working_days, runs.c.d2 >= cl.active_since))
            .where(cl.machine_id.in_(ids))
            .subquery("per_run")
        )
        short = (
            select(per_run.c.mid)
            .group_by(per_run.c.mid)
            .having(func.sum(per_run.c.expected) > func.sum(per_run.c.done))
        )
        days = union_all(
            *[
                select(
                    d.value(f"day_{i}", Date).label("day"),
                    d.value(f"weekday_{i}", String).label("weekday"),
                )
                for i in range(SHIFT_WINDOW_DAYS)
            ]
        ).cte("window")
        per_day = (
            select(
                cl.machine_id.label("mid"),
                days.c.day.label("day"),
                (cl.shifts_per_day - func.count(ShiftCheck.id)).label("missing"),
            )
            .select_from(cl)
            .join(
                days,
                and_(days.c.day >= cl.active_since, cl.working_days.contains(days.c.weekday)),
            )
            .outerjoin(
                ShiftCheck,
                and_(
                    ShiftCheck.machine_id == cl.machine_id,
                    ShiftCheck.shift_date == days.c.day,
                    ShiftCheck.shift >= 1,
                    ShiftCheck.shift <= cl.shifts_per_day,
                ),
            )
            .where(cl.machine_id.in_(short))
            .group_by(cl.machine_id, days.c.day, cl.shifts_per_day)
            .subquery("per_day")
        )
        missed = (
            select(
                per_day.c.mid,
                func.min(per_day.c.day).label("first"),
                func.sum(per_day.c.missing).label("n"),
            )
            .where(per_day.c.missing > 0)
            .group_by(per_day.c.mid)
            .subquery("missed")
        )
        return (
            _select(
                due=missed.c.first,
                kind=literal("shift_check"),
                interval_days=literal(1),
                n=missed.c.n,
                ref=m.id,
                **self._machine_cols(m, a),
            )
            .select_from(missed)
            .join(m, m.id == missed.c.mid)
            .outerjoin(a, a.id == m.area_id)
        )

    def calibration(self) -> Any:
        d = self.d
        ins = aliased(Instrument)
        return _select(
            due=func.coalesce(
                d.plus(ins.calibrated_on, ins.calibration_interval_days),
                self.d.value("today", Date),
            ),
            kind=literal("calibration"),
            last_done=ins.calibrated_on,
            interval_days=ins.calibration_interval_days,
            tag=literal(""),
            text=ins.name,
            serial=ins.serial,
            ref=ins.id,
        ).where(ins.site_id == bindparam("site_id", type_=Integer), ins.active.is_(True))

    # -- the whole -----------------------------------------------------------------------

    def union(self) -> Any:
        ids = self.machines()
        parts: list[Any] = []
        for k in self.shape.kinds:
            if k in ("functional_test", "inspection"):
                parts.append(self.safeguard_kind(ids, k))
            elif k == "full_validation":
                parts.append(self.full_validation(ids))
            elif k == "stopping_time":
                parts.append(self.stopping_time(ids))
            elif k == "weekly_press":
                parts.append(self.weekly_press(ids))
            elif k == "replacement":
                parts.append(self.replacement(ids))
            elif k == "lockout":
                parts.append(self.lockout(ids))
            elif k == "shift_check":
                parts.append(self.shift_checks(ids))
            elif k == "calibration":
                parts.append(self.calibration())
        u = union_all(*parts).subquery("due_items")
        keep = (
            u.c.due <= bindparam("limit", type_=Date) if self.shape.within else u.c.due.is_not(None)
        )
        d = self.d
        ordered = (
            select(u)
            .where(keep)
            .order_by(
                u.c.due,
                d.text_key(func.coalesce(u.c.tag, "")),
                d.text_key(func.coalesce(u.c.label, "")),
                d.text_key(u.c.kind),
                u.c.ref,
            )
        )

        def n(cond: Any) -> Any:
            return func.coalesce(func.sum(case((cond, 1), else_=0)), 0)

        today = bindparam("today", type_=Date)
        week = bindparam("week", type_=Date)
        month = bindparam("month", type_=Date)
        by_status = (
            u.c.due < today,
            and_(u.c.due >= today, u.c.due <= week),
            and_(u.c.due > week, u.c.due <= month),
            u.c.due > month,
        )
        counts = select(*[n(cond) for cond in by_status]).where(keep)
        # a page with the counts of all the items beside each row: one execution
        paged = ordered.add_columns(
            *[
                func.sum(case((cond, 1), else_=0)).over().label(f"count_{i}")
                for i, cond in enumerate(by_status)
            ]
        )
        return ordered, counts, paged, select(u).where(u.c.due.is_not(None))


def _dialect(conn: Session | Connection) -> str:
    bind = conn.get_bind() if isinstance(conn, Session) else conn
    return str(bind.dialect.name)


class _DueQuery:
    """The due items worked out from the register itself: the statements for their
    shape and the values they are run with. On a session or a connection."""

    def __init__(
        self,
        conn: Session | Connection,
        site_id: int,
        today: dt.date,
        *,
        area: str | None,
        machine_ids: list[int] | None,
        kind: str | None,
        within_days: int | None,
    ) -> None:
        self.conn = conn
        self.today = today
        vi = VerificationInterval
        intervals: dict[tuple[int | None, str], int] = {
            (sg, k): days
            for sg, k, days in conn.execute(
                select(vi.safeguard_id, vi.kind, vi.days).where(vi.site_id == site_id)
            )
        }

        def site_interval(k: str) -> int | None:
            """The site's interval of a kind (the per-safeguard ones are joined in SQL)."""
            if (None, k) in intervals:
                return intervals[(None, k)]
            return KINDS[k].default_days

        kinds = [k for k in KIND_ORDER if kind is None or kind == k]
        if machine_ids is not None or area:
            kinds = [k for k in kinds if k != "calibration"]  # site items, not a machine's
        start = today - dt.timedelta(days=SHIFT_WINDOW_DAYS)
        stop_every = site_interval("stopping_time")
        params: dict[str, Any] = {
            "site_id": site_id,
            "today": today,
            "week": today + dt.timedelta(days=7),
            "month": today + dt.timedelta(days=30),
            "stop_every": stop_every,
            "stop_days": stop_every or 365,
            "weekly_days": site_interval("weekly_press") or 7,
        }
        for i in range(SHIFT_WINDOW_DAYS):
            day = start + dt.timedelta(days=i)
            params[f"day_{i}"] = day
            params[f"weekday_{i}"] = str(day.isoweekday())
        free = []
        for k in ("functional_test", "inspection"):
            every = site_interval(k)
            if every is None:
                free.append(k)
            params[f"days_{k}"] = every
        if area:
            params["area"] = area
        if machine_ids is not None:
            params["machine_ids"] = list(machine_ids)
            if not machine_ids:
                kinds = []
        if within_days is not None:
            params["limit"] = today + dt.timedelta(days=within_days)
        duties = 0  # distinct component duties (B10d and usage) with a T10d
        if "replacement" in kinds:
            for b10d, dop, hop, tc in conn.execute(_duties(site_id, area, machine_ids)):
                if None in (b10d, dop, hop, tc):
                    continue  # refused by the engineering core, as an empty duty would be
                try:
                    years = _t10d_years(float(b10d), float(dop), float(hop), float(tc))
                except ValueError:
                    continue
                if not math.isfinite(years) or years > MAX_T10D_YEARS:
                    continue
                i = duties
                duties += 1
                params.update(
                    {
                        f"b10d_{i}": b10d,
                        f"dop_{i}": dop,
                        f"hop_{i}": hop,
                        f"tc_{i}": tc,
                        f"duty_days_{i}": round(years * 365.25),
                        f"duty_years_{i}": years,
                    }
                )
            if not duties:
                kinds.remove("replacement")
        runs = 0
        if "shift_check" in kinds:
            ids = _machines(site_id, area, machine_ids)
            patterns = conn.scalars(
                select(ShiftChecklist.working_days)
                .where(ShiftChecklist.machine_id.in_(ids))
                .distinct()
            )
            for pattern in sorted(p for p in patterns if p):
                for d1, d2 in _working_runs(pattern, start, SHIFT_WINDOW_DAYS):
                    params[f"pattern_{runs}"] = pattern
                    params[f"run_from_{runs}"] = d1
                    params[f"run_to_{runs}"] = d2
                    runs += 1
            if not runs:
                kinds.remove("shift_check")
        self.params = params
        self.empty = not kinds
        if self.empty:
            return
        shape = _Shape(
            pg=_dialect(conn) == "postgresql",
            kinds=tuple(kinds),
            area=bool(area),
            machines=machine_ids is not None,
            within=within_days is not None,
            calendar_free=tuple(free),
            duties=duties,
            runs=runs,
        )
        built = _STATEMENTS.get(shape)
        if built is None:
            if len(_STATEMENTS) > 256:
                _STATEMENTS.clear()
            built = _STATEMENTS[shape] = _Build(shape).union()
        self.ordered, self.counts, self.paged, self.rows = built

    def summary(self) -> dict[str, int]:
        if self.empty:
            return dict.fromkeys(STATUSES, 0)
        row = self.conn.execute(self.counts, self.params).one()
        return {s: int(v) for s, v in zip(STATUSES, row, strict=True)}

    def items(self) -> list[DueItem]:
        if self.empty:
            return []
        return [_item(r, self.today) for r in self.conn.execute(self.ordered, self.params)]

    def page(self, limit: int, offset: int) -> tuple[list[DueItem], dict[str, int] | None]:
        """A page of the items and the counts of them all (None when the page is empty)."""
        if self.empty:
            return [], dict.fromkeys(STATUSES, 0)
        rows = list(self.conn.execute(self.paged.limit(limit).offset(offset), self.params))
        if not rows:
            return [], None
        n = {s: int(rows[0]._mapping[f"count_{i}"]) for i, s in enumerate(STATUSES)}
        return [_item(r, self.today) for r in rows], n

    def store(self, site_id: int) -> None:
        """Insert the items, as they are now, into the stored ones (``due_item``)."""
        if self.empty:
            return
        u = self.rows.subquery("worked_out")
        names = [name for name, _typ in COLUMNS]
        self.conn.execute(
            insert(DueItemRow.__table__).from_select(
                ["site_id", *names],
                select(
                    _Dates(_dialect(self.conn) == "postgresql").value("site_id", Integer),
                    *[u.c[name] for name in names],
                ),
            ),
            self.params,
        )


class _Stored:
    """The due items as stored (``due_item``): the same answers as :class:`_DueQuery`
    for the same day, read from one table."""

    def __init__(
        self,
        session: Session,
        site_id: int,
        today: dt.date,
        *,
        area: str | None,
        machine_id: int | None,
        kind: str | None,
        within_days: int | None,
    ) -> None:
        self.session = session
        self.today = today
        t = DueItemRow
        cond = [t.site_id == site_id]
        if area:
            cond.append(t.area == area)
        if machine_id:
            cond.append(t.machine_id == machine_id)
        if kind:
            cond.append(t.kind == kind)
        if within_days is not None:
            cond.append(t.due <= today + dt.timedelta(days=within_days))
        d = _Dates(_dialect(session) == "postgresql")
        self.ordered = (
            select(*[getattr(t, name) for name, _typ in COLUMNS])
            .where(*cond)
            .order_by(
                t.due,
                d.text_key(func.coalesce(t.tag, "")),
                d.text_key(func.coalesce(t.label, "")),
                d.text_key(t.kind),
                t.ref,
            )
        )
        week, month = today + dt.timedelta(days=7), today + dt.timedelta(days=30)

        def count(*more: Any) -> Any:  # a range of ix_due_item_order, counted
            return select(func.count()).where(*cond, *more).scalar_subquery()

        # each status, in the order of STATUSES: four ranges that cover the index once
        self.counts = select(
            count(t.due < today),
            count(t.due >= today, t.due <= week),
            count(t.due > week, t.due <= month),
            count(t.due > month),
        )

    def summary(self) -> dict[str, int]:
        row = self.session.execute(self.counts).one()
        return {s: int(v) for s, v in zip(STATUSES, row, strict=True)}

    def items(self) -> list[DueItem]:
        return [_item(r, self.today) for r in self.session.execute(self.ordered)]

    def page(self, limit: int, offset: int) -> tuple[list[DueItem], dict[str, int] | None]:
        rows = list(self.session.execute(self.ordered.limit(limit).offset(offset)))
        if not rows:
            return [], None
        return [_item(r, self.today) for r in rows], self.summary()


def _item(r: Any, today: dt.date) -> DueItem:
    """A due item from a row of either reading."""
    k = r.kind
    if k == "full_validation":
        detail = (
            f"modified on {r.due}: validate the safety function again "
            "(ISO 13849-2) before relying on it"
        )
    elif k in ("functional_test", "inspection"):
        detail = "" if r.trusted else "NOT TRUSTED: the last verification failed"
    elif k == "stopping_time":
        detail = "" if r.last_done else "never measured: no distance can be trusted"
    elif k == "replacement":
        detail = f"{r.text}: T10d = {r.years:.1f} years"
    elif k == "lockout":
        detail = r.text
    elif k == "shift_check":
        detail = f"{r.n} shift check(s) missed since {r.due} (last {SHIFT_WINDOW_DAYS} days)"
    elif k == "calibration":
        detail = f"{r.text}{' (' + r.serial + ')' if r.serial else ''}" + (
            "" if r.last_done else ": no calibration recorded"
        )
    else:
        detail = ""
    return DueItem(
        machine=r.tag or "",
        machine_id=r.machine_id,
        machine_name=r.machine_name or "",
        area=r.area or "",
        safeguard=r.label,
        safeguard_id=r.safeguard_id,
        kind=k,
        kind_label=LABELS[k],
        last_done=r.last_done,
        interval_days=r.interval_days,
        due_date=r.due,
        days_overdue=(today - r.due).days,
        detail=detail,
    )


# every kind of item, in the order of the union (the items are sorted after)
KIND_ORDER = (
    "full_validation",
    "functional_test",
    "inspection",
    "stopping_time",
    "weekly_press",
    "replacement",
    "lockout",
    "shift_check",
    "calibration",
)


def _machines(site_id: int, area: str | None, machine_ids: list[int] | None) -> Any:
    """The site's machines in service that pass the filters (a subquery of ids)."""
    ids = select(Machine.id).where(Machine.site_id == site_id, Machine.active.is_(True))
    if area:
        ids = ids.join(Area, Area.id == Machine.area_id).where(Area.name == area)
    if machine_ids is not None:
        ids = ids.where(Machine.id.in_(machine_ids))
    return ids


def _working_runs(pattern: str, start: dt.date, n: int) -> list[tuple[dt.date, dt.date]]:
    """The runs of consecutive working days (ISO weekdays in ``pattern``) among the
    ``n`` days from ``start``, as (first, last) pairs."""
    out: list[tuple[dt.date, dt.date]] = []
    run: list[dt.date] = []
    for i in range(n):
        day = start + dt.timedelta(days=i)
        if str(day.isoweekday()) in pattern:
            run.append(day)
        elif run:
            out.append((run[0], run[-1]))
            run = []
    if run:
        out.append((run[0], run[-1]))
    return out


def _duties(site_id: int, area: str | None, machine_ids: list[int] | None) -> Any:
    """The distinct duties (B10d and usage) of the parts that may need replacing."""
    ids = _machines(site_id, area, machine_ids)
    current = (
        select(func.max(Assessment.id))
        .where(Assessment.machine_id.in_(ids), Assessment.status != "superseded")
        .group_by(Assessment.machine_id)
    )
    part = SafetyFunctionPart
    return (
        select(part.b10d, part.days_per_year, part.hours_per_day, part.cycle_time_s)
        .join(SafetyFunction, SafetyFunction.id == part.safety_function_id)
        .where(
            SafetyFunction.assessment_id.in_(current),
            part.b10d.is_not(None),
            part.installed_on.is_not(None),
        )
        .distinct()
    )


# --- the stored items, kept current -------------------------------------------------------
#
# Working the items out reads much of the register (48,000 items from 3 million
# start-of-shift checks at 5,000 machines: seconds), so the due board and the overview
# read them from ``due_item``, where they are stored as worked out. They stay exact:
#
# - a write to any record they are worked out from (SOURCES) notes its machine in the
#   session; when the session commits, that machine's items are worked out again in the
#   same transaction (a site-wide record, such as an area or a site interval, marks the
#   whole site to be worked out again instead);
# - some items depend on the day itself (DAY_KINDS: the start-of-shift window, "due
#   today" for a validation or a calibration never recorded), so ``due_refresh`` holds
#   the day the site's items were worked out for; the first read on another day works
#   those kinds out again for the whole site before it reads, in a transaction of its
#   own (and everything, when the day is empty: never worked out, or marked so);
# - a transaction that has changed the register and not yet committed reads the items
#   worked out from the register itself, as does a read for another day than today.
#
# Both kinds of rewrite hold the site's ``due_refresh`` row (FOR UPDATE on PostgreSQL;
# SQLite has one writer at a time), so a full pass and a machine's rewrite never
# interleave.

PENDING = "due_pending"  # session.info: site id → machine ids, WHOLE_SITE, CALIBRATION
WHOLE_SITE = "site"
CALIBRATION = "calibration"
MAX_MACHINES_AT_COMMIT = 100  # more machines changed at once: the whole site, on next read
# The kinds whose items depend on the day itself, not only on the records: the missed
# start-of-shift checks (the window ends yesterday), and "due today" for a validation
# with no modification found or an instrument never calibrated. The other kinds' items
# are the same whatever the day (a test checks it), so a new day redoes these alone.
DAY_KINDS = ("shift_check", "full_validation", "calibration")

# The records the items are worked out from (a test checks them against the tables the
# statements read).
SOURCES: tuple[type, ...] = (
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
    StoppingTimeMeasurement,
    Verification,
    VerificationInterval,
)


def _note(session: Session, obj: Any, *, old: bool) -> None:
    """Note what a changed record means for the stored items."""
    if not isinstance(obj, SOURCES):
        return
    pending: dict[int, set[int | str]] = session.info.setdefault(PENDING, {})
    with session.no_autoflush:
        if isinstance(obj, Instrument):
            pending.setdefault(obj.site_id, set()).add(CALIBRATION)
            return
        if isinstance(obj, VerificationInterval):
            sg = session.get(Safeguard, obj.safeguard_id) if obj.safeguard_id else None
            pending.setdefault(obj.site_id, set()).add(sg.machine_id if sg else WHOLE_SITE)
            return
        if isinstance(obj, Area):
            pending.setdefault(obj.site_id, set()).add(WHOLE_SITE)
            return
        site_id, machine_id = _place(obj)
        if site_id is None:
            return
        noted = pending.setdefault(site_id, set())
        noted.add(machine_id if machine_id is not None else WHOLE_SITE)
        if old and "machine_id" in inspect(obj).attrs:  # moved to another machine
            noted.update(m for m in inspect(obj).attrs.machine_id.history.deleted if m)


def _before_flush(session: Session, _ctx: Any, _instances: Any) -> None:
    for obj in list(session.dirty):
        if session.is_modified(obj):
            _note(session, obj, old=True)
    for obj in list(session.deleted):
        _note(session, obj, old=True)


def _after_flush(session: Session, _ctx: Any) -> None:
    for obj in list(session.new):  # now with their ids
        _note(session, obj, old=False)


def _before_commit(session: Session) -> None:
    if session.in_nested_transaction():
        return
    session.flush()
    pending: dict[int, set[int | str]] = session.info.pop(PENDING, {})
    if not pending:
        return
    conn = session.connection()
    today = dt.date.today()
    for site_id, noted in sorted(pending.items()):
        _rewrite_noted(conn, site_id, noted, today)


def _forget(session: Session) -> None:
    session.info.pop(PENDING, None)


def install(factory: sessionmaker[Session]) -> None:
    """Keep the stored due items current on every session the factory makes."""
    event.listen(factory, "before_flush", _before_flush)
    event.listen(factory, "after_flush", _after_flush)
    event.listen(factory, "before_commit", _before_commit)
    event.listen(factory, "after_commit", _forget)
    event.listen(factory, "after_rollback", _forget)


def mark_site(session: Session, site_id: int) -> None:
    """Have the whole site worked out again (for writes that bypass the ORM)."""
    session.info.setdefault(PENDING, {}).setdefault(site_id, set()).add(WHOLE_SITE)


def _rewrite_noted(conn: Connection, site_id: int, noted: set[int | str], today: dt.date) -> None:
    t = DueRefresh.__table__
    stamp = conn.execute(
        select(t.c.computed_for).where(t.c.site_id == site_id).with_for_update()
    ).first()
    if stamp is None or stamp.computed_for is None:
        return  # never worked out, or to be worked out in full: the next read does it
    machines = sorted(m for m in noted if isinstance(m, int))
    if (
        stamp.computed_for > today  # stored by a server whose clock is ahead
        or WHOLE_SITE in noted
        or len(machines) > MAX_MACHINES_AT_COMMIT
    ):
        conn.execute(update(t).where(t.c.site_id == site_id).values(computed_for=None))
        return
    # (stored for an earlier day: the day's pass redoes the day's kinds, not these)
    if machines:
        _replace(conn, site_id, today, machine_ids=machines)
    if CALIBRATION in noted:
        _replace(conn, site_id, today, kind="calibration")


def _replace(
    conn: Connection,
    site_id: int,
    today: dt.date,
    *,
    machine_ids: list[int] | None = None,
    kind: str | None = None,
) -> None:
    """Replace stored items (of a site, of some of its machines, or of one kind) by
    those worked out now."""
    t = DueItemRow.__table__
    cond = [t.c.site_id == site_id]
    if machine_ids is not None:
        cond.append(t.c.machine_id.in_(machine_ids))
    if kind is not None:
        cond.append(t.c.kind == kind)
    conn.execute(delete(t).where(*cond))
    _DueQuery(
        conn, site_id, today, area=None, machine_ids=machine_ids, kind=kind, within_days=None
    ).store(site_id)


def rewrite_site(conn: Connection, site_id: int, today: dt.date | None = None) -> bool:
    """Bring the site's stored items to ``today``, in the caller's transaction: all of
    them when they were never worked out or were marked to be, else the kinds that
    depend on the day itself (DAY_KINDS). Nothing when another transaction has just done
    it; True when this call did."""
    today = today or dt.date.today()
    t = DueRefresh.__table__
    row = conn.execute(select(t.c.computed_for).where(t.c.site_id == site_id)).first()
    if row is None:
        claimed = (  # a row when this call inserted it (rowcount is not told here)
            conn.execute(
                _insert_or_skip(conn, t)
                .values(site_id=site_id, computed_for=today)
                .on_conflict_do_nothing()
                .returning(t.c.site_id)
            ).first()
            is not None
        )
        full = True
    else:
        was = row.computed_for
        if was == today:
            return False
        unchanged = t.c.computed_for.is_(None) if was is None else t.c.computed_for == was
        claimed = bool(
            conn.execute(
                update(t).where(t.c.site_id == site_id, unchanged).values(computed_for=today)
            ).rowcount
        )
        full = was is None or was > today
    if not claimed:
        return False
    if full:
        _replace(conn, site_id, today)
    else:
        for k in DAY_KINDS:
            _replace(conn, site_id, today, kind=k)
    return True


def _insert_or_skip(conn: Connection, table: Any) -> Any:
    """INSERT with ON CONFLICT, in the dialect of the connection."""
    return pg_insert(table) if conn.dialect.name == "postgresql" else sqlite_insert(table)


def _current(session: Session, site_id: int, today: dt.date) -> bool:
    """True when the stored items of the site can be read for ``today`` (worked out
    first, in a transaction of their own, when they were for another day)."""
    if session.info.get(PENDING):
        return False  # this transaction changed the register: work them out from it
    stamp = session.scalar(select(DueRefresh.computed_for).where(DueRefresh.site_id == site_id))
    if stamp == today:
        return True
    if session.new or session.dirty or session.deleted or _writing(session):
        return False  # a separate transaction could wait on this one
    with session.get_bind().connect() as conn:
        with conn.begin():
            rewrite_site(conn, site_id, today)
    return True


def _writing(session: Session) -> bool:
    """True when the session holds SQLite's write lock (a flushed, uncommitted write)."""
    if _dialect(session) != "sqlite" or not session.in_transaction():
        return False
    return bool(session.connection().connection.dbapi_connection.in_transaction)  # type: ignore[union-attr]


def _query(
    session: Session,
    site: Site,
    today: dt.date | None,
    area: str | None,
    machine_id: int | None,
    kind: str | None,
    within_days: int | None,
) -> _DueQuery | _Stored:
    day = today or dt.date.today()
    if day == dt.date.today() and _current(session, site.id, day):
        return _Stored(
            session,
            site.id,
            day,
            area=area,
            machine_id=machine_id,
            kind=kind,
            within_days=within_days,
        )
    return _DueQuery(
        session,
        site.id,
        day,
        area=area,
        machine_ids=[machine_id] if machine_id else None,
        kind=kind,
        within_days=within_days,
    )


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
    return _query(session, site, today, area, machine_id, kind, within_days).items()


def due_summary(
    session: Session,
    site: Site,
    *,
    today: dt.date | None = None,
    within_days: int | None = None,
    area: str | None = None,
    machine_id: int | None = None,
    kind: str | None = None,
) -> dict[str, int]:
    """How many items there are of every status (STATUSES)."""
    return _query(session, site, today, area, machine_id, kind, within_days).summary()


def due_page(
    session: Session,
    site: Site,
    *,
    page: int = 1,
    per_page: int = PAGE_SIZE,
    today: dt.date | None = None,
    within_days: int | None = None,
    area: str | None = None,
    machine_id: int | None = None,
    kind: str | None = None,
) -> DuePage:
    """One page of :func:`due_items` (in the same order), with the counts of them all."""
    q = _query(session, site, today, area, machine_id, kind, within_days)
    page = max(1, page)
    items, n = q.page(per_page, (page - 1) * per_page)
    if n is None:  # past the last page, or nothing at all: count, then the last page
        n = q.summary()
        page = max(1, -(-sum(n.values()) // per_page))
        items = q.page(per_page, (page - 1) * per_page)[0] if sum(n.values()) else []
    total = sum(n.values())
    return DuePage(items, n, total, page, max(1, -(-total // per_page)), per_page)


def worked_out(session: Session, site: Site, *, today: dt.date | None = None) -> list[DueItem]:
    """Every due item worked out from the register itself, never the stored copy (to
    check the stored one against)."""
    day = today or dt.date.today()
    return _DueQuery(
        session, site.id, day, area=None, machine_ids=None, kind=None, within_days=None
    ).items()
