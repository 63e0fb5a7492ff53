"""SQLAlchemy 2.0 typed mappings of the register. No business rules here.

The schema is created and changed only by the Alembic migrations in
``migrations/``; a test checks that upgrading an empty database to head gives
exactly these mappings.
"""

from __future__ import annotations

import datetime as dt
from typing import Any

from sqlalchemy import (
    JSON,
    Boolean,
    Column,
    DateTime,
    Float,
    ForeignKey,
    Index,
    Integer,
    MetaData,
    String,
    Table,
    Text,
    UniqueConstraint,
)
from sqlalchemy.orm import DeclarativeBase, Mapped, mapped_column, relationship

NAMING = {
    "ix": "ix_%(column_0_label)s",
    "uq": "uq_%(table_name)s_%(column_0_name)s",
    "ck": "ck_%(table_name)s_%(constraint_name)s",
    "fk": "fk_%(table_name)s_%(column_0_name)s_%(referred_table_name)s",
    "pk": "pk_%(table_name)s",
}


def utcnow() -> dt.datetime:
    return dt.datetime.now(dt.UTC)


class Base(DeclarativeBase):
    metadata = MetaData(naming_convention=NAMING)
    type_annotation_map = {dict[str, Any]: JSON, list[Any]: JSON}


class User(Base):
    __tablename__ = "user_account"

    id: Mapped[int] = mapped_column(primary_key=True)
    email: Mapped[str] = mapped_column(String(254), unique=True)
    name: Mapped[str] = mapped_column(String(120))
    password_hash: Mapped[str] = mapped_column(String(255))
    role: Mapped[str] = mapped_column(String(20))  # viewer, assessor, approver, admin
    active: Mapped[bool] = mapped_column(Boolean, default=True)
    created_at: Mapped[dt.datetime] = mapped_column(DateTime(timezone=True), default=utcnow)


class Site(Base):
    __tablename__ = "site"

    id: Mapped[int] = mapped_column(primary_key=True)
    name: Mapped[str] = mapped_column(String(120), unique=True)
    units: Mapped[str] = mapped_column(String(2), default="mm")  # mm or in
    distance_method: Mapped[str] = mapped_column(String(3), default="ISO")  # ISO or US
    rating_method: Mapped[str] = mapped_column(String(20), default="iso13849")
    editions: Mapped[dict[str, Any]] = mapped_column(default=dict)
    stop_time_allowance_percent: Mapped[float] = mapped_column(Float, default=0.0)
    base_url: Mapped[str | None] = mapped_column(String(300))
    allow_self_approval: Mapped[bool] = mapped_column(Boolean, default=False)
    created_at: Mapped[dt.datetime] = mapped_column(DateTime(timezone=True), default=utcnow)

    areas: Mapped[list[Area]] = relationship(back_populates="site", order_by="Area.name")
    machines: Mapped[list[Machine]] = relationship(back_populates="site")


class Area(Base):
    __tablename__ = "area"
    __table_args__ = (UniqueConstraint("site_id", "name"),)

    id: Mapped[int] = mapped_column(primary_key=True)
    site_id: Mapped[int] = mapped_column(ForeignKey("site.id"), index=True)
    name: Mapped[str] = mapped_column(String(120))

    site: Mapped[Site] = relationship(back_populates="areas")
    machines: Mapped[list[Machine]] = relationship(back_populates="area")


class EvidenceFile(Base):
    """A stored file (photo, PDF, meter export), kept by its SHA-256."""

    __tablename__ = "evidence_file"

    id: Mapped[int] = mapped_column(primary_key=True)
    sha256: Mapped[str] = mapped_column(String(64), index=True)
    filename: Mapped[str] = mapped_column(String(255))
    content_type: Mapped[str] = mapped_column(String(100))
    size: Mapped[int] = mapped_column(Integer)
    uploaded_at: Mapped[dt.datetime] = mapped_column(DateTime(timezone=True), default=utcnow)
    uploaded_by_id: Mapped[int | None] = mapped_column(ForeignKey("user_account.id"))


