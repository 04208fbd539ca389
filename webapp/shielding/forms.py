"""The estimate's form: read with GET so an estimate is a link that can be shared and reloaded."""
from __future__ import annotations

import math

from werkzeug.datastructures import MultiDict
from wtforms import FloatField, SelectChoice, SelectField, SelectMultipleField
from wtforms.validators import InputRequired, NumberRange, Optional, ValidationError
from wtforms.widgets import CheckboxInput, ListWidget

from models.core.units import RATE_UNITS
from models.instruments.tube import SUPPORTED_ANODES
from models.surveys.shielding import MATERIALS, MAX_KV, MIN_KV
from webapp.forms import LogbookForm
from webapp.shielding.setup import SetUp

NUMBER = "Enter a number."


class Number(FloatField):
    """A finite number; anything else (text, NaN, infinity) gets one plain message."""

    def process_formdata(self, valuelist):
        """Read the input, refusing what is not a finite number."""
        self.data = None
        if valuelist and valuelist[0].strip():
            try:
                value = float(valuelist[0])
            except ValueError:
                raise ValueError(NUMBER) from None
            if not math.isfinite(value):
                raise ValueError(NUMBER)
            self.data = value


class EstimateForm(LogbookForm):
    """Anode, kV and the reading to shield; optional planned current and distance."""

    class Meta:
        csrf = False  # read-only page, sent with GET

    anode = SelectField("Anode", choices=[SelectChoice(a, a) for a in SUPPORTED_ANODES])
    kv = Number("Tube voltage (kV)", [InputRequired(NUMBER), NumberRange(min=MIN_KV, max=MAX_KV,
                message=f"Between {MIN_KV:g} and {MAX_KV:g} kV (the model's range).")])
    reading = Number("Net reading", [InputRequired(NUMBER), NumberRange(min=0, max=1e7,
                         message="Zero or more, at most 10,000,000.")])
    unit = SelectField("Unit", choices=[SelectChoice(u.code, u.label) for u in RATE_UNITS.values()])
    distance_cm = Number("Read at (cm)", [InputRequired(NUMBER), NumberRange(min=0.1, max=1e5,
                             message="Between 0.1 cm and 1 km.")], default=5.0)
    target_usv_h = Number("Target (µSv/h)", [InputRequired(NUMBER), NumberRange(min=1e-6, max=1e7,
                              message="Above zero.")], default=2.5,
                              description="By default the point's action level.")
    margin = Number("Margin", [InputRequired(NUMBER), NumberRange(min=1, max=1000,
                        message="Between 1 and 1000.")], default=1.0,
                        description="Aim at the target divided by this, e.g. 2 for half the target.")
    ma = Number("Tube current during the reading (mA)", [Optional(), NumberRange(min=0.001, max=1e4,
                    message="Above zero.")])
    planned_ma = Number("Planned tube current (mA)", [Optional(), NumberRange(min=0.001, max=1e4,
                            message="Above zero.")])
    at_cm = Number("Another distance (cm)", [Optional(), NumberRange(min=0.1, max=1e5,
                       message="Between 0.1 cm and 1 km.")],
                       description="The rate there by the inverse square law, an approximation.")
    materials = SelectMultipleField("Materials", choices=[SelectChoice(m.key, m.label) for m in MATERIALS.values()],
                                    default=list(MATERIALS), option_widget=CheckboxInput(),
                                    widget=ListWidget(prefix_label=False))

    def validate_planned_ma(self, field):
        """A planned current scales the reading only when the reading's own current is known."""
        if field.data is not None and self.ma.data is None:
            raise ValidationError("Enter the tube current during the reading too.")

    @staticmethod
    def formdata(setup: SetUp) -> MultiDict:
        """A set-up (a survey point) as the query the form reads, so it validates like one typed in."""
        values = [(name, f"{getattr(setup, name):g}") for name in
                  ("kv", "reading", "distance_cm", "target_usv_h", "margin", "ma")
                  if getattr(setup, name) is not None]
        return MultiDict([("anode", setup.anode), ("unit", setup.unit), *values,
                          *(("materials", key) for key in setup.materials)])

    def setup(self) -> SetUp:
        """The form as a set-up."""
        return SetUp(anode=self.anode.data, kv=self.kv.data, reading=self.reading.data, unit=self.unit.data,
                     target_usv_h=self.target_usv_h.data, margin=self.margin.data,
                     materials=tuple(self.materials.data) or tuple(MATERIALS),
                     distance_cm=self.distance_cm.data, at_cm=self.at_cm.data, ma=self.ma.data,
                     planned_ma=self.planned_ma.data)
