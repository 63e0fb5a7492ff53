"""Forms of the safeguard pages. Numbers arrive as text: the services parse them
and answer each bad value with a message that says what to enter."""

from __future__ import annotations

from flask_wtf import FlaskForm
from flask_wtf.file import FileField
from wtforms import BooleanField, SelectField, StringField, TextAreaField
from wtforms.validators import Length

from riskreg.vocab import MEASURE_KINDS

from .forms import MultiCheckbox

YES_NO = [("", "—"), ("y", "yes"), ("n", "no")]
DEFEAT_MEASURES = [
    "hidden mounting",
    "non-detachable fixing",
    "individual coding",
    "monitoring for plausibility",
    "periodic check",
    "guard locking",
]


def num(label: str) -> StringField:
    return StringField(label, validators=[Length(max=40)], render_kw={"inputmode": "decimal"})


class SafeguardForm(FlaskForm):  # type: ignore[misc]
    label = StringField("Name on the floor", validators=[Length(max=200)])
    status = SelectField(
        "Status",
        validate_choice=False,
        choices=[("installed", "installed"), ("proposed", "proposed"), ("removed", "removed")],
    )
    response_time_ms = num("Response time of the device (ms)")
    installed_distance_mm = num("Installed distance to the nearest danger point (mm)")
    component_id = SelectField("Part from the component library", validate_choice=False, coerce=str)
    # two-hand control
    simultaneous = BooleanField("Both hands needed (simultaneous actuation)")
    cessation = BooleanField("Output stops when either hand lets go")
    reinitiation = BooleanField("Re-start only after both actuators are released")
    synchronous_window_ms = num("Synchronous actuation window (ms; empty if not monitored)")
    series_wired = BooleanField("The two buttons are simply wired in series")
    category = SelectField(
        "Category (ISO 13849-1) of its control",
        validate_choice=False,
        choices=[("", "—"), ("B", "B"), ("1", "1"), ("2", "2"), ("3", "3"), ("4", "4")],
    )
    spacing_mm = num("Spacing between the actuators (mm)")
    shrouded = BooleanField("Each actuator is shrouded")
    shielded = BooleanField("Shielded so that no one can reach in from the station (ISO C = 0)")
    operators = num("Operators working the machine at once")
    stations = num("Control stations")
    actuators_per_station = SelectField(
        "Actuators per station",
        validate_choice=False,
        choices=[("2", "2 (one per hand)"), ("1", "1 (one per operator)")],
    )
    anti_repeat = BooleanField("Anti-repeat (one stroke per actuation) on the press")
    # light curtain / multi-beam
    espe_type = SelectField(
        "IEC 61496 type", validate_choice=False, choices=[("4", "Type 4"), ("2", "Type 2")]
    )
    resolution_mm = num("Detection capability / resolution d (mm)")
    blanking = SelectField(
        "Blanking",
        validate_choice=False,
        choices=[("none", "none"), ("fixed", "fixed"), ("floating", "floating")],
    )
    blanked_size_mm = num("Blanked size (mm)")
    beams = num("Number of beams")
    restart_interlock = BooleanField("Restart interlock")
    person_can_stand_inside = BooleanField(
        "A person can stand inside the protected zone undetected"
    )
    muting = BooleanField("Muting is used")
    # interlocking guard
    device_type = SelectField(
        "ISO 14119 device type",
        validate_choice=False,
        choices=[
            ("1", "Type 1: uncoded, mechanical actuation"),
            ("2", "Type 2: coded, mechanical actuation"),
            ("3", "Type 3: uncoded, non-contact"),
            ("4", "Type 4: coded, non-contact"),
        ],
    )
    coding = SelectField(
        "Coding level (coded types)",
        validate_choice=False,
        choices=[("", "—"), ("low", "low"), ("medium", "medium"), ("high", "high")],
    )
    motivation_to_defeat = SelectField(
        "Motivation to defeat",
        validate_choice=False,
        choices=[("low", "low"), ("medium", "medium"), ("high", "high")],
        default="medium",
    )
    measures_against_defeat = MultiCheckbox(
        "Measures against defeat", choices=[(m, m) for m in DEFEAT_MEASURES], validate_choice=False
    )
    switches_in_series = num("Switches wired in series on this channel")
    guards_in_series = num("Guards whose switches share the series chain")
    claimed_dc_percent = num("DC claimed for the switches (%)")
    opening_c_mm = num("C for the guard opening, from ISO 13857 (mm)")
    # fixed guard
    opening_mm = num("Largest opening (mm)")
    opening_distance_mm = num("Distance of the opening from the danger point (mm)")