class Machine(Base):
    __tablename__ = "machine"
    __table_args__ = (UniqueConstraint("site_id", "asset_tag"),)

    id: Mapped[int] = mapped_column(primary_key=True)
    site_id: Mapped[int] = mapped_column(ForeignKey("site.id"), index=True)
    area_id: Mapped[int | None] = mapped_column(ForeignKey("area.id"), index=True)
    asset_tag: Mapped[str] = mapped_column(String(40))
    name: Mapped[str] = mapped_column(String(120))
    kind: Mapped[str] = mapped_column(String(40))
    maker: Mapped[str] = mapped_column(String(120), default="")
    model: Mapped[str] = mapped_column(String(120), default="")
    serial: Mapped[str] = mapped_column(String(120), default="")
    year: Mapped[int | None] = mapped_column(Integer)
    location: Mapped[str] = mapped_column(String(200), default="")
    notes: Mapped[str] = mapped_column(Text, default="")
    photo_id: Mapped[int | None] = mapped_column(ForeignKey("evidence_file.id"))
    active: Mapped[bool] = mapped_column(Boolean, default=True)
    do_not_operate: Mapped[bool] = mapped_column(Boolean, default=False)
    do_not_operate_reason: Mapped[str] = mapped_column(Text, default="")
    version: Mapped[int] = mapped_column(Integer, default=1)
    created_at: Mapped[dt.datetime] = mapped_column(DateTime(timezone=True), default=utcnow)

    site: Mapped[Site] = relationship(back_populates="machines")
    area: Mapped[Area | None] = relationship(back_populates="machines")
    photo: Mapped[EvidenceFile | None] = relationship()
    assessments: Mapped[list[Assessment]] = relationship(
        back_populates="machine", order_by="Assessment.revision"
    )

    __mapper_args__ = {"version_id_col": version}


class Assessment(Base):
    """One revision of a machine's risk assessment (ISO 12100 process)."""

    __tablename__ = "assessment"
    __table_args__ = (UniqueConstraint("machine_id", "revision"),)

    id: Mapped[int] = mapped_column(primary_key=True)
    machine_id: Mapped[int] = mapped_column(ForeignKey("machine.id"), index=True)
    revision: Mapped[int] = mapped_column(Integer, default=1)
    status: Mapped[str] = mapped_column(String(20), default="draft")
    scope: Mapped[str] = mapped_column(Text, default="")
    intended_use: Mapped[str] = mapped_column(Text, default="")
    foreseeable_misuse: Mapped[str] = mapped_column(Text, default="")
    space_limits: Mapped[str] = mapped_column(Text, default="")
    time_limits: Mapped[str] = mapped_column(Text, default="")
    persons_exposed: Mapped[str] = mapped_column(Text, default="")
    assessors: Mapped[str] = mapped_column(String(300), default="")
    approver_id: Mapped[int | None] = mapped_column(ForeignKey("user_account.id"))
    approved_at: Mapped[dt.datetime | None] = mapped_column(DateTime(timezone=True))
    submitted_at: Mapped[dt.datetime | None] = mapped_column(DateTime(timezone=True))
    snapshot: Mapped[dict[str, Any] | None] = mapped_column(JSON)
    change_reason: Mapped[str] = mapped_column(Text, default="")
    created_by_id: Mapped[int | None] = mapped_column(ForeignKey("user_account.id"))
    created_at: Mapped[dt.datetime] = mapped_column(DateTime(timezone=True), default=utcnow)

    machine: Mapped[Machine] = relationship(back_populates="assessments")
    approver: Mapped[User | None] = relationship(foreign_keys=[approver_id])
    tasks: Mapped[list[Task]] = relationship(back_populates="assessment", order_by="Task.id")
    hazards: Mapped[list[Hazard]] = relationship(back_populates="assessment", order_by="Hazard.id")
    measures: Mapped[list[ProtectiveMeasure]] = relationship(
        back_populates="assessment", order_by="ProtectiveMeasure.id"
    )
    safety_functions: Mapped[list[SafetyFunction]] = relationship(
        back_populates="assessment", order_by="SafetyFunction.id"
    )


class Task(Base):
    __tablename__ = "task"

    id: Mapped[int] = mapped_column(primary_key=True)
    assessment_id: Mapped[int] = mapped_column(ForeignKey("assessment.id"), index=True)
    phase: Mapped[str] = mapped_column(String(40))
    description: Mapped[str] = mapped_column(Text)
    performed_by: Mapped[str] = mapped_column(String(200), default="")
    frequency: Mapped[str] = mapped_column(String(200), default="")
    archived: Mapped[bool] = mapped_column(Boolean, default=False)
    origin_id: Mapped[int | None] = mapped_column(Integer)  # the task it was copied from

    assessment: Mapped[Assessment] = relationship(back_populates="tasks")
    hazards: Mapped[list[Hazard]] = relationship(back_populates="task")


hazard_measure = Table(
    "hazard_measure",
    Base.metadata,
    Column("hazard_id", ForeignKey("hazard.id"), primary_key=True),
    Column("measure_id", ForeignKey("protective_measure.id"), primary_key=True),
)

