"""Forms for people and accounts."""
from __future__ import annotations

from wtforms import EmailField, PasswordField, SelectChoice, SelectField, StringField, TextAreaField
from wtforms.validators import DataRequired, Email, EqualTo, Length, Optional

from models.people.tables import CATEGORY_LABELS, PERSON_CATEGORIES, ROLE_LABELS, Role
from webapp.forms import CheckboxesField, LogbookForm, choices
from webapp.passwords import MIN_LENGTH, strong_password


class PersonForm(LogbookForm):
    """Name, contact, roles and worker category."""

    name = StringField("Name", validators=[DataRequired("Enter the person's name."), Length(max=200)])
    email = EmailField("E-mail", validators=[Optional(), Email("Enter a valid e-mail address."),
                                             Length(max=254)])
    roles = CheckboxesField("Roles", choices=choices(Role, ROLE_LABELS),
                            validators=[DataRequired("Give the person at least one role.")])
    category = SelectField("Worker category", choices=[SelectChoice(c.value, CATEGORY_LABELS[c]) for c in PERSON_CATEGORIES],
                           description="Decides which dose limits apply.")


class NewPersonForm(PersonForm):
    """A new person: also a login and a first password."""

    login = StringField("Login", validators=[DataRequired("Enter a login."), Length(max=64)])
    password = PasswordField("Password", validators=[
        DataRequired("Enter a password."),
        strong_password(lambda f: [f.login.data or "", f.name.data or "", f.email.data or ""])],
        description=f"At least {MIN_LENGTH} characters and hard to guess.")
    confirm = PasswordField("Repeat password", validators=[
        EqualTo("password", "The two passwords differ.")])


class DeactivateForm(LogbookForm):
    """Why an account is switched off."""

    reason = TextAreaField("Reason", validators=[DataRequired("Say why."), Length(max=500)])