FIELDS_BY_KIND = {
    "two_hand_control": [
        "simultaneous",
        "cessation",
        "reinitiation",
        "synchronous_window_ms",
        "series_wired",
        "category",
        "spacing_mm",
        "shrouded",
        "shielded",
        "operators",
        "stations",
        "actuators_per_station",
        "anti_repeat",
    ],
    "light_curtain": [
        "espe_type",
        "resolution_mm",
        "blanking",
        "blanked_size_mm",
        "restart_interlock",
        "person_can_stand_inside",
        "muting",
    ],
    "multi_beam": ["espe_type", "beams", "restart_interlock", "person_can_stand_inside", "muting"],
    "pressure_mat": [],
    "interlocking_guard": [
        "device_type",
        "coding",
        "motivation_to_defeat",
        "measures_against_defeat",
        "switches_in_series",
        "guards_in_series",
        "claimed_dc_percent",
        "opening_c_mm",
    ],
    "interlocking_guard_locking": [
        "device_type",
        "coding",
        "motivation_to_defeat",
        "measures_against_defeat",
        "switches_in_series",
        "guards_in_series",
        "claimed_dc_percent",
    ],
    "fixed_guard": ["opening_mm", "opening_distance_mm"],
}
COMMON = ["label", "status", "response_time_ms", "installed_distance_mm", "component_id"]


class MeasurementForm(FlaskForm):  # type: ignore[misc]
    measured_on = StringField("Date measured (YYYY-MM-DD)", render_kw={"type": "date"})
    trials_ms = StringField(
        "Trials (ms), separated by commas",
        render_kw={"inputmode": "decimal", "placeholder": "e.g. 182, 186, 190"},
    )
    position = StringField(
        "Position / stroke angle",
        validators=[Length(max=200)],
        render_kw={"placeholder": "e.g. 90° of crank rotation"},
    )
    instrument_id = SelectField(
        "Instrument (from the site's list)", validate_choice=False, coerce=str
    )
    instrument = StringField("Instrument not in the list", validators=[Length(max=200)])
    measured_by = StringField("Measured by", validators=[Length(max=200)])
    allowance_percent = num("Allowance for brake wear (%; empty: the site's)")
    brake_monitor_limit_ms = num("Brake-monitor limit (ms), if it lets the press run longer")
    notes = TextAreaField("Notes", validators=[Length(max=5000)])


class PressForm(FlaskForm):  # type: ignore[misc]
    clutch = SelectField(
        "Clutch",
        validate_choice=False,
        choices=[("part", "part-revolution"), ("full", "full-revolution")],
    )
    engaging_points = num("Engaging points per revolution (full-revolution clutch)")
    revolution_time_ms = num("Time of one crankshaft revolution (ms)")
    brake_monitor = BooleanField("Brake monitor fitted")
    control_reliable = BooleanField("Control reliable (no single failure prevents the stop)")
    anti_repeat = BooleanField("Anti-repeat")
    single_stroke = BooleanField("Single-stroke mechanism")


class MonitorSettingForm(FlaskForm):  # type: ignore[misc]
    set_on = StringField("Date set (YYYY-MM-DD)", render_kw={"type": "date"})
    setpoint_ms = num("Brake-monitor setpoint (ms)")
    set_by = StringField("Set by", validators=[Length(max=200)])
    note = StringField("Note", validators=[Length(max=2000)])