hazard_safety_function = Table(
    "hazard_safety_function",
    Base.metadata,
    Column("hazard_id", ForeignKey("hazard.id"), primary_key=True),
    Column("safety_function_id", ForeignKey("safety_function.id"), primary_key=True),
)


class Hazard(Base):
    __tablename__ = "hazard"
    __table_args__ = (
        # the site overview's counts per machine, read from the index alone
        Index("ix_hazard_overview", "assessment_id", "archived", "residual_accepted_at"),
    )

    id: Mapped[int] = mapped_column(primary_key=True)
    assessment_id: Mapped[int] = mapped_column(ForeignKey("assessment.id"), index=True)
    task_id: Mapped[int | None] = mapped_column(ForeignKey("task.id"), index=True)
    hazard_group: Mapped[str] = mapped_column(String(40))
    hazard_type: Mapped[str] = mapped_column(String(80), default="")
    danger_zone: Mapped[str] = mapped_column(String(200), default="")
    event: Mapped[str] = mapped_column(Text, default="")  # what could happen
    harm: Mapped[str] = mapped_column(Text, default="")  # possible harm
    persons_exposed: Mapped[str] = mapped_column(String(200), default="")
    photo_id: Mapped[int | None] = mapped_column(ForeignKey("evidence_file.id"))
    residual_accepted_by_id: Mapped[int | None] = mapped_column(ForeignKey("user_account.id"))
    residual_accepted_at: Mapped[dt.datetime | None] = mapped_column(DateTime(timezone=True))
    interim_measures: Mapped[str] = mapped_column(Text, default="")
    archived: Mapped[bool] = mapped_column(Boolean, default=False)
    origin_id: Mapped[int | None] = mapped_column(Integer)  # the hazard it was copied from
    version: Mapped[int] = mapped_column(Integer, default=1)
    created_at: Mapped[dt.datetime] = mapped_column(DateTime(timezone=True), default=utcnow)

    assessment: Mapped[Assessment] = relationship(back_populates="hazards")
    task: Mapped[Task | None] = relationship(back_populates="hazards")
    photo: Mapped[EvidenceFile | None] = relationship()
    residual_accepted_by: Mapped[User | None] = relationship()
    ratings: Mapped[list[RiskRating]] = relationship(
        back_populates="hazard", order_by="RiskRating.id"
    )
    measures: Mapped[list[ProtectiveMeasure]] = relationship(
        secondary=hazard_measure, back_populates="hazards"
    )
    safety_functions: Mapped[list[SafetyFunction]] = relationship(
        secondary=hazard_safety_function, back_populates="hazards"
    )

    __mapper_args__ = {"version_id_col": version}


class RiskRating(Base):
    """A rating of a hazard by one method at one stage, with its derivation stored."""

    __tablename__ = "risk_rating"
    __table_args__ = (
        # the highest level per machine on the site overview, read from the index alone
        Index(
            "ix_risk_rating_overview",
            "hazard_id",
            "stage",
            "superseded",
            "method",
            "override_level",
            "derived_level",
        ),
    )

    id: Mapped[int] = mapped_column(primary_key=True)
    hazard_id: Mapped[int] = mapped_column(ForeignKey("hazard.id"), index=True)
    stage: Mapped[str] = mapped_column(String(20))  # initial, residual
    method: Mapped[str] = mapped_column(String(20))  # iso13849, iec62061, ansi_b11
    parameters: Mapped[dict[str, Any]] = mapped_column()
    edition: Mapped[str] = mapped_column(String(20))
    derived_level: Mapped[str] = mapped_column(String(30))
    derivation: Mapped[dict[str, Any]] = mapped_column()
    override_level: Mapped[str | None] = mapped_column(String(30))
    override_source: Mapped[str] = mapped_column(String(200), default="")
    override_justification: Mapped[str] = mapped_column(Text, default="")
    override_approved_by: Mapped[str] = mapped_column(String(200), default="")
    superseded: Mapped[bool] = mapped_column(Boolean, default=False)
    created_at: Mapped[dt.datetime] = mapped_column(DateTime(timezone=True), default=utcnow)
    created_by_id: Mapped[int | None] = mapped_column(ForeignKey("user_account.id"))

    hazard: Mapped[Hazard] = relationship(back_populates="ratings")

    @property
    def level(self) -> str:
        """The level in force: the recorded override if any, else the derived one."""
        return self.override_level or self.derived_level


