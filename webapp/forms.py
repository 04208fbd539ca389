"""Form pieces shared by several areas."""
from __future__ import annotations

import math
import re
from collections.abc import Callable, Iterable, Iterator
from dataclasses import dataclass
from datetime import date, datetime
from typing import Generic, TypeVar

from flask import request
from flask_wtf import FlaskForm
from wtforms import (
    DateTimeLocalField,
    Field,
    FieldList,
    FormField,
    SelectChoice,
    SelectMultipleField,
    TextAreaField,
    widgets,
)

from models.core.bounds import DATE_MESSAGE, MAX_ID, date_in_range, local_time_problem
from models.core.errors import Invalid
from webapp.extensions import db
from webapp.formatting import capfirst, lab_zone

T = TypeVar("T")

# One-line text: no control character at all (line breaks would forge e-mail headers; the database
# refuses NUL). Multi-line text keeps tabs and line breaks only.
SINGLE_LINE_FORBIDDEN = re.compile("[\x00-\x1f\x7f-\x9f\u2028\u2029]")
MULTI_LINE_FORBIDDEN = re.compile("[\x00-\x08\x0b\x0c\x0e-\x1f\x7f]")
CONTROL_MESSAGE = "Remove the control characters (such as line breaks or tabs) from this field."
MULTI_LINE_MESSAGE = "Remove the control characters (other than line breaks and tabs) from this text."


def _leaf_fields(fields: Iterable[Field]) -> Iterator[Field]:
    """Every field that holds a value, nested forms and lists included."""
    for field in fields:
        if isinstance(field, FieldList):
            yield from _leaf_fields(field.entries)
        elif isinstance(field, FormField):
            yield from _leaf_fields(field.form)
        else:
            yield field



def bounds_error(field: Field) -> str | None:
    """Why a field's parsed value is out of every plausible range, or None."""
    data = field.data
    if isinstance(data, str):
        return control_character_error(field)
    if isinstance(data, (date, datetime)) and not date_in_range(data):
        return DATE_MESSAGE
    if isinstance(data, float) and not math.isfinite(data):
        return "Enter a finite number."
    if isinstance(data, int) and not isinstance(data, bool) and abs(data) > MAX_ID:
        return "Enter a smaller number."
    return None


def _wall_clock_error(field: Field) -> str | None:
    """Why a lab-time field's value does not name one moment (a clock change), or None."""
    if isinstance(field, DateTimeLocalField) and isinstance(field.data, datetime):
        return local_time_problem(field.data, lab_zone())
    return None


def control_character_error(field: Field) -> str | None:
    """Why a text field's value is refused for its control characters, or None."""
    multi_line = isinstance(field, TextAreaField)
    pattern = MULTI_LINE_FORBIDDEN if multi_line else SINGLE_LINE_FORBIDDEN
    if pattern.search(field.data or ""):
        return MULTI_LINE_MESSAGE if multi_line else CONTROL_MESSAGE
    return None


class LogbookForm(FlaskForm):
    """Base of every form: control characters, dates outside 1950-2100, infinite or huge numbers
    are refused in every field, beside the field."""

    def validate(self, extra_validators=None) -> bool:
        """The fields' own checks, then the shared bounds on every field."""
        valid = super().validate(extra_validators)
        for field in _leaf_fields(self):
            message = bounds_error(field) or _wall_clock_error(field)
            if message:
                field.errors = [*field.errors, message]
                valid = False
        return valid


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


def query_int(name: str, default: int | None = None, low: int = 1, high: int = MAX_ID) -> int | None:
    """A whole number from the query string within [low, high], else `default` (ids by default)."""
    value = request.args.get(name, type=int)
    return value if value is not None and low <= value <= high else default


def choices(enum_cls, labels: dict | None = None) -> list[SelectChoice]:
    """Select choices from an enum, with readable labels."""
    labels = labels or {}
    return [SelectChoice(m.value, capfirst(labels.get(m, m.value.replace("_", " ")))) for m in enum_cls]
