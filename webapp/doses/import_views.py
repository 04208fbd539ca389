"""Import of a dosimetry report: upload, map the columns once, preview every row, commit all or none."""
from __future__ import annotations

import os
import re
from hashlib import sha256

import sqlalchemy as sa
from flask import abort, current_app, flash, redirect, render_template, request, url_for
from flask_login import current_user
from flask_wtf import FlaskForm
from wtforms import SelectChoice

from models.core.errors import Invalid
from models.doses.import_ops import (
    FIELDS,
    MAX_ROWS,
    PRODUCT_LAYOUT,
    Layout,
    date_format_words,
    import_report,
    layout_of,
    read_csv,
    save_mapping,
    validate_report,
)
from models.doses.tables import DoseRecord, ImportBatch, ImportMapping
from models.exposure.investigation_ops import review_after_dose_change
from models.people.tables import Role
from webapp.access import roles_required
from webapp.config import upload_limit_text
from webapp.doses import bp
from webapp.doses.forms import MappingForm, UploadForm
from webapp.exposure.notify import tell_about
from webapp.extensions import db
from webapp.formatting import lab_today
from webapp.forms import error_text, validate_with

NEW_MAPPING = "new"
# The preview shows counts and this many rows and problems, not a page per row of a large file.
PREVIEW_ROWS = 50
_SHA = re.compile(r"[0-9a-f]{64}")


def _upload_path(sha: str) -> str:
    """Where an uploaded report is kept between upload, preview and commit (named by its hash)."""
    if not _SHA.fullmatch(sha):
        abort(404)
    folder = current_app.config.get("DOSE_IMPORT_FOLDER") or os.path.join(current_app.instance_path, "imports")
    return os.path.join(folder, f"{sha}.csv")


def _stored(sha: str) -> bytes:
    """An uploaded report's bytes; 404 when it is gone."""
    path = _upload_path(sha)
    if not os.path.exists(path):
        abort(404)
    with open(path, "rb") as stored:
        return stored.read()


def _store(data: bytes) -> str:
    """Keep an uploaded report under its SHA-256 and return the hash."""
    sha = sha256(data).hexdigest()
    path = _upload_path(sha)
    os.makedirs(os.path.dirname(path), exist_ok=True)
    with open(path, "wb") as stored:
        stored.write(data)
    return sha


def _layout(key: str) -> Layout:
    """The layout named by a request: the product's own (empty key) or a saved mapping's id."""
    if not key:
        return PRODUCT_LAYOUT
    mapping = db.session.get(ImportMapping, int(key)) if key.isdigit() else None
    return layout_of(mapping or abort(404))


@bp.route("/doses/import", methods=["GET", "POST"])
@roles_required(Role.SAFETY_OFFICER)
def import_upload():
    """Upload a report and choose how to read its columns."""
    mappings = db.session.scalars(sa.select(ImportMapping).order_by(ImportMapping.name)).all()
    form = UploadForm()
    form.layout.choices = ([SelectChoice("", "The logbook's own layout")] + [SelectChoice(str(m.id), m.name) for m in mappings]
                           + [SelectChoice(NEW_MAPPING, "A new mapping: choose the columns")])
    form.file.description = (f"At most {upload_limit_text(current_app.config)} and "
                             f"{MAX_ROWS:,} rows; split a larger report.")
    if form.validate_on_submit():
        sha = _store(form.file.data.read())
        filename = (form.file.data.filename or "report.csv")[:255]
        if form.layout.data == NEW_MAPPING:
            return redirect(url_for("doses.import_mapping", sha=sha, filename=filename))
        return redirect(url_for("doses.import_preview", sha=sha, layout=form.layout.data, filename=filename))
    batches = db.session.scalars(sa.select(ImportBatch).order_by(ImportBatch.id.desc()).limit(20)).all()
    return render_template("doses/import.html", form=form, mappings=mappings, batches=batches,
                           fields=FIELDS, date_words=date_format_words)


@bp.route("/doses/import/<sha>/mapping", methods=["GET", "POST"])
@roles_required(Role.SAFETY_OFFICER)
def import_mapping(sha: str):
    """Name the file's columns once; the mapping is saved for the service's later reports."""
    filename = request.args.get("filename", "report.csv")
    try:
        header, _rows = read_csv(_stored(sha))
    except Invalid as error:
        flash(" ".join(error.errors.values()), "error")
        return redirect(url_for("doses.import_upload"))
    form = MappingForm()
    for name in FIELDS:
        field = getattr(form, name)
        field.choices = [SelectChoice("", "Not in the file")] + [SelectChoice(h, h) for h in header if h]
        if not form.is_submitted():
            field.data = next((h for h in header if h.lower() == name), "")
    if saved := validate_with(form, lambda f: save_mapping(
            db.session, name=f.name.data, columns={n: getattr(f, n).data for n in FIELDS},
            date_format=f.date_format.data.strip(), default_unit=f.default_unit.data)):
        db.session.commit()
        flash(f"Mapping '{saved.value.name}' saved.", "info")
        return redirect(url_for("doses.import_preview", sha=sha, layout=saved.value.id, filename=filename))
    return render_template("doses/mapping.html", form=form, fields=FIELDS, filename=filename)


@bp.route("/doses/import/<sha>")
@roles_required(Role.SAFETY_OFFICER)
def import_preview(sha: str):
    """Every row of the report as it would be recorded, with every error found."""
    layout_key = request.args.get("layout", "")
    filename = request.args.get("filename", "report.csv")
    preview = validate_report(db.session, _stored(sha), _layout(layout_key), filename)
    return render_template("doses/preview.html", preview=preview, layout_key=layout_key,
                           date_words=date_format_words, shown=PREVIEW_ROWS)


@bp.route("/doses/import/<sha>/commit", methods=["POST"])
@roles_required(Role.SAFETY_OFFICER)
def import_commit(sha: str):
    """Add every row, or none when any row has an error; the same file is added only once."""
    layout_key = request.form.get("layout", "")
    filename = request.form.get("filename", "report.csv")[:255]
    form = FlaskForm()
    if not (done := validate_with(form, lambda f: import_report(
            db.session, _stored(sha), _layout(layout_key), filename, imported_by_id=current_user.id))):
        flash(error_text(form), "error")
        return redirect(url_for("doses.import_preview", sha=sha, layout=layout_key, filename=filename))
    preview = done.value
    if preview.earlier is not None:
        flash(f"This file was already imported (batch #{preview.earlier.id}); nothing was added.", "warning")
        return redirect(url_for("doses.import_batch", batch_id=preview.earlier.id))
    batch = preview.batch
    raised = review_after_dose_change(db.session, lab_today())
    tell_about(raised)  # queued with the change, sent after the commit
    db.session.commit()
    os.remove(_upload_path(sha))
    flash(f"Imported {batch.row_count} dose records as batch #{batch.id}.", "info")
    return redirect(url_for("doses.import_batch", batch_id=batch.id))


@bp.route("/doses/import/batch/<int:batch_id>")
@roles_required(Role.SAFETY_OFFICER)
def import_batch(batch_id: int):
    """The records one import added."""
    batch = db.session.get(ImportBatch, batch_id) or abort(404)
    records = db.session.scalars(sa.select(DoseRecord).where(DoseRecord.import_batch_id == batch_id)
                                 .order_by(DoseRecord.id)).all()
    return render_template("doses/batch.html", batch=batch, records=records)