class SafetyFunction(Base):
    __tablename__ = "safety_function"

    id: Mapped[int] = mapped_column(primary_key=True)
    assessment_id: Mapped[int] = mapped_column(ForeignKey("assessment.id"), index=True)
    name: Mapped[str] = mapped_column(String(200))
    trigger: Mapped[str] = mapped_column(Text, default="")
    reaction: Mapped[str] = mapped_column(Text, default="")  # what the machine must do
    modes: Mapped[str] = mapped_column(String(200), default="")  # run, setting, inch
    response_time_s: Mapped[float | None] = mapped_column(Float)
    archived: Mapped[bool] = mapped_column(Boolean, default=False)
    origin_id: Mapped[int | None] = mapped_column(Integer)

    assessment: Mapped[Assessment] = relationship(back_populates="safety_functions")
    hazards: Mapped[list[Hazard]] = relationship(
        secondary=hazard_safety_function, back_populates="safety_functions"
    )
    measures: Mapped[list[ProtectiveMeasure]] = relationship(back_populates="safety_function")
    parts: Mapped[list[SafetyFunctionPart]] = relationship(
        back_populates="safety_function", order_by="SafetyFunctionPart.id"
    )


class ProtectiveMeasure(Base):
    __tablename__ = "protective_measure"

    id: Mapped[int] = mapped_column(primary_key=True)
    assessment_id: Mapped[int] = mapped_column(ForeignKey("assessment.id"), index=True)
    step: Mapped[str] = mapped_column(String(30))  # inherent, safeguarding, information
    kind: Mapped[str] = mapped_column(String(40))
    description: Mapped[str] = mapped_column(Text, default="")
    safety_function_id: Mapped[int | None] = mapped_column(ForeignKey("safety_function.id"))
    status: Mapped[str] = mapped_column(String(20), default="proposed")
    archived: Mapped[bool] = mapped_column(Boolean, default=False)
    origin_id: Mapped[int | None] = mapped_column(Integer)

    assessment: Mapped[Assessment] = relationship(back_populates="measures")
    safety_function: Mapped[SafetyFunction | None] = relationship(back_populates="measures")
    hazards: Mapped[list[Hazard]] = relationship(
        secondary=hazard_measure, back_populates="measures"
    )


class AuditEntry(Base):
    """Who changed what, when, with the values before and after."""

    __tablename__ = "audit_entry"

    id: Mapped[int] = mapped_column(primary_key=True)
    at: Mapped[dt.datetime] = mapped_column(DateTime(timezone=True), default=utcnow, index=True)
    user_id: Mapped[int | None] = mapped_column(ForeignKey("user_account.id"))
    user_email: Mapped[str] = mapped_column(String(254), default="")
    action: Mapped[str] = mapped_column(String(20))  # create, update, delete
    entity: Mapped[str] = mapped_column(String(40))
    entity_id: Mapped[int | None] = mapped_column(Integer)
    site_id: Mapped[int | None] = mapped_column(Integer, index=True)
    machine_id: Mapped[int | None] = mapped_column(Integer, index=True)
    before: Mapped[dict[str, Any] | None] = mapped_column(JSON)
    after: Mapped[dict[str, Any] | None] = mapped_column(JSON)


# --- safeguards and their engineering (machine-level records that outlive revisions) ---


class Component(Base):
    """A part from a maker's data sheet, reused across machines."""

    __tablename__ = "component"

    id: Mapped[int] = mapped_column(primary_key=True)
    maker: Mapped[str] = mapped_column(String(120))
    model: Mapped[str] = mapped_column(String(120))
    kind: Mapped[str] = mapped_column(String(60))  # e.g. light curtain, safety relay, valve
    pl: Mapped[str | None] = mapped_column(String(1))
    category: Mapped[str | None] = mapped_column(String(1))
    pfhd: Mapped[float | None] = mapped_column(Float)
    b10d: Mapped[float | None] = mapped_column(Float)
    mttfd_years: Mapped[float | None] = mapped_column(Float)
    response_time_s: Mapped[float | None] = mapped_column(Float)
    espe_type: Mapped[int | None] = mapped_column(Integer)
    document: Mapped[str] = mapped_column(String(300), default="")  # data sheet it came from
    notes: Mapped[str] = mapped_column(Text, default="")


