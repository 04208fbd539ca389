"""API v1 endpoints: open, close, log and list the sessions of the token's instrument."""
from __future__ import annotations

from datetime import datetime
from functools import wraps

import sqlalchemy as sa
from flask import Response, abort, g, json, jsonify, request
from werkzeug.exceptions import HTTPException

from models.audit.audit_ops import set_actor
from models.core.errors import Invalid, errors_of
from models.doses.tables import Dosimeter
from models.instruments import idempotency_ops
from models.instruments.token_ops import instrument_for_token, token_hash
from models.people.person_ops import find_person
from models.people.tables import Person
from models.sessions.session_ops import (
    close_session,
    figures,
    find_sessions,
    log_finished_session,
    open_session,
    validate_finished,
    validate_opening,
)
from models.sessions.tables import EntrySource, InstrumentSession
from webapp.api import v1
from webapp.api.openapi import document
from webapp.api.problems import problem
from webapp.extensions import db, limiter

NUMBERS = ("kv", "ma", "beam_on_minutes")
FLAGS = ("pre_use_checks_confirmed", "dosimeter_worn", "alignment", "configuration_changed",
         "caution_acknowledged")
TEXTS = ("purpose", "configuration_change", "notes")
TIMES = ("started_at", "ended_at")
REFUSED = "The entry breaks one or more of the logbook's rules; nothing was written."


def _token_key() -> str:
    """Rate-limit per token, so one misbehaving PC cannot lock out the others."""
    header = request.headers.get("Authorization", "")
    return token_hash(header) if header else request.remote_addr or "unknown"


# An instrument PC logs a few sessions an hour; this leaves room for retries and listing.
limiter.limit("120 per minute", key_func=_token_key)(v1)


def _http_problem(error: HTTPException):
    """Every HTTP error of the API as a problem document."""
    headers = {"WWW-Authenticate": "Bearer"} if error.code == 401 else None
    return problem(error.code or 500, error.name, error.description or error.name, headers=headers)


# By code, because the app's own handlers by code would otherwise win and answer in HTML.
for _code in (400, 401, 403, 404, 405, 413, 415, 429):
    v1.register_error_handler(_code, _http_problem)


@v1.errorhandler(Invalid)
def _invalid(error: Invalid):
    """A refused entry: 422 with each field's message."""
    db.session.rollback()
    return problem(422, "Entry refused", REFUSED, error.errors)


@v1.before_request
def _authenticate():
    """Find the instrument from the bearer token; the OpenAPI document is public."""
    if request.endpoint == "api.v1.openapi":
        return None
    scheme, _, token = request.headers.get("Authorization", "").partition(" ")
    instrument = instrument_for_token(db.session, token.strip()) if scheme.lower() == "bearer" else None
    if instrument is None:
        abort(401, "Send a valid instrument token as 'Authorization: Bearer <token>'.")
    g.instrument = instrument
    return None


def _body() -> dict:
    """The JSON object sent, or a 400 problem."""
    body = request.get_json(silent=True)
    if not isinstance(body, dict):
        abort(400, "Send a JSON object with Content-Type: application/json.")
    return body


def _time(text) -> datetime:
    """An ISO 8601 time with its offset, as aware UTC."""
    if not isinstance(text, str):
        raise ValueError
    moment = datetime.fromisoformat(text.replace("Z", "+00:00"))
    if moment.tzinfo is None:
        raise ValueError
    return moment


def _values(body: dict, operator: Person | None) -> tuple[dict, dict]:
    """The body's fields as the session rules take them, and each field it could not read."""
    values, errors = {}, {}
    for key in NUMBERS:
        value = body.get(key)
        if value is not None and (isinstance(value, bool) or not isinstance(value, (int, float))):
            errors[key] = f"'{key}' must be a number."
        else:
            values[key] = float(value) if value is not None else None
    for key in FLAGS:
        value = body.get(key, False)
        if not isinstance(value, bool):
            errors[key] = f"'{key}' must be true or false."
        values[key] = value is True
    for key in TEXTS:
        value = body.get(key)
        if value is not None and not isinstance(value, str):
            errors[key] = f"'{key}' must be text."
        values[key] = value if isinstance(value, str) else None
    for key in TIMES:
        if body.get(key) is None:
            values[key] = None
            continue
        try:
            values[key] = _time(body[key])
        except ValueError:
            errors[key] = f"'{key}' must be an ISO 8601 time with its offset, e.g. 2026-03-01T09:30:00Z."
            values[key] = None
    serial = body.get("dosimeter")
    values["dosimeter_id"] = None
    if serial is not None and operator is not None:
        dosimeter = db.session.scalar(sa.select(Dosimeter).where(Dosimeter.serial == str(serial)))
        if dosimeter is None:
            errors["dosimeter"] = f"No dosimeter with serial '{serial}'."
        else:
            values["dosimeter_id"] = dosimeter.id
    return values, errors


def _operator(body: dict) -> Person | None:
    """The operator named by login in the body."""
    login = body.get("operator")
    return find_person(db.session, login.strip()) if isinstance(login, str) else None


