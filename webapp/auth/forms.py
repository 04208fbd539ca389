"""The login form."""
from wtforms import PasswordField, StringField
from wtforms.validators import DataRequired, Length

from webapp.forms import LogbookForm


class LoginForm(LogbookForm):
    """Login name and password."""

    login = StringField("Login", validators=[DataRequired(), Length(max=64)])
    password = PasswordField("Password", validators=[DataRequired(), Length(max=200)])
