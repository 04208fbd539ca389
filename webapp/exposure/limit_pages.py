"""The safety officer's limit pages: the set in force, presets, copies and their rules, policies."""
from __future__ import annotations

import sqlalchemy as sa
from flask import abort, flash, redirect, render_template, url_for
from flask_login import current_user
from wtforms import SelectChoice

from models.audit import audit_ops
from models.exposure import presets
from models.exposure.investigation_ops import review_after_dose_change
from models.exposure.limit_set_ops import copy_limit_set, install_preset, is_editable, remove_rule, save_rule
from models.exposure.rules_ops import changes_in_force, choose_limit_set, rule_history, set_policies
from models.exposure.tables import LimitRule, LimitSet
from models.people.tables import Role
from webapp.access import roles_required
from webapp.exposure import bp, labels
from webapp.exposure.forms import ChooseSetForm, CopyForm, PoliciesForm, ReasonForm, RuleForm
from webapp.exposure.notify import tell_about
from webapp.extensions import db
from webapp.formatting import lab_today, settings
from webapp.forms import error_text, validate_with
from webapp.slots import settings_sections

RSO = Role.SAFETY_OFFICER


@settings_sections.add("exposure/limits_settings_section.html", roles={RSO}, order=25)
def settings_section(lab) -> dict:
    """The set in force and the counting policies, with a link to change them."""
    return {"lab": lab, "labels": labels}


def _installed() -> list[LimitSet]:
    """Every stored set, presets first."""
    return db.session.scalars(
        sa.select(LimitSet).order_by(LimitSet.preset_key.is_(None), LimitSet.name)).all()


def _index(choose: ChooseSetForm | None = None, policies: PoliciesForm | None = None, status=200):
    """The limits page with its two forms (one may carry errors)."""
    lab = settings()
    sets = _installed()
    choose = choose or ChooseSetForm(limit_set_id=lab.limit_set_id)
    choose.limit_set_id.choices = [SelectChoice(s.id, s.name) for s in sets]
    policies = policies or PoliciesForm(obj=lab)
    installed_keys = {s.preset_key for s in sets}
    return render_template(
        "exposure/limits_index.html", lab=lab, sets=sets, choose=choose, policies=policies,
        presets=[p for p in presets.PRESETS if p.key not in installed_keys],
        labels=labels), status


@bp.route("/exposure/limits/")
@roles_required(RSO)
def limits():
    """Installed sets, presets to install, the set in force and the policies."""
    return _index()


def _change(form) -> dict:
    """From when, why and by whom a change of the rules is made, from its form."""
    return {"from_on": form.from_on.data or lab_today(), "reason": form.reason.data, "today": lab_today(),
            "by": current_user.id}


@bp.route("/exposure/limits/history")
@roles_required(RSO)
def limits_history():
    """Every change of the limit set in force and of the counting policies: from when, who, why."""
    set_change, policy_change = changes_in_force(db.session, lab_today())
    return render_template("exposure/limits_history.html", changes=rule_history(db.session),
                           set_in_force=set_change.id if set_change else None,
                           policies_in_force=policy_change.id if policy_change else None, labels=labels)


@bp.route("/exposure/limits/choose", methods=["POST"])
@roles_required(RSO)
def limits_choose():
    """Put another installed set in force."""
    form = ChooseSetForm()
    form.limit_set_id.choices = [SelectChoice(s.id, s.name) for s in _installed()]

    def choose(f):
        """The set must exist and evaluate."""
        chosen = db.session.get(LimitSet, f.limit_set_id.data) if f.limit_set_id.data else None
        choose_limit_set(db.session, settings(), chosen, **_change(f))
        return review_after_dose_change(db.session, lab_today())  # a new set can put someone at a level

    if not (chosen := validate_with(form, choose)):
        return _index(choose=form, status=400)
    tell_about(chosen.value)
    db.session.commit()
    flash(f"'{db.session.get(LimitSet, form.limit_set_id.data).name}' is the limit set in force from "
          f"{_change(form)['from_on'].isoformat()}.", "info")
    return redirect(url_for("exposure.limits"))


@bp.route("/exposure/limits/policies", methods=["POST"])
@roles_required(RSO)
def limits_policies():
    """Change how records are counted."""
    form = PoliciesForm()

    def apply(f):
        """Apply the policies (rolled back if anything is wrong)."""
        set_policies(db.session, settings(), {name: f[name].data for name in (
            "proration", "mrd_policy", "lens_source", "five_year_first_year")}, **_change(f))
        return review_after_dose_change(db.session, lab_today())  # so may a new way of counting

    if not (applied := validate_with(form, apply)):
        return _index(policies=form, status=400)
    tell_about(applied.value)
    db.session.commit()
    flash(f"Counting policies saved; every figure from {_change(form)['from_on'].isoformat()} on follows them.",
          "info")
    return redirect(url_for("exposure.limits"))