class PartForm(FlaskForm):  # type: ignore[misc]
    role = SelectField(
        "Role",
        validate_choice=False,
        choices=[("input", "input"), ("logic", "logic"), ("output", "output")],
    )
    name = StringField("Part", validators=[Length(max=200)])
    given_pl = SelectField(
        "PL from a certified part's data sheet",
        validate_choice=False,
        choices=[("", "—")] + [(x, x) for x in "abcde"],
    )
    given_pfhd = num("PFHd from the data sheet (per hour, e.g. 1.2e-8)")
    category = SelectField(
        "Category",
        validate_choice=False,
        choices=[("", "—"), ("B", "B"), ("1", "1"), ("2", "2"), ("3", "3"), ("4", "4")],
    )
    mttfd_years = StringField("MTTFd per channel (years; two values for two channels)")
    b10d = num("or B10d (cycles)")
    days_per_year = num("Days per year")
    hours_per_day = num("Hours per day")
    cycle_time_s = num("Cycle time (s)")
    dcavg_percent = num("DCavg (%)")
    ccf_points = num("CCF score (points)")
    well_tried = BooleanField("Well-tried components and principles (attested)")
    test_rate_ratio = num("Test rate ÷ demand rate (Category 2)")


class ComponentForm(FlaskForm):  # type: ignore[misc]
    maker = StringField("Maker", validators=[Length(max=120)])
    model = StringField("Model", validators=[Length(max=120)])
    kind = StringField("Kind of part", validators=[Length(max=60)])
    pl = SelectField("PL", validate_choice=False, choices=[("", "—")] + [(x, x) for x in "abcde"])
    category = SelectField(
        "Category",
        validate_choice=False,
        choices=[("", "—"), ("B", "B"), ("1", "1"), ("2", "2"), ("3", "3"), ("4", "4")],
    )
    pfhd = num("PFHd (per hour)")
    b10d = num("B10d (cycles)")
    mttfd_years = num("MTTFd (years)")
    response_time_ms = num("Response time (ms)")
    espe_type = SelectField(
        "IEC 61496 type", validate_choice=False, choices=[("", "—"), ("2", "2"), ("4", "4")]
    )
    document = StringField(
        "Data sheet or certificate the values come from", validators=[Length(max=300)]
    )
    notes = TextAreaField("Notes", validators=[Length(max=5000)])


class AccessForm(FlaskForm):  # type: ignore[misc]
    access = SelectField(
        "Access to the danger zone in normal operation",
        validate_choice=False,
        choices=[
            ("none", "not needed"),
            ("occasional", "occasional"),
            ("frequent", "frequent (e.g. every cycle)"),
        ],
        default="frequent",
    )
    hand_feeding = BooleanField("Parts are fed or removed by hand")
    ejection = BooleanField("Parts or fragments can be ejected")
    other_people_exposed = BooleanField("Other people can reach the hazard")


class OptionForm(FlaskForm):  # type: ignore[misc]
    kind = SelectField(
        "Candidate measure",
        validate_choice=False,
        choices=[(k, v[1]) for k, v in MEASURE_KINDS.items()],
    )
    reachable_pl = SelectField(
        "PL it can reach",
        validate_choice=False,
        choices=[("", "not known")] + [(x, x) for x in "abcde"],
    )
    space_available_mm = num("Space available for it (mm)")
    cost = num("Cost (as entered)")
    effect_on_work = TextAreaField("Effect on the operator's work", validators=[Length(max=2000)])


class ChooseForm(FlaskForm):  # type: ignore[misc]
    reason = TextAreaField("Why this option", validators=[Length(max=5000)])


class ActionForm(FlaskForm):  # type: ignore[misc]
    title = StringField("What must be done", validators=[Length(max=300)])
    description = TextAreaField("Details", validators=[Length(max=5000)])
    owner = StringField("Owner", validators=[Length(max=200)])
    due_on = StringField("Due (YYYY-MM-DD)", render_kw={"type": "date"})


class CloseActionForm(FlaskForm):  # type: ignore[misc]
    closing_note = TextAreaField(
        "What was done, and where the evidence is", validators=[Length(max=5000)]
    )
    closing_file = FileField(
        "Evidence of the fix (photo, PDF or CSV; optional)",
        render_kw={"accept": "image/*,application/pdf,text/csv"},
    )
