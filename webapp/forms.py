"""Form pieces shared by several areas."""
from __future__ import annotations

from flask_wtf import FlaskForm
from wtforms import SelectChoice, SelectMultipleField, widgets

from models.core.errors import Invalid


class CheckboxesField(SelectMultipleField):
    """A multiple choice shown as a list of checkboxes."""

    widget = widgets.ListWidget(prefix_label=False)
    option_widget = widgets.CheckboxInput()


def attach_errors(form: FlaskForm, error: Invalid) -> None:
    """Put each domain error beside the field it names (or atop the form), once per field."""
    for name, message in error.errors.items():
        field = getattr(form, name, None)
        if field is None:
            form.form_errors.append(message)
        elif not field.errors:
            field.errors = [message]


def validate_with(form: FlaskForm, check) -> bool:
    """Run the form's own checks and the domain's `check(form)` together; True when both pass.

    Both run on every submit, so a person sees every problem at once, not one round at a time.
    """
    if not form.is_submitted():
        return False
    valid = form.validate()
    try:
        check(form)
    except Invalid as error:
        attach_errors(form, error)
        return False
    return valid


def choices(enum_cls, labels: dict | None = None) -> list[SelectChoice]:
    """Select choices from an enum, with readable labels."""
    labels = labels or {}
    return [SelectChoice(m.value, labels.get(m, m.value.replace("_", " ").capitalize())) for m in enum_cls]
