"""More of the register for the pages that keep safeguards trusted: a safeguard with a
stopping-time measurement, an open corrective action, a candidate option, an
instrument, a verification, a lockout procedure, a start-of-shift checklist, a press
profile and a calendar link. Built on top of the ``seed`` fixture's register."""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass
from pathlib import Path

from sqlalchemy import Engine
from webtools import Seed

from riskreg.db import session_factory
from riskreg.model import Hazard, Machine
from riskreg.services import audit, safeguards, verification

TODAY = dt.date.today()
CHECKLIST = [
    "Light curtain stops the slide when the test rod passes",
    "Guards fastened",
    "Emergency stop stops the press",
]


@dataclass(frozen=True)
class TrustSeed(Seed):
    safeguard_id: int
    measurement_id: int
    action_id: int
    option_id: int
    instrument_id: int
    verification_id: int
    lockout_id: int
    token: str
    token_id: int


def add_trust_records(engine: Engine, seed: Seed, instance_dir: Path) -> TrustSeed:
    factory = session_factory(engine)
    audit.install(factory)
    with factory() as s:
        m = s.get(Machine, seed.machine_id)
        h = s.get(Hazard, seed.hazard_id)
        assert m is not None and h is not None
        sg = safeguards.save_safeguard(
            s,
            m,
            {
                "kind": "light_curtain",
                "label": "Front light curtain",
                "response_time_ms": "20",
                "installed_distance_mm": "600",
                "espe_type": "4",
                "resolution_mm": "14",
                "blanking": "none",
            },
        )
        meas = safeguards.record_measurement(
            s,
            m,
            {
                "measured_on": (TODAY - dt.timedelta(days=5)).isoformat(),
                "trials_ms": "180, 185, 190",
                "allowance_percent": "0",
            },
        )
        action = safeguards.add_action(
            s, m, {"title": "Refit the rear guard", "due_on": TODAY.isoformat()}
        )
        option = safeguards.add_option(s, h, {"kind": "light_curtain", "reachable_pl": "e"})
        ins = verification.save_instrument(
            s,
            m.site,
            {
                "name": "Stop-time meter A",
                "serial": "A-1",
                "calibrated_on": (TODAY - dt.timedelta(days=100)).isoformat(),
            },
        )
        v = verification.record_verification(
            s,
            m,
            {
                "kind": "functional_test",
                "safeguard_id": sg.id,
                "result": "pass",
                "performed_on": (TODAY - dt.timedelta(days=10)).isoformat(),
                "performed_by": "Maintenance",
            },
            instance_path=instance_dir,
        )
        lockout = verification.save_lockout(
            s, m, {"title": "Die change lock-out", "interval_days": "365"}
        )
        verification.save_checklist(
            s,
            m,
            {
                "items": CHECKLIST,
                "shifts_per_day": "2",
                "active_since": (TODAY - dt.timedelta(days=3)).isoformat(),
            },
        )
        safeguards.save_press_profile(s, m, {"clutch": "part", "brake_monitor": "y"})
        token = verification.new_calendar_token(s, m.site, "planner")
        token_id = verification.calendar_tokens(s, m.site)[-1].id
        return TrustSeed(
            **{k: getattr(seed, k) for k in Seed.__dataclass_fields__},
            safeguard_id=sg.id,
            measurement_id=meas.id,
            action_id=action.id,
            option_id=option.id,
            instrument_id=ins.id,
            verification_id=v.id,
            lockout_id=lockout.id,
            token=token,
            token_id=token_id,
        )
