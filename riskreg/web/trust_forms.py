"""Forms of the "keeping safeguards trusted" pages. They check shapes only; the
verification service checks the rules and answers each bad value by field."""

from __future__ import annotations

from flask_wtf import FlaskForm
from flask_wtf.file import MultipleFileField
from wtforms import RadioField, SelectField, StringField, TextAreaField
from wtforms.validators import Length

from riskreg.services.verification import RESULTS

from .forms import MultiCheckbox

DATE = {"type": "date"}
WHOLE = {"inputmode": "numeric"}


class VerificationForm(FlaskForm):  # type: ignore[misc]
    safeguard_id = SelectField("Safeguard", validate_choice=False, coerce=str)
    kind = RadioField("What was verified", validate_choice=False)
    result = RadioField("Result", choices=list(RESULTS.items()), validate_choice=False)
    performed_on = StringField("Date done", render_kw=DATE)
    performed_by = StringField("Done by", validators=[Length(max=200)])
    measured_values = TextAreaField(
        "Measured values",
        validators=[Length(max=5000)],
        render_kw={"rows": 2, "placeholder": "e.g. stop at 182 ms; gap 6 mm"},
    )
    notes = TextAreaField(
        "Notes: what was found", validators=[Length(max=5000)], render_kw={"rows": 3}
    )
    press_serial = StringField("Press serial number", validators=[Length(max=120)])
    signature = StringField("Certified by (name)", validators=[Length(max=200)])
    instrument_id = SelectField("Instrument used", validate_choice=False, coerce=str)
    files = MultipleFileField("Photos, PDFs or meter exports (CSV)")


class ChecklistForm(FlaskForm):  # type: ignore[misc]
    items = TextAreaField(
        "Checks, one per line",
        validators=[Length(max=8000)],
        render_kw={"rows": 8, "placeholder": "Light curtain stops the slide when interrupted"},
    )
    shifts_per_day = SelectField(
        "Shifts per day", validate_choice=False, choices=[("1", "1"), ("2", "2"), ("3", "3")]
    )
    working_days = StringField(
        "Working days (ISO weekday numbers, Monday = 1)",
        validators=[Length(max=20)],
        default="12345",
        render_kw=WHOLE,
    )
    active_since = StringField("Checks expected from (date)", render_kw=DATE)


class ShiftCheckForm(FlaskForm):  # type: ignore[misc]
    shift_date = StringField("Date of the shift", render_kw=DATE)
    shift = SelectField("Shift", validate_choice=False, coerce=str)
    performed_by = StringField("Checked by", validators=[Length(max=200)])
    ok_items = MultiCheckbox("Tick each check that passed", validate_choice=False, coerce=str)
    notes = TextAreaField(
        "What was found (needed when a check is not ticked)",
        validators=[Length(max=2000)],
        render_kw={"rows": 3},
    )


class LockoutForm(FlaskForm):  # type: ignore[misc]
    title = StringField("Procedure", validators=[Length(max=200)])
    last_inspected_on = StringField("Last inspected (empty if never)", render_kw=DATE)
    inspected_by = StringField("Inspected by", validators=[Length(max=200)])
    interval_days = StringField(
        "Inspect every (days)", validators=[Length(max=10)], default="365", render_kw=WHOLE
    )


class InstrumentForm(FlaskForm):  # type: ignore[misc]
    name = StringField("Name", validators=[Length(max=120)])
    serial = StringField("Serial number", validators=[Length(max=120)])
    calibrated_on = StringField("Last calibrated (empty if not known)", render_kw=DATE)
    calibration_interval_days = StringField(
        "Calibrate every (days)", validators=[Length(max=10)], default="365", render_kw=WHOLE
    )


class CalibrationForm(FlaskForm):  # type: ignore[misc]
    calibrated_on = StringField("Calibrated on", render_kw=DATE)


class IntervalForm(FlaskForm):  # type: ignore[misc]
    kind = SelectField("Kind", validate_choice=False, coerce=str)
    days = StringField("Every (days)", validators=[Length(max=10)], render_kw=WHOLE)


class CalendarLinkForm(FlaskForm):  # type: ignore[misc]
    label = StringField(
        "Who or what the link is for",
        validators=[Length(max=120)],
        render_kw={"placeholder": "e.g. maintenance planner's calendar"},
    )
