"""Investigation pages and the dose lines of the safety officer's attention list."""
from __future__ import annotations

import numpy as np
import sqlalchemy as sa
from flask import abort, flash, redirect, render_template, url_for
from flask_login import current_user

from models.core.codes import Level, Location, PeriodKind, Quantity, Series, code, decode
from models.core.labels import LEVEL_LABELS, shared_row_label
from models.exposure.evaluation import effective_limit_gaps, worst_levels
from models.exposure.figures_ops import lab_evaluation
from models.exposure.investigation_ops import (
    crossings,
    investigation_label,
    open_investigations,
    record_review,
    reviewed,
    sign_off,
    validate_review,
)
from models.exposure.rules_ops import rules_on
from models.exposure.tables import Investigation
from models.people.tables import CATEGORY_LABELS, Person, Role
from models.reports.context_ops import investigation_context
from webapp.access import roles_required
from webapp.exposure import bp
from webapp.exposure.forms import ReviewForm
from webapp.extensions import db
from webapp.formatting import dose, lab_today, lab_zone, local, settings
from webapp.forms import validate_with
from webapp.slots import Attention, Severity, attention, navigation

navigation.add("Investigations", "exposure.investigations", {Role.SAFETY_OFFICER}, order=60)

# What a projection reaches, in words that read after "projected to reach".
LEVEL_ORDER = list(Level)
REACH = {code(Level.LEVEL_1): "level I", code(Level.LEVEL_2): "level II",
         code(Level.LIMIT_REACHED): "the limit"}
LEVEL_SEVERITY = {
    code(Level.LIMIT_REACHED): Severity.LIMIT_REACHED,
    code(Level.LEVEL_2): Severity.LEVEL_2,
    code(Level.LEVEL_1): Severity.LEVEL_1,
}


@bp.route("/exposure/investigations/")
@roles_required(Role.SAFETY_OFFICER)
def investigations():
    """Every investigation: open ones first, then the signed-off ones, newest first."""
    rows = db.session.execute(
        sa.select(Investigation, Person.name).join(Person, Person.id == Investigation.person_id)
        .order_by(Investigation.signed_off_at.is_not(None), Investigation.raised_at.desc(),
                  Investigation.id.desc())).all()
    return render_template("exposure/investigations.html", rows=rows, label=investigation_label)


@bp.route("/exposure/investigations/<int:investigation_id>", methods=["GET", "POST"])
@roles_required(Role.SAFETY_OFFICER)
def investigation(investigation_id: int):
    """Record the review of an investigation and sign it off; signed off, it is read-only."""
    item = db.session.get(Investigation, investigation_id) or abort(404)
    form = ReviewForm(obj=item)
    if validate_with(form, lambda f: validate_review(item, f.sign.data, f.findings.data,
                                                  f.actions.data)):
        record_review(db.session, item, questions=form.questions.data,
                      findings=form.findings.data, actions=form.actions.data)
        if form.sign.data:
            sign_off(db.session, item, current_user)
        db.session.commit()
        flash("Signed off." if form.sign.data else "Review saved.", "info")
        return redirect(url_for("exposure.investigation", investigation_id=item.id))
    signer = item.signed_off_by_id and db.session.get(Person, item.signed_off_by_id)
    context = investigation_context(db.session, item, lab_zone(), settings().five_year_first_year)
    return render_template("exposure/investigation.html", item=item, form=form, signer=signer,
                           label=investigation_label(item), context=context,
                           person_url=url_for("exposure.person", person_id=item.person_id))