class Safeguard(Base):
    """A physical safeguard on a machine: a two-hand control, a light curtain, a guard…

    ``parameters`` holds the kind's own characteristics (see services.safeguards).
    """

    __tablename__ = "safeguard"

    id: Mapped[int] = mapped_column(primary_key=True)
    machine_id: Mapped[int] = mapped_column(ForeignKey("machine.id"), index=True)
    kind: Mapped[str] = mapped_column(String(40))
    label: Mapped[str] = mapped_column(String(200))
    component_id: Mapped[int | None] = mapped_column(ForeignKey("component.id"))
    measure_id: Mapped[int | None] = mapped_column(ForeignKey("protective_measure.id"))
    response_time_s: Mapped[float] = mapped_column(Float, default=0.0)
    installed_distance_mm: Mapped[float | None] = mapped_column(Float)
    parameters: Mapped[dict[str, Any]] = mapped_column(default=dict)
    status: Mapped[str] = mapped_column(String(20), default="installed")
    trusted: Mapped[bool] = mapped_column(Boolean, default=True)
    needs_revalidation: Mapped[bool] = mapped_column(Boolean, default=False)
    version: Mapped[int] = mapped_column(Integer, default=1)
    created_at: Mapped[dt.datetime] = mapped_column(DateTime(timezone=True), default=utcnow)

    machine: Mapped[Machine] = relationship()
    component: Mapped[Component | None] = relationship()
    measure: Mapped[ProtectiveMeasure | None] = relationship()

    __mapper_args__ = {"version_id_col": version}


class PressProfile(Base):
    """Press specifics: clutch, engaging points, brake monitor, control reliability."""

    __tablename__ = "press_profile"

    id: Mapped[int] = mapped_column(primary_key=True)
    machine_id: Mapped[int] = mapped_column(ForeignKey("machine.id"), unique=True)
    clutch: Mapped[str] = mapped_column(String(10), default="part")  # part or full
    engaging_points: Mapped[int | None] = mapped_column(Integer)
    revolution_time_s: Mapped[float | None] = mapped_column(Float)
    brake_monitor: Mapped[bool] = mapped_column(Boolean, default=False)
    control_reliable: Mapped[bool] = mapped_column(Boolean, default=False)
    anti_repeat: Mapped[bool | None] = mapped_column(Boolean)
    single_stroke: Mapped[bool | None] = mapped_column(Boolean)

    machine: Mapped[Machine] = relationship()
    monitor_settings: Mapped[list[BrakeMonitorSetting]] = relationship(
        back_populates="profile", order_by="BrakeMonitorSetting.set_on"
    )


class BrakeMonitorSetting(Base):
    __tablename__ = "brake_monitor_setting"

    id: Mapped[int] = mapped_column(primary_key=True)
    profile_id: Mapped[int] = mapped_column(ForeignKey("press_profile.id"), index=True)
    set_on: Mapped[dt.date] = mapped_column()
    setpoint_s: Mapped[float] = mapped_column(Float)
    set_by: Mapped[str] = mapped_column(String(200), default="")
    note: Mapped[str] = mapped_column(Text, default="")

    profile: Mapped[PressProfile] = relationship(back_populates="monitor_settings")


class StoppingTimeMeasurement(Base):
    __tablename__ = "stopping_time_measurement"

    id: Mapped[int] = mapped_column(primary_key=True)
    machine_id: Mapped[int] = mapped_column(ForeignKey("machine.id"), index=True)
    measured_on: Mapped[dt.date] = mapped_column()
    instrument: Mapped[str] = mapped_column(String(200), default="")
    position: Mapped[str] = mapped_column(String(200), default="")
    measured_by: Mapped[str] = mapped_column(String(200), default="")
    trials_s: Mapped[list[Any]] = mapped_column()
    allowance_percent: Mapped[float] = mapped_column(Float, default=0.0)
    brake_monitor_limit_s: Mapped[float | None] = mapped_column(Float)
    t_used_s: Mapped[float] = mapped_column(Float)
    derivation: Mapped[dict[str, Any]] = mapped_column()
    notes: Mapped[str] = mapped_column(Text, default="")
    instrument_id: Mapped[int | None] = mapped_column(ForeignKey("instrument.id"))
    created_at: Mapped[dt.datetime] = mapped_column(DateTime(timezone=True), default=utcnow)

    machine: Mapped[Machine] = relationship()
    checks: Mapped[list[DistanceCheck]] = relationship(back_populates="measurement")


class DistanceCheck(Base):
    """Required against installed distance of one safeguard for one measurement."""

    __tablename__ = "distance_check"

    id: Mapped[int] = mapped_column(primary_key=True)
    measurement_id: Mapped[int] = mapped_column(
        ForeignKey("stopping_time_measurement.id"), index=True
    )
    safeguard_id: Mapped[int] = mapped_column(ForeignKey("safeguard.id"), index=True)
    method: Mapped[str] = mapped_column(String(3))  # ISO or US
    required_mm: Mapped[float | None] = mapped_column(Float)
    installed_mm: Mapped[float | None] = mapped_column(Float)
    passed: Mapped[bool | None] = mapped_column(Boolean)
    message: Mapped[str] = mapped_column(Text, default="")
    derivation: Mapped[dict[str, Any]] = mapped_column()

    measurement: Mapped[StoppingTimeMeasurement] = relationship(back_populates="checks")
    safeguard: Mapped[Safeguard] = relationship()


