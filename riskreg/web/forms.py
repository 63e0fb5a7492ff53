"""WTForms forms. They parse and check shapes; the services check the rules."""

from __future__ import annotations

from flask_wtf import FlaskForm
from flask_wtf.file import FileField
from wtforms import (
    BooleanField,
    HiddenField,
    IntegerField,
    RadioField,
    SelectField,
    SelectMultipleField,
    StringField,
    TextAreaField,
)
from wtforms.validators import DataRequired, Length, NumberRange, Optional
from wtforms.widgets import CheckboxInput, ListWidget

from riskreg import vocab
from riskreg.engineering import risk


class MultiCheckbox(SelectMultipleField):
    widget = ListWidget(prefix_label=False)
    option_widget = CheckboxInput()


def _choices(d: dict[str, object]) -> list[tuple[str, str]]:
    return [(k, vocab.label(d, k)) for k in d]  # type: ignore[arg-type]


class MachineForm(FlaskForm):  # type: ignore[misc]
    version = HiddenField()
    asset_tag = StringField(
        "Asset tag", validators=[DataRequired("Enter the asset tag."), Length(max=40)]
    )
    name = StringField("Name", validators=[DataRequired("Enter a name."), Length(max=120)])
    kind = SelectField("Kind", choices=_choices(vocab.MACHINE_KINDS))
    area_id = SelectField("Area", coerce=str, validate_choice=False)
    maker = StringField("Maker", validators=[Length(max=120)])
    model = StringField("Model", validators=[Length(max=120)])
    serial = StringField("Serial number", validators=[Length(max=120)])
    year = IntegerField(
        "Year built",
        validators=[
            Optional(),
            NumberRange(1900, 2100, "Enter a year from 1900 on, or leave it empty."),
        ],
    )
    location = StringField("Location", validators=[Length(max=200)])
    notes = TextAreaField("Notes", validators=[Length(max=10000)])
    photo = FileField("Photo")


class CloneForm(FlaskForm):  # type: ignore[misc]
    asset_tag = StringField(
        "Asset tag of the new machine",
        validators=[DataRequired("Enter the new asset tag."), Length(max=40)],
    )
    name = StringField("Name", validators=[Length(max=120)])
    serial = StringField("Serial number", validators=[Length(max=120)])


class DoNotOperateForm(FlaskForm):  # type: ignore[misc]
    flag = BooleanField("Tag this machine “do not operate”")
    reason = TextAreaField("Reason", validators=[Length(max=2000)])


class TaskForm(FlaskForm):  # type: ignore[misc]
    phase = SelectField("Life-cycle phase", choices=_choices(vocab.PHASES), default="operation")
    description = StringField(
        "What is done", validators=[DataRequired("Say what is done."), Length(max=2000)]
    )
    performed_by = StringField("Who does it", validators=[Length(max=200)])
    frequency = StringField("How often", validators=[Length(max=200)])


class AssessmentForm(FlaskForm):  # type: ignore[misc]
    scope = TextAreaField("Scope", validators=[Length(max=10000)])
    intended_use = TextAreaField("Intended use", validators=[Length(max=10000)])
    foreseeable_misuse = TextAreaField(
        "Reasonably foreseeable misuse", validators=[Length(max=10000)]
    )
    space_limits = TextAreaField("Space limits", validators=[Length(max=10000)])
    time_limits = TextAreaField("Time (life) limits", validators=[Length(max=10000)])
    persons_exposed = TextAreaField("Who is exposed", validators=[Length(max=10000)])
    assessors = StringField("Assessors", validators=[Length(max=300)])


PLR_HELP = {
    "s": {k: v for k, v in risk.SEVERITY.items()},
    "f": {k: v for k, v in risk.FREQUENCY.items()},
    "p": {k: v for k, v in risk.AVOIDANCE.items()},
}