@bp.route("/exposure/limits/install/<key>", methods=["POST"])
@roles_required(RSO)
def limits_install(key: str):
    """Store a shipped preset so it can be viewed, put in force or copied."""
    if key not in {p.key for p in presets.PRESETS}:
        abort(404)
    stored = install_preset(db.session, key)
    db.session.commit()
    flash(f"'{stored.name}' is installed. It is read-only; copy it to change it.", "info")
    return redirect(url_for("exposure.limit_set", set_id=stored.id))


def _set(set_id: int) -> LimitSet:
    """A stored set or 404."""
    return db.session.get(LimitSet, set_id) or abort(404)


@bp.route("/exposure/limits/<int:set_id>")
@roles_required(RSO)
def limit_set(set_id: int, copy: CopyForm | None = None, status: int = 200):
    """A set's rules with their clauses; a copy form; edit links on a copy."""
    stored = _set(set_id)
    return render_template(
        "exposure/limits_set.html", stored=stored, editable=is_editable(stored),
        in_force=settings().limit_set_id == stored.id, copy=copy or CopyForm(
            name=f"{stored.name} (local)"), labels=labels, remove=ReasonForm()), status


@bp.route("/exposure/limits/<int:set_id>/copy", methods=["POST"])
@roles_required(RSO)
def limits_copy(set_id: int):
    """An editable copy of a set."""
    stored = _set(set_id)
    form = CopyForm()
    if not (copied := validate_with(form, lambda f: copy_limit_set(db.session, stored, f.name.data))):
        return limit_set(set_id, copy=form, status=400)
    copy = copied.value
    db.session.commit()
    flash(f"'{copy.name}' is an editable copy of '{stored.name}'.", "info")
    return redirect(url_for("exposure.limit_set", set_id=copy.id))


def _editable(set_id: int) -> LimitSet:
    """A set the lab may change; a preset sends the safety officer back with the reason."""
    stored = _set(set_id)
    if not is_editable(stored):
        abort(403)
    return stored


@bp.route("/exposure/limits/<int:set_id>/rules/new", methods=["GET", "POST"])
@bp.route("/exposure/limits/<int:set_id>/rules/<int:rule_id>", methods=["GET", "POST"])
@roles_required(RSO)
def limit_rule(set_id: int, rule_id: int | None = None):
    """Add a rule to a copy, or change one."""
    stored = _editable(set_id)
    rule = None
    if rule_id is not None:
        rule = db.session.get(LimitRule, rule_id)
        if rule is None or rule.limit_set_id != stored.id:
            abort(404)
    form = RuleForm(obj=rule)
    if rule is not None and not form.is_submitted():
        form.level1_kind.data = rule.level1_kind or ""
        form.level2_kind.data = rule.level2_kind or ""

    def save(f):
        """Save the rule with the reason (rolled back if anything is wrong)."""
        with audit_ops.reason(db.session, f.reason.data):
            save_rule(db.session, stored, f.values(), rule)

    if validate_with(form, save):
        db.session.commit()
        flash("Rule saved.", "info")
        return redirect(url_for("exposure.limit_set", set_id=stored.id))
    status = 400 if form.is_submitted() else 200
    return render_template("exposure/limits_rule.html", stored=stored, rule=rule, form=form,
                           in_force=settings().limit_set_id == stored.id), status


@bp.route("/exposure/limits/<int:set_id>/rules/<int:rule_id>/remove", methods=["POST"])
@roles_required(RSO)
def limit_rule_remove(set_id: int, rule_id: int):
    """Take a rule out of a copy, with a reason."""
    stored = _editable(set_id)
    rule = db.session.get(LimitRule, rule_id)
    if rule is None or rule.limit_set_id != stored.id:
        abort(404)
    form = ReasonForm()

    def remove(f):
        with audit_ops.reason(db.session, f.reason.data):
            remove_rule(db.session, stored, rule)

    if not validate_with(form, remove):
        flash(f"{error_text(form)} Nothing was changed.", "error")
        return redirect(url_for("exposure.limit_set", set_id=stored.id))
    db.session.commit()
    flash("Rule removed.", "info")
    return redirect(url_for("exposure.limit_set", set_id=stored.id))
