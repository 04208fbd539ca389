"""Form pieces shared by several areas."""
from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from typing import Generic, TypeVar

from flask_wtf import FlaskForm
from wtforms import SelectChoice, SelectMultipleField, widgets

from models.core.errors import Invalid
from webapp.extensions import db
from webapp.formatting import capfirst

T = TypeVar("T")


class CheckboxesField(SelectMultipleField):
    """A multiple choice shown as a list of checkboxes."""

    widget = widgets.ListWidget(prefix_label=False)
    option_widget = widgets.CheckboxInput()


def attach_errors(form: FlaskForm, error: Invalid) -> None:
    """Put each domain error beside the field it names (atop the form when it names none), once per field."""
    for name, message in error.errors.items():
        field = form._fields.get(name)
        if field is None:
            form.form_errors.append(message)
        elif not field.errors:
            field.errors = [message]


@dataclass(frozen=True)
class Outcome(Generic[T]):
    """What `validate_with` did: true when the fields and the domain both accepted; `value` is the result."""

    ok: bool
    value: T | None = None

    def __bool__(self) -> bool:
        return self.ok


def validate_with(form: FlaskForm, operation: Callable[[FlaskForm], T]) -> Outcome[T]:
    """Validate the submitted form's fields, then run the domain `operation(form)` on values that passed.

    `operation` is a domain check or the change itself; an `Invalid` it raises is shown beside the
    fields it names and the session is rolled back, so nothing of a refused change is written.
    A form not submitted, or with a field error, never reaches the domain.
    """
    if not form.is_submitted() or not form.validate():
        return Outcome(False)
    try:
        return Outcome(True, operation(form))
    except Invalid as error:
        db.session.rollback()
        attach_errors(form, error)
        return Outcome(False)


def error_text(form: FlaskForm) -> str:
    """Every error of the form in one line, for a form posted from a list page that shows no fields."""
    return " ".join(message for messages in form.errors.values() for message in messages)


def choices(enum_cls, labels: dict | None = None) -> list[SelectChoice]:
    """Select choices from an enum, with readable labels."""
    labels = labels or {}
    return [SelectChoice(m.value, capfirst(labels.get(m, m.value.replace("_", " ")))) for m in enum_cls]
