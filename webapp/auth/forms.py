"""Forms for logging in, changing a password and resetting a forgotten one."""
from wtforms import PasswordField, StringField
from wtforms.validators import DataRequired, EqualTo, Length

from webapp.forms import LogbookForm
from webapp.passwords import MAX_LENGTH, strong_password


class LoginForm(LogbookForm):
    """Login name and password."""

    login = StringField("Login", validators=[DataRequired(), Length(max=64)])
    password = PasswordField("Password", validators=[DataRequired(), Length(max=MAX_LENGTH)])


def _about_person(form) -> list[str]:
    """What this person's password must not be built from."""
    return [form.person.login, form.person.name, form.person.email or ""]


class NewPasswordForm(LogbookForm):
    """A new password for a given person, typed twice."""

    password = PasswordField("New password", validators=[
        DataRequired("Enter a new password."), strong_password(_about_person)],
        description="At least 10 characters and hard to guess: a few unrelated words work well.")
    confirm = PasswordField("Repeat the new password", validators=[
        EqualTo("password", "The two passwords differ.")])

    def __init__(self, person, *args, **kwargs):
        super().__init__(*args, **kwargs)
        self.person = person


class ChangePasswordForm(NewPasswordForm):
    """The current password, then the new one."""

    current = PasswordField("Current password", validators=[
        DataRequired("Enter your current password."), Length(max=MAX_LENGTH)])


class ResetRequestForm(LogbookForm):
    """Who forgot their password."""

    login = StringField("Login", validators=[DataRequired("Enter your login."), Length(max=64)])