class CorrectiveAction(Base):
    __tablename__ = "corrective_action"

    id: Mapped[int] = mapped_column(primary_key=True)
    machine_id: Mapped[int] = mapped_column(ForeignKey("machine.id"), index=True)
    safeguard_id: Mapped[int | None] = mapped_column(ForeignKey("safeguard.id"))
    source: Mapped[str] = mapped_column(String(40))  # distance, pl, verification, overdue, manual
    title: Mapped[str] = mapped_column(String(300))
    description: Mapped[str] = mapped_column(Text, default="")
    owner: Mapped[str] = mapped_column(String(200), default="")
    due_on: Mapped[dt.date | None] = mapped_column()
    status: Mapped[str] = mapped_column(String(20), default="open")  # open, closed
    closing_note: Mapped[str] = mapped_column(Text, default="")
    verification_id: Mapped[int | None] = mapped_column(ForeignKey("verification.id"))
    closing_evidence_id: Mapped[int | None] = mapped_column(ForeignKey("evidence_file.id"))
    closed_at: Mapped[dt.datetime | None] = mapped_column(DateTime(timezone=True))
    created_at: Mapped[dt.datetime] = mapped_column(DateTime(timezone=True), default=utcnow)

    machine: Mapped[Machine] = relationship()
    safeguard: Mapped[Safeguard | None] = relationship()


class SafetyFunctionPart(Base):
    """Input, logic or output of a safety function, with its PL data."""

    __tablename__ = "safety_function_part"

    id: Mapped[int] = mapped_column(primary_key=True)
    safety_function_id: Mapped[int] = mapped_column(ForeignKey("safety_function.id"), index=True)
    role: Mapped[str] = mapped_column(String(10))  # input, logic, output
    name: Mapped[str] = mapped_column(String(200))
    component_id: Mapped[int | None] = mapped_column(ForeignKey("component.id"))
    # Either a certified part's data sheet (pl / pfhd) or the Category data
    given_pl: Mapped[str | None] = mapped_column(String(1))
    given_pfhd: Mapped[float | None] = mapped_column(Float)
    category: Mapped[str | None] = mapped_column(String(1))
    mttfd_years: Mapped[list[Any] | None] = mapped_column(JSON)
    b10d: Mapped[float | None] = mapped_column(Float)
    days_per_year: Mapped[float | None] = mapped_column(Float)
    hours_per_day: Mapped[float | None] = mapped_column(Float)
    cycle_time_s: Mapped[float | None] = mapped_column(Float)
    dcavg_percent: Mapped[float | None] = mapped_column(Float)
    ccf_points: Mapped[int | None] = mapped_column(Integer)
    well_tried: Mapped[bool] = mapped_column(Boolean, default=False)
    test_rate_ratio: Mapped[float | None] = mapped_column(Float)
    installed_on: Mapped[dt.date | None] = mapped_column()

    safety_function: Mapped[SafetyFunction] = relationship(back_populates="parts")
    component: Mapped[Component | None] = relationship()


class SafeguardOption(Base):
    """A candidate measure weighed for a hazard; the chosen one carries the reason."""

    __tablename__ = "safeguard_option"

    id: Mapped[int] = mapped_column(primary_key=True)
    hazard_id: Mapped[int] = mapped_column(ForeignKey("hazard.id"), index=True)
    kind: Mapped[str] = mapped_column(String(40))
    reachable_pl: Mapped[str | None] = mapped_column(String(1))
    space_available_mm: Mapped[float | None] = mapped_column(Float)
    cost: Mapped[float | None] = mapped_column(Float)
    effect_on_work: Mapped[str] = mapped_column(Text, default="")
    chosen: Mapped[bool] = mapped_column(Boolean, default=False)
    reason: Mapped[str] = mapped_column(Text, default="")

    hazard: Mapped[Hazard] = relationship()


class HazardAccess(Base):
    """What the task asks of the safeguard choice: access, ejection, others nearby."""

    __tablename__ = "hazard_access"

    id: Mapped[int] = mapped_column(primary_key=True)
    hazard_id: Mapped[int] = mapped_column(ForeignKey("hazard.id"), unique=True)
    access: Mapped[str] = mapped_column(String(20), default="frequent")
    ejection: Mapped[bool] = mapped_column(Boolean, default=False)
    other_people_exposed: Mapped[bool] = mapped_column(Boolean, default=False)
    hand_feeding: Mapped[bool] = mapped_column(Boolean, default=False)
    chosen_reason: Mapped[str] = mapped_column(Text, default="")
    chosen_by: Mapped[str] = mapped_column(String(200), default="")

    hazard: Mapped[Hazard] = relationship()


