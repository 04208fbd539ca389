"""Forms for investigations."""
from __future__ import annotations

from flask_wtf import FlaskForm
from wtforms import SubmitField, TextAreaField
from wtforms.validators import Length

NOTE_LENGTH = 5000


class ReviewForm(FlaskForm):
    """The safety officer's review of an investigation: what was asked, found and done."""

    questions = TextAreaField("Questions asked", validators=[Length(max=NOTE_LENGTH)],
                              description="Whom you asked what: work done, dosimeter handling, "
                                          "incidents, instruments used.")
    findings = TextAreaField("Findings", validators=[Length(max=NOTE_LENGTH)],
                             description="What explains the dose, or that nothing does.")
    actions = TextAreaField("Actions", validators=[Length(max=NOTE_LENGTH)],
                            description="What was changed or decided; 'none needed' if so.")
    save = SubmitField("Save the review")
    sign = SubmitField("Save and sign off")