def _written(body: dict, validate, write) -> InstrumentSession:
    """Read the body and write the session, the session rules running once; every problem together.

    With a field the body could not give, `validate` collects the rules' errors beside it (nothing
    is written); otherwise `write` checks the rules itself under the write lock and writes.
    """
    operator = _operator(body)
    values, errors = _values(body, operator)
    try:
        if errors:
            raise Invalid({**errors_of(lambda: validate(operator, values)), **errors})
        set_actor(db.session, operator.id if operator else None)
        return write(operator, values)
    except Invalid as error:
        # The form calls this field dosimeter_id; the API names dosimeters by serial.
        if "dosimeter_id" in error.errors:
            error.errors["dosimeter"] = error.errors.pop("dosimeter_id")
        raise


def as_json(entry: InstrumentSession) -> dict:
    """A session and its derived figures as the API shows them."""
    f = figures(entry)
    dosimeter = db.session.get(Dosimeter, entry.dosimeter_id) if entry.dosimeter_id else None
    return {
        "id": entry.id, "instrument": entry.instrument.name, "operator": entry.operator.login,
        "started_at": entry.started_at.isoformat(),
        "ended_at": entry.ended_at.isoformat() if entry.ended_at else None,
        "kv": entry.kv, "ma": entry.ma, "beam_on_minutes": entry.beam_on_minutes,
        "purpose": entry.purpose, "pre_use_checks_confirmed": entry.pre_use_checks_confirmed,
        "dosimeter_worn": entry.dosimeter_worn, "dosimeter": dosimeter.serial if dosimeter else None,
        "alignment": entry.alignment, "configuration_changed": entry.configuration_changed,
        "configuration_change": entry.configuration_change, "notes": entry.notes,
        "bypass_permit_id": entry.bypass_permit_id, "source": entry.source.value,
        "figures": {
            "power_w": f.power_w, "energy_kwh": f.energy_kwh,
            "max_photon_energy_kev": f.max_photon_kev,
            "lambda_min_angstrom": f.lambda_min_angstrom, "k_edge_kev": f.k_edge_kev,
            "k_lines_excited": f.k_lines_excited, "k_lines_note": f.k_note,
        },
    }


def idempotent(view):
    """With an Idempotency-Key header, a retry gets the first answer instead of a second write."""
    @wraps(view)
    def run(*args, **kwargs):
        key = request.headers.get(idempotency_ops.FIELD)
        g.idempotency_claim = None
        if key is None:
            return view(*args, **kwargs)
        digest = idempotency_ops.request_hash(request.method, request.path, request.get_data())
        row = idempotency_ops.claim(db.session, g.instrument, key, digest)
        if row.status is not None:
            status, response = row.status, row.response
            db.session.rollback()  # ends the read (and on SQLite releases the write lock)
            return Response(response, status=status, mimetype="application/json",
                            headers={"Idempotent-Replayed": "true"})
        g.idempotency_claim = row
        return view(*args, **kwargs)
    return run


def _answer(payload: dict, status: int):
    """Commit the write together with the answer kept for its Idempotency-Key, and send it."""
    if g.get("idempotency_claim") is not None:
        idempotency_ops.settle(db.session, g.idempotency_claim, status, json.dumps(payload))
    db.session.commit()
    return jsonify(payload), status


@v1.post("/sessions")
@idempotent
def open_():
    """Open a session on the token's instrument."""
    instrument, body = g.instrument, _body()
    entry = _written(body, lambda op, v: validate_opening(db.session, instrument, op, v),
                     lambda op, v: open_session(db.session, instrument, op, v, source=EntrySource.API))
    return _answer(as_json(entry), 201)


@v1.post("/sessions/finished")
@idempotent
def finished():
    """Log a session that already ended."""
    instrument, body = g.instrument, _body()
    entry = _written(body, lambda op, v: validate_finished(db.session, instrument, op, v),
                     lambda op, v: log_finished_session(db.session, instrument, op, v, source=EntrySource.API))
    return _answer(as_json(entry), 201)


@v1.post("/sessions/<int:session_id>/close")
@idempotent
def close(session_id: int):
    """End an open session of the token's instrument."""
    entry = db.session.get(InstrumentSession, session_id)
    if entry is None or entry.instrument_id != g.instrument.id:
        abort(404, f"No session {session_id} on this instrument.")
    body = _body()
    values, errors = _values({k: body.get(k) for k in ("ended_at", "beam_on_minutes")}, None)
    if errors:
        raise Invalid(errors)
    set_actor(db.session, entry.operator_id)
    close_session(db.session, entry, ended_at=values["ended_at"],
                  beam_on_minutes=values["beam_on_minutes"])
    return _answer(as_json(entry), 200)


@v1.get("/sessions")
def list_():
    """The token's instrument's sessions, newest first, optionally within [from, to)."""
    bounds = {}
    for key in ("from", "to"):
        if request.args.get(key):
            try:
                bounds[key] = _time(request.args[key])
            except ValueError:
                raise Invalid({key: f"'{key}' must be an ISO 8601 time with its offset."}) from None
    rows = find_sessions(db.session, instrument=g.instrument, start=bounds.get("from"),
                         end=bounds.get("to"),
                         limit=min(max(request.args.get("limit", 100, type=int), 1), 1000))
    return jsonify({"instrument": g.instrument.name, "sessions": [as_json(s) for s in rows]})


@v1.get("/openapi.json")
def openapi():
    """The OpenAPI 3 description of this API."""
    return jsonify(document())