class RatingFields(FlaskForm):  # type: ignore[misc]
    """The rating part of the hazard form (also used alone for a residual rating)."""

    method = RadioField("Method", choices=_choices(vocab.RATING_METHODS), default="iso13849")
    stage = SelectField("Stage", choices=_choices(vocab.RATING_STAGES), default="initial")
    s = RadioField(
        "S — severity",
        choices=[(k, f"{k}: {v}") for k, v in risk.SEVERITY.items()],
        validate_choice=False,
    )
    f = RadioField(
        "F — frequency / exposure",
        choices=[(k, f"{k}: {v}") for k, v in risk.FREQUENCY.items()],
        validate_choice=False,
    )
    p = RadioField(
        "P — possibility of avoidance",
        choices=[(k, f"{k}: {v}") for k, v in risk.AVOIDANCE.items()],
        validate_choice=False,
    )
    se = RadioField(
        "Se — severity",
        choices=[(str(k), f"{k}: {v}") for k, v in risk.SE.items()],
        validate_choice=False,
    )
    fr = RadioField(
        "Fr — frequency and duration",
        choices=[(str(k), f"{k}: {v}") for k, v in risk.FR.items()],
        validate_choice=False,
    )
    pr = RadioField(
        "Pr — probability of the hazardous event",
        choices=[(str(k), f"{k}: {v}") for k, v in risk.PR.items()],
        validate_choice=False,
    )
    av = RadioField(
        "Av — avoidance",
        choices=[(str(k), f"{k}: {v}") for k, v in risk.AV.items()],
        validate_choice=False,
    )
    b11_severity = RadioField(
        "Severity",
        choices=[(k, f"{k}: {v}") for k, v in risk.B11_SEVERITY.items()],
        validate_choice=False,
    )
    b11_probability = RadioField(
        "Probability of harm",
        choices=[(k, f"{k}: {v}") for k, v in risk.B11_PROBABILITY.items()],
        validate_choice=False,
    )
    override_level = StringField(
        "Level set by a type-C standard or regulation", validators=[Length(max=30)]
    )
    override_source = StringField("Its source (standard and clause)", validators=[Length(max=200)])
    override_justification = TextAreaField("Justification", validators=[Length(max=5000)])
    override_approved_by = StringField("Approved by", validators=[Length(max=200)])

    def rating_data(self) -> dict[str, object]:
        """The rating in the service's terms, or {} when nothing was chosen."""
        method = self.method.data or "iso13849"
        picked = {
            "iso13849": {
                "severity": self.s.data,
                "frequency": self.f.data,
                "avoidance": self.p.data,
            },
            "iec62061": {
                "severity": self.se.data,
                "frequency": self.fr.data,
                "probability": self.pr.data,
                "avoidance": self.av.data,
            },
            "ansi_b11": {
                "severity": self.b11_severity.data,
                "probability": self.b11_probability.data,
            },
        }.get(method, {})
        if not any(v not in (None, "", "None") for v in picked.values()):
            return {}
        data: dict[str, object] = {k: (None if v == "None" else v) for k, v in picked.items()}
        data.update(
            method=method,
            stage=self.stage.data,
            override_level=self.override_level.data,
            override_source=self.override_source.data,
            override_justification=self.override_justification.data,
            override_approved_by=self.override_approved_by.data,
        )
        return data


# The service's rating field names → this form's field names, per method.
RATING_FIELD_MAP = {
    "iso13849": {"severity": "s", "frequency": "f", "avoidance": "p"},
    "iec62061": {"severity": "se", "frequency": "fr", "probability": "pr", "avoidance": "av"},
    "ansi_b11": {"severity": "b11_severity", "probability": "b11_probability"},
}


class HazardForm(RatingFields):
    version = HiddenField()
    task_id = SelectField("Task", coerce=str, validate_choice=False)
    hazard_group = SelectField(
        "Hazard group", choices=_choices(vocab.HAZARD_GROUPS), default="mechanical"
    )
    hazard_type = StringField("Type", validators=[Length(max=80)])
    danger_zone = StringField("Danger zone", validators=[Length(max=200)])
    event = TextAreaField("What could happen", validators=[Length(max=5000)])
    harm = TextAreaField("Possible harm", validators=[Length(max=5000)])
    persons_exposed = StringField("Who is exposed", validators=[Length(max=200)])
    photo = FileField("Photo")


class MeasureForm(FlaskForm):  # type: ignore[misc]
    kind = SelectField(
        "Kind of measure",
        choices=[
            (k, f"{vocab.MEASURE_STEPS[s][:2]} {lbl}")
            for k, (s, lbl) in vocab.MEASURE_KINDS.items()
        ],
    )
    description = TextAreaField("Description", validators=[Length(max=5000)])
    status = SelectField("Status", choices=_choices(vocab.MEASURE_STATUSES), default="proposed")
    hazard_ids = MultiCheckbox("Hazards it reduces", coerce=str, validate_choice=False)
    safety_function_id = SelectField(
        "Safety function it relies on", coerce=str, validate_choice=False
    )


class SafetyFunctionForm(FlaskForm):  # type: ignore[misc]
    name = StringField(
        "Safety function", validators=[DataRequired("Name the function."), Length(max=200)]
    )
    trigger = TextAreaField("What triggers it", validators=[Length(max=2000)])
    reaction = TextAreaField("What the machine must do", validators=[Length(max=2000)])
    modes = MultiCheckbox(
        "Operating modes", choices=[(m, m) for m in vocab.OPERATING_MODES], validate_choice=False
    )
    response_time_ms = IntegerField(
        "Response time (ms)",
        validators=[Optional(), NumberRange(0, 10000, "Enter 0 to 10000 ms, or leave it empty.")],
    )
    hazard_ids = MultiCheckbox("Hazards it protects against", coerce=str, validate_choice=False)


class ConfirmForm(FlaskForm):  # type: ignore[misc]
    """An empty form: a POST with its CSRF token confirms the action."""


class ResidualForm(FlaskForm):  # type: ignore[misc]
    interim = TextAreaField(
        "Interim measures while a measure is pending", validators=[Length(max=5000)]
    )