# --- keeping safeguards trusted: verification, due dates, checks, instruments ---------

verification_evidence = Table(
    "verification_evidence",
    Base.metadata,
    Column("verification_id", ForeignKey("verification.id"), primary_key=True),
    Column("evidence_file_id", ForeignKey("evidence_file.id"), primary_key=True),
)


class Instrument(Base):
    """A measuring instrument (e.g. a stop-time meter) and its calibration."""

    __tablename__ = "instrument"
    __table_args__ = (UniqueConstraint("site_id", "name"),)

    id: Mapped[int] = mapped_column(primary_key=True)
    site_id: Mapped[int] = mapped_column(ForeignKey("site.id"), index=True)
    name: Mapped[str] = mapped_column(String(120))
    serial: Mapped[str] = mapped_column(String(120), default="")
    calibrated_on: Mapped[dt.date | None] = mapped_column()
    calibration_interval_days: Mapped[int] = mapped_column(Integer, default=365)
    certificate_id: Mapped[int | None] = mapped_column(ForeignKey("evidence_file.id"))
    active: Mapped[bool] = mapped_column(Boolean, default=True)

    site: Mapped[Site] = relationship()


class Verification(Base):
    """One verification of a safeguard or safety function, with its evidence."""

    __tablename__ = "verification"
    __table_args__ = (
        # the newest passing verification of a kind, per safeguard or per machine, read
        # from the index alone (services.due)
        Index(
            "ix_verification_due", "machine_id", "kind", "safeguard_id", "performed_on", "result"
        ),
    )

    id: Mapped[int] = mapped_column(primary_key=True)
    machine_id: Mapped[int] = mapped_column(ForeignKey("machine.id"), index=True)
    safeguard_id: Mapped[int | None] = mapped_column(ForeignKey("safeguard.id"), index=True)
    kind: Mapped[str] = mapped_column(String(30), index=True)
    performed_on: Mapped[dt.date] = mapped_column(index=True)
    performed_by: Mapped[str] = mapped_column(String(200))
    result: Mapped[str] = mapped_column(String(20))  # pass, fail, remarks
    measured_values: Mapped[str] = mapped_column(Text, default="")
    notes: Mapped[str] = mapped_column(Text, default="")
    press_serial: Mapped[str] = mapped_column(String(120), default="")
    signature: Mapped[str] = mapped_column(String(200), default="")
    instrument_id: Mapped[int | None] = mapped_column(ForeignKey("instrument.id"))
    measurement_id: Mapped[int | None] = mapped_column(ForeignKey("stopping_time_measurement.id"))
    created_at: Mapped[dt.datetime] = mapped_column(DateTime(timezone=True), default=utcnow)

    machine: Mapped[Machine] = relationship()
    safeguard: Mapped[Safeguard | None] = relationship()
    instrument: Mapped[Instrument | None] = relationship()
    evidence: Mapped[list[EvidenceFile]] = relationship(secondary=verification_evidence)


class VerificationInterval(Base):
    """Interval of a verification kind: per site, or per safeguard (which wins)."""

    __tablename__ = "verification_interval"
    __table_args__ = (UniqueConstraint("site_id", "safeguard_id", "kind"),)

    id: Mapped[int] = mapped_column(primary_key=True)
    site_id: Mapped[int] = mapped_column(ForeignKey("site.id"), index=True)
    safeguard_id: Mapped[int | None] = mapped_column(ForeignKey("safeguard.id"))
    kind: Mapped[str] = mapped_column(String(30))
    days: Mapped[int] = mapped_column(Integer)


class ShiftChecklist(Base):
    __tablename__ = "shift_checklist"

    id: Mapped[int] = mapped_column(primary_key=True)
    machine_id: Mapped[int] = mapped_column(ForeignKey("machine.id"), unique=True)
    items: Mapped[list[Any]] = mapped_column()
    shifts_per_day: Mapped[int] = mapped_column(Integer, default=1)
    working_days: Mapped[str] = mapped_column(String(20), default="12345")  # ISO weekdays
    active_since: Mapped[dt.date] = mapped_column()

    machine: Mapped[Machine] = relationship()


class ShiftCheck(Base):
    __tablename__ = "shift_check"
    __table_args__ = (UniqueConstraint("machine_id", "shift_date", "shift"),)

    id: Mapped[int] = mapped_column(primary_key=True)
    machine_id: Mapped[int] = mapped_column(ForeignKey("machine.id"), index=True)
    shift_date: Mapped[dt.date] = mapped_column(index=True)
    shift: Mapped[int] = mapped_column(Integer, default=1)
    performed_by: Mapped[str] = mapped_column(String(200))
    failed_items: Mapped[list[Any]] = mapped_column(default=list)
    notes: Mapped[str] = mapped_column(Text, default="")
    created_at: Mapped[dt.datetime] = mapped_column(DateTime(timezone=True), default=utcnow)


