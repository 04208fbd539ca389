"""API v1 endpoints: open, close, log and list the sessions of the token's instrument."""
from __future__ import annotations

import json
import math
from datetime import UTC, datetime

import sqlalchemy as sa
from flask import abort, g, jsonify, request, url_for
from werkzeug.exceptions import HTTPException

from models.audit.audit_ops import set_actor
from models.core.bounds import date_in_range
from models.core.errors import Invalid
from models.doses.tables import Dosimeter
from models.instruments.token_ops import instrument_for_token, token_hash
from models.people.person_ops import find_person
from models.people.tables import Person
from models.sessions.session_ops import (
    TEXT_LIMITS,
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
from webapp.forms import MULTI_LINE_FORBIDDEN, SINGLE_LINE_FORBIDDEN, query_int

NUMBERS = ("kv", "ma", "beam_on_minutes")
FLAGS = ("pre_use_checks_confirmed", "dosimeter_worn", "alignment", "configuration_changed",
         "caution_acknowledged")
TEXTS = ("purpose", "configuration_change", "notes")
TIMES = ("started_at", "ended_at")
REFUSED = "The entry breaks one or more of the logbook's rules; nothing was written."
SINGLE_LINE = {"purpose"}
# An instrument PC sends a few hundred bytes of flat JSON; anything far beyond is refused unread.
MAX_BODY_BYTES = 64 * 1024
MAX_DEPTH = 4


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


def _depth(value, limit: int) -> int:
    """How deeply lists and objects nest in a JSON value, counted no further than `limit` + 1."""
    if limit < 0 or not isinstance(value, (dict, list)):
        return 0
    children = value.values() if isinstance(value, dict) else value
    return 1 + max((_depth(child, limit - 1) for child in children), default=0)


def _body() -> dict:
    """The JSON object sent, or a 400/413 problem: small, shallow and readable, or refused."""
    if not request.is_json:
        abort(400, "Send a JSON object with Content-Type: application/json.")
    if (request.content_length or 0) > MAX_BODY_BYTES:
        abort(413, f"A request body may be at most {MAX_BODY_BYTES // 1024} KiB.")
    raw = request.get_data(cache=True)
    if len(raw) > MAX_BODY_BYTES:
        abort(413, f"A request body may be at most {MAX_BODY_BYTES // 1024} KiB.")
    try:
        body = json.loads(raw)
    except (ValueError, RecursionError):  # RecursionError: nesting deeper than the parser goes
        abort(400, "The body is not valid JSON.")
    if not isinstance(body, dict):
        abort(400, "Send a JSON object with Content-Type: application/json.")
    if _depth(body, MAX_DEPTH) > MAX_DEPTH:
        abort(400, f"The JSON nests deeper than {MAX_DEPTH} levels.")
    return body


def _time(text) -> datetime:
    """An ISO 8601 time with its offset, as aware UTC, from 1950 to 2100."""
    if not isinstance(text, str) or len(text) > 40:
        raise ValueError
    moment = datetime.fromisoformat(text.replace("Z", "+00:00"))
    if moment.tzinfo is None or not date_in_range(moment):
        raise ValueError
    try:
        return moment.astimezone(UTC)
    except OverflowError:  # 9999-12-31 with a negative offset lies past the last representable time
        raise ValueError from None


def _text_error(key: str, value: str) -> str | None:
    """Why a text is refused (too long, control characters), or None."""
    if len(value) > TEXT_LIMITS[key]:
        return f"'{key}' may be at most {TEXT_LIMITS[key]} characters (it has {len(value)})."
    pattern = SINGLE_LINE_FORBIDDEN if key in SINGLE_LINE else MULTI_LINE_FORBIDDEN
    if pattern.search(value):
        return f"'{key}' contains control characters; remove them."
    return None


def _values(body: dict, operator: Person | None) -> tuple[dict, dict]:
    """The body's fields as the session rules take them, and each field it could not read."""
    values, errors = {}, {}
    for key in NUMBERS:
        value = body.get(key)
        if value is None:
            values[key] = None
        elif isinstance(value, bool) or not isinstance(value, (int, float)):
            errors[key] = f"'{key}' must be a number."
            values[key] = None
        elif not _finite(value):
            errors[key] = f"'{key}' must be a finite number."
            values[key] = None
        else:
            values[key] = float(value)
    for key in FLAGS:
        value = body.get(key, False)
        if not isinstance(value, bool):
            errors[key] = f"'{key}' must be true or false."
        values[key] = value is True
    for key in TEXTS:
        value = body.get(key)
        if value is not None and not isinstance(value, str):
            errors[key] = f"'{key}' must be text."
        elif isinstance(value, str) and (problem_text := _text_error(key, value)):
            errors[key] = problem_text
            value = None
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
    if serial is not None and not _plain_name(serial):
        errors["dosimeter"] = "'dosimeter' must be a serial: text without control characters."
    elif serial is not None and operator is not None:
        dosimeter = db.session.scalar(sa.select(Dosimeter).where(Dosimeter.serial == str(serial)))
        if dosimeter is None:
            errors["dosimeter"] = f"No dosimeter with serial '{serial}'."
        else:
            values["dosimeter_id"] = dosimeter.id
    return values, errors


def _finite(value: int | float) -> bool:
    """True for a number a float holds exactly enough and that is not infinite or NaN."""
    try:
        return math.isfinite(float(value))
    except OverflowError:  # an integer with hundreds of digits
        return False


def _plain_name(value) -> bool:
    """True for a short single-line text, such as a login or a serial."""
    return isinstance(value, str) and len(value) <= 200 and not SINGLE_LINE_FORBIDDEN.search(value)


def _operator(body: dict) -> Person | None:
    """The operator named by login in the body."""
    login = body.get("operator")
    return find_person(db.session, login.strip()) if _plain_name(login) else None


def _checked(body: dict, check) -> tuple[Person, dict]:
    """Read the body and run the session rules on it; every problem is reported together."""
    operator = _operator(body)
    values, errors = _values(body, operator)
    try:
        check(operator, values)
    except Invalid as error:
        errors = {**error.errors, **errors}
    if errors:
        # The form calls this field dosimeter_id; the API names dosimeters by serial.
        if "dosimeter_id" in errors:
            errors["dosimeter"] = errors.pop("dosimeter_id")
        raise Invalid(errors)
    set_actor(db.session, operator.id)
    return operator, values


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


@v1.post("/sessions")
def open_():
    """Open a session on the token's instrument."""
    instrument, body = g.instrument, _body()
    operator, values = _checked(body, lambda op, v: validate_opening(db.session, instrument, op, v))
    entry = open_session(db.session, instrument, operator, values, source=EntrySource.API)
    db.session.commit()
    return _created(entry)


@v1.post("/sessions/finished")
def finished():
    """Log a session that already ended."""
    instrument, body = g.instrument, _body()
    operator, values = _checked(body, lambda op, v: validate_finished(db.session, instrument, op, v))
    entry = log_finished_session(db.session, instrument, operator, values, source=EntrySource.API)
    db.session.commit()
    return _created(entry)


def _created(entry: InstrumentSession):
    """201 with the new session, and where it can be read."""
    return jsonify(as_json(entry)), 201, {"Location": url_for("api.v1.show", session_id=entry.id)}


@v1.get("/sessions/<int:session_id>")
def show(session_id: int):
    """One session of the token's instrument."""
    entry = db.session.get(InstrumentSession, session_id)
    if entry is None or entry.instrument_id != g.instrument.id:
        abort(404, f"No session {session_id} on this instrument.")
    return jsonify(as_json(entry))


@v1.post("/sessions/<int:session_id>/close")
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
    db.session.commit()
    return jsonify(as_json(entry))


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
    limit = query_int("limit", None, high=1000) if request.args.get("limit") else 100
    if limit is None:
        raise Invalid({"limit": "'limit' must be a whole number from 1 to 1000."})
    rows = find_sessions(db.session, instrument=g.instrument, start=bounds.get("from"),
                         end=bounds.get("to"), limit=limit)
    return jsonify({"instrument": g.instrument.name, "sessions": [as_json(s) for s in rows]})


@v1.get("/openapi.json")
def openapi():
    """The OpenAPI 3 description of this API."""
    return jsonify(document())