@attention.add(order=60)
def dose_levels() -> list[Attention]:
    """Every series at a level or a limit (its worst period), and projected crossings, from the stored
    evaluation; a crossing whose investigation is signed off shows as reviewed until the next
    level or window."""
    lab = lab_evaluation(db.session, lab_today())
    evaluation = lab.evaluation
    worst = worst_levels(evaluation)
    people = worst.attention
    if not len(people):
        return []
    names = dict(db.session.execute(sa.select(Person.id, Person.name).where(
        Person.id.in_(lab.person_ids[people].tolist()))).all())
    found = [c for c in crossings(lab) if c.person_id in names]
    done = reviewed(db.session, found)
    # One line per person and series: the crossing at the highest level (the first one kept).
    per_series: dict[tuple, tuple] = {}
    for crossing, is_reviewed in sorted(zip(found, done), key=lambda x: -LEVEL_ORDER.index(x[0].level)):
        per_series.setdefault((crossing.person_id, crossing.series), (crossing, is_reviewed))
    lines = []
    for crossing, is_reviewed in per_series.values():
        name = names[crossing.person_id]
        text = (f"{name}: {shared_row_label(crossing.series, crossing.quantity, crossing.location, crossing.period)}"
                f": {dose(crossing.dose_msv)}, {LEVEL_LABELS[crossing.level]}")
        url = url_for("exposure.person", person_id=crossing.person_id)
        if is_reviewed:
            lines.append(Attention(Severity.REVIEWED, text + " (investigation signed off)", url, "reviewed"))
        else:
            lines.append(Attention(LEVEL_SEVERITY[code(crossing.level)], text, url,
                                   LEVEL_LABELS[crossing.level]))
    for p, (s_proj, t_proj) in zip(people, _projected_rows(evaluation, people)):
        reach = s_proj >= 0 and int(evaluation.projected_level[p, s_proj, t_proj])
        if not reach:
            continue
        name = names[int(lab.person_ids[p])]
        lines.append(Attention(Severity.PROJECTED,
                               f"{name}: {_row_text(lab, p, s_proj, t_proj)}, projected to reach "
                               f"{REACH[reach]} by its end",
                               url_for("exposure.person", person_id=int(lab.person_ids[p])), "projected"))
    return lines


def _projected_rows(evaluation, people: np.ndarray) -> list[tuple[int, int]]:
    """(series, period) of each person's worst projected crossing, (-1, -1) for none."""
    rises = evaluation.projected_level[people] - evaluation.level[people]
    worst_reach = np.where(rises > 0, evaluation.projected_level[people], -1)
    flat = worst_reach.reshape(len(people), -1)
    at = flat.argmax(axis=1)
    n_periods = len(PeriodKind)
    return [(int(a // n_periods), int(a % n_periods)) if flat[i, a] >= 0 else (-1, -1)
            for i, a in enumerate(at)]


def _row_label(lab, p: int, s: int, t: int) -> str:
    """'Hp(10) whole body, calendar quarter' for one row of the arrays."""
    totals = lab.totals
    return shared_row_label(decode(Series, [s])[0], decode(Quantity, [totals.quantity[p, s]])[0],
                          decode(Location, [totals.location[p, s, t]])[0],
                          decode(PeriodKind, [t])[0])


def _row_text(lab, p: int, s: int, t: int) -> str:
    """'Hp(10) whole body, quarter: 1.600 mSv' for one row of the arrays."""
    return f"{_row_label(lab, p, s, t)}: {dose(float(lab.totals.dose[p, s, t]))}"


@attention.add(order=58)
def limit_set_state() -> list[Attention]:
    """Fail closed: no set in force, a set installed by default, people without an effective limit."""
    lab_settings = settings()
    where = url_for("exposure.limits")
    if lab_settings.limit_set is None:
        return [Attention(Severity.LIMIT_SET, "No limit set is in force: no dose is assessed against "
                          "any limit. Choose a limit set.", where, "no limit set")]
    name = lab_settings.limit_set.name
    lines = []
    if lab_settings.limit_set_by_default:
        lines.append(Attention(
            Severity.LIMIT_SET, f"The limit set in force, {name}, was installed by default when the "
            "database was created and nobody has confirmed it: choose it again to confirm it, or "
            "choose the set that applies to this lab.", where, "installed by default"))
    people = db.session.execute(sa.select(Person.name, Person.category).where(Person.active)
                                .order_by(Person.name)).all()
    for category in effective_limit_gaps(rules_on(db.session, lab_today())[0], [c for _, c in people]):
        names = ", ".join(n for n, c in people if c == category)
        lines.append(Attention(
            Severity.LIMIT_SET, f"{name} has no effective-dose limit for {CATEGORY_LABELS[category].lower()} "
            f"({names}): their doses are not assessed. Choose another limit set, or copy this one "
            "and add the rule.", where, "no limit"))
    return lines


@attention.add(order=61)
def investigations_open() -> list[Attention]:
    """Investigations waiting for the safety officer's review and sign-off."""
    return [
        Attention(Severity.OPEN_INVESTIGATION,
                  f"Investigation open: {name}, {investigation_label(item)} "
                  f"(raised {local(item.raised_at, '%Y-%m-%d')})",
                  url_for("exposure.investigation", investigation_id=item.id), "investigation")
        for item, name in open_investigations(db.session)
    ]