class LockoutProcedure(Base):
    """An energy-control (lockout) procedure of a machine; inspected periodically."""

    __tablename__ = "lockout_procedure"

    id: Mapped[int] = mapped_column(primary_key=True)
    machine_id: Mapped[int] = mapped_column(ForeignKey("machine.id"), index=True)
    title: Mapped[str] = mapped_column(String(200))
    last_inspected_on: Mapped[dt.date | None] = mapped_column()
    interval_days: Mapped[int] = mapped_column(Integer, default=365)
    inspected_by: Mapped[str] = mapped_column(String(200), default="")

    machine: Mapped[Machine] = relationship()


class CalendarToken(Base):
    """A revocable secret for a site's iCalendar feed of due dates."""

    __tablename__ = "calendar_token"

    id: Mapped[int] = mapped_column(primary_key=True)
    site_id: Mapped[int] = mapped_column(ForeignKey("site.id"), index=True)
    token_hash: Mapped[str] = mapped_column(String(64), unique=True)
    label: Mapped[str] = mapped_column(String(120), default="")
    created_at: Mapped[dt.datetime] = mapped_column(DateTime(timezone=True), default=utcnow)
    revoked_at: Mapped[dt.datetime | None] = mapped_column(DateTime(timezone=True))


class Modification(Base):
    """Management of change: a modification to a machine that reopens its assessment."""

    __tablename__ = "modification"

    id: Mapped[int] = mapped_column(primary_key=True)
    machine_id: Mapped[int] = mapped_column(ForeignKey("machine.id"), index=True)
    made_on: Mapped[dt.date] = mapped_column()
    kind: Mapped[str] = mapped_column(String(40))  # die set, control change, guard moved, other
    description: Mapped[str] = mapped_column(Text)
    recorded_by: Mapped[str] = mapped_column(String(200), default="")
    assessment_id: Mapped[int | None] = mapped_column(ForeignKey("assessment.id"))
    safeguard_ids: Mapped[list[Any]] = mapped_column(default=list)
    created_at: Mapped[dt.datetime] = mapped_column(DateTime(timezone=True), default=utcnow)

    machine: Mapped[Machine] = relationship()


# --- what is due, as last worked out -------------------------------------------------------


class DueItemRow(Base):
    """A due item as :mod:`riskreg.services.due` last worked it out: a derived copy,
    kept current by a session hook on every write that touches what it is computed from
    and, for the kinds that depend on the day, worked out again for the whole site on
    the first read of each day. Not audited,
    not exported: it can always be computed again from the register."""

    __tablename__ = "due_item"
    __table_args__ = (Index("ix_due_item_order", "site_id", "due"),)

    id: Mapped[int] = mapped_column(primary_key=True)
    site_id: Mapped[int] = mapped_column(ForeignKey("site.id", ondelete="CASCADE"))
    machine_id: Mapped[int | None] = mapped_column(
        ForeignKey("machine.id", ondelete="CASCADE"), index=True
    )
    due: Mapped[dt.date] = mapped_column()
    kind: Mapped[str] = mapped_column(String(30))
    safeguard_id: Mapped[int | None] = mapped_column(Integer)
    last_done: Mapped[dt.date | None] = mapped_column()
    interval_days: Mapped[int | None] = mapped_column(Integer)
    tag: Mapped[str | None] = mapped_column(String(40))
    label: Mapped[str | None] = mapped_column(String(200))
    machine_name: Mapped[str | None] = mapped_column(String(120))
    area: Mapped[str | None] = mapped_column(String(120))
    text: Mapped[str | None] = mapped_column(Text)
    serial: Mapped[str | None] = mapped_column(String(120))
    n: Mapped[int | None] = mapped_column(Integer)
    trusted: Mapped[bool | None] = mapped_column(Boolean)
    ref: Mapped[int | None] = mapped_column(Integer)
    years: Mapped[float | None] = mapped_column(Float)


class DueRefresh(Base):
    """The day a site's stored due items were last worked out for in full; none, or an
    earlier day, means they must be worked out again before they are read."""

    __tablename__ = "due_refresh"

    site_id: Mapped[int] = mapped_column(
        ForeignKey("site.id", ondelete="CASCADE"), primary_key=True
    )
    computed_for: Mapped[dt.date | None] = mapped_column()
