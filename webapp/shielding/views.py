"""The safety officer's shielding page and its chart."""
from __future__ import annotations

from flask import Response, abort, render_template, request

from models.people.tables import Role
from models.surveys.shielding import MATERIALS
from models.surveys.tables import SurveyPoint
from webapp.access import roles_required
from webapp.extensions import db
from webapp.shielding import bp
from webapp.shielding.chart import no_chart_svg, transmission_chart_svg
from webapp.shielding.forms import EstimateForm
from webapp.shielding.setup import INVERSE_SQUARE_NOTE, from_point, run


@bp.route("/shielding/")
@roles_required(Role.SAFETY_OFFICER)
def estimate():
    """What it would take: from a survey point (?point=ID) or values typed in."""
    point = _point()
    given = point is None or "kv" in request.args
    form = EstimateForm(request.args if given else EstimateForm.formdata(from_point(point)))
    result = None
    if (point is not None or request.args) and form.validate():
        try:
            result = run(form.setup())
        except ValueError as error:
            form.form_errors.append(str(error))
    return render_template("shielding/estimate.html", form=form, result=result, point=point,
                           chart_args=_chart_args(form) if result else None,
                           inverse_square_note=INVERSE_SQUARE_NOTE, materials=MATERIALS)


@bp.route("/shielding/chart.svg")
@roles_required(Role.SAFETY_OFFICER)
def chart():
    """The transmission chart of the estimate the query describes."""
    form = EstimateForm(request.args)
    try:
        if not form.validate():
            raise ValueError("the values above are not complete")
        svg = transmission_chart_svg(run(form.setup()).estimate)
    except ValueError as error:
        # An image cannot show a field's message: it says in words why there is no chart.
        svg = no_chart_svg(f"No chart: {error}.")
    response = Response(svg, mimetype="image/svg+xml")
    response.headers["Cache-Control"] = "private, max-age=300"
    return response


def _point() -> SurveyPoint | None:
    """The survey point asked for, if any; an unknown one is a 404."""
    point_id = request.args.get("point", type=int)
    if point_id is None:
        return None
    return db.session.get(SurveyPoint, point_id) or abort(404)


def _chart_args(form: EstimateForm) -> dict:
    """The form's values as the chart's query."""
    return {name: field.data for name, field in form._fields.items() if field.data is not None}
