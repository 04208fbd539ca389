"""API v1 endpoints: open, close, log and list the sessions of the token's instrument."""
from __future__ import annotations

import math
from datetime import UTC, datetime
from functools import wraps

import sqlalchemy as sa
from flask import Response, abort, g, json, jsonify, request, url_for
from werkzeug.exceptions import HTTPException

from models.audit.audit_ops import set_actor
from models.core.base import utcnow
from models.core.bounds import date_in_range
from models.core.errors import Invalid, errors_of
from models.doses.tables import Dosimeter
from models.due.start_ops import start_session, validate_starting
from models.instruments import idempotency_ops
from models.instruments.token_ops import instrument_for_token, token_hash
from models.people.person_ops import find_person
from models.people.tables import Person
from models.sessions.session_ops import (
    MAX_DOSIMETERS,
    TEXT_LIMITS,
    close_session,
    figures,
    find_sessions,
    log_finished_session,
    validate_finished,
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
    values["dosimeter_ids"] = []
    serials, errors_key = _serials(body)
    if serials is None:
        errors[errors_key] = f"'{errors_key}' must be a serial, or a list of up to 6 serials."
    elif operator is not None:
        for serial in serials:
            dosimeter = db.session.scalar(sa.select(Dosimeter).where(Dosimeter.serial == serial))
            if dosimeter is None:
                errors[errors_key] = f"No dosimeter with serial '{serial}'."
                break
            values["dosimeter_ids"].append(dosimeter.id)
    values["supervisor_id"] = None
    supervisor = body.get("supervisor")
    if supervisor is not None:
        person = find_person(db.session, supervisor.strip()) if _plain_name(supervisor) else None
        if person is None:
            errors["supervisor"] = "'supervisor' must be the login of a person in the logbook."
        else:
            values["supervisor_id"] = person.id
    return values, errors


def _serials(body: dict) -> tuple[list[str] | None, str]:
    """The dosimeter serials given as 'dosimeters' (a list) or 'dosimeter' (one), and the key used."""
    if "dosimeters" in body:
        given = body["dosimeters"]
        ok = (isinstance(given, list) and len(given) <= MAX_DOSIMETERS
              and all(_plain_name(s) and 0 < len(s) <= 64 for s in given))
        return (given if ok else None), "dosimeters"
    given = body.get("dosimeter")
    if given is None:
        return [], "dosimeter"
    ok = _plain_name(given) and 0 < len(given) <= 64
    return ([given] if ok else None), "dosimeter"


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


def _api_names(errors: dict, dosimeter_key: str) -> dict:
    """The form calls these fields by id; the API names dosimeters by serial, people by login."""
    names = {"dosimeter_ids": dosimeter_key, "supervisor_id": "supervisor"}
    return {names.get(key, key): message for key, message in errors.items()}


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
        # The form calls these fields by id; the API names dosimeters by serial, people by login.
        raise Invalid(_api_names(error.errors, _serials(body)[1])) from error


def as_json(entry: InstrumentSession) -> dict:
    """A session and its derived figures as the API shows them."""
    f = figures(entry)
    # By serial, as the relationship loads them, also before the new row is read back.
    serials = sorted(d.serial for d in entry.dosimeters)
    return {
        "id": entry.id, "instrument": entry.instrument.name, "operator": entry.operator.login,
        "supervisor": entry.supervisor.login if entry.supervisor else None,
        "started_at": entry.started_at.isoformat(),
        "ended_at": entry.ended_at.isoformat() if entry.ended_at else None,
        "kv": entry.kv, "ma": entry.ma, "beam_on_minutes": entry.beam_on_minutes,
        "purpose": entry.purpose, "pre_use_checks_confirmed": entry.pre_use_checks_confirmed,
        "dosimeter_worn": entry.dosimeter_worn, "dosimeters": serials,
        # The first serial alone, for instrument PCs written when a session had one dosimeter.
        "dosimeter": serials[0] if serials else None,
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


def _answer(payload: dict, status: int, headers: dict | None = None):
    """Commit the write together with the answer kept for its Idempotency-Key, and send it."""
    if g.get("idempotency_claim") is not None:
        idempotency_ops.settle(db.session, g.idempotency_claim, status, json.dumps(payload))
    db.session.commit()
    return jsonify(payload), status, headers or {}


@v1.post("/sessions")
@idempotent
def open_():
    """Open a session on the token's instrument."""
    instrument, body = g.instrument, _body()
    now = utcnow()
    entry = _written(body, lambda op, v: validate_starting(db.session, instrument, op, v, now),
                     lambda op, v: start_session(db.session, instrument, op, v, source=EntrySource.API,
                                                 now=now))
    return _answer(as_json(entry), 201, _where(entry))


@v1.post("/sessions/finished")
@idempotent
def finished():
    """Log a session that already ended."""
    instrument, body = g.instrument, _body()
    entry = _written(body, lambda op, v: validate_finished(db.session, instrument, op, v),
                     lambda op, v: log_finished_session(db.session, instrument, op, v, source=EntrySource.API))
    return _answer(as_json(entry), 201, _where(entry))


def _where(entry: InstrumentSession) -> dict:
    """The Location header of a new session: where it can be read."""
    return {"Location": url_for("api.v1.show", session_id=entry.id)}


@v1.get("/sessions/<int:session_id>")
def show(session_id: int):
    """One session of the token's instrument."""
    entry = db.session.get(InstrumentSession, session_id)
    if entry is None or entry.instrument_id != g.instrument.id:
        abort(404, f"No session {session_id} on this instrument.")
    return jsonify(as_json(entry))


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
