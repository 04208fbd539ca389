"""The OpenAPI 3 description of API v1, served at /api/v1/openapi.json."""
from __future__ import annotations

_TIME = {"type": "string", "format": "date-time",
         "description": "ISO 8601 with an offset, e.g. 2026-03-01T09:30:00Z"}

_ENTRY = {
    "type": "object",
    "required": ["operator", "kv", "ma", "pre_use_checks_confirmed"],
    "properties": {
        "operator": {"type": "string", "description": "Login of the person at the instrument."},
        "supervisor": {"type": "string", "description": "Login of the supervising person; required when the operator is authorised on the instrument only as supervised, and that person must be independently authorised on it."},
        "kv": {"type": "number", "minimum": 0, "exclusiveMinimum": True, "description": "Tube voltage, kV; at most the rating."},
        "ma": {"type": "number", "minimum": 0, "exclusiveMinimum": True, "description": "Tube current, mA; at most the rating; kV x mA at most the rated power."},
        "purpose": {"type": "string", "maxLength": 300},
        "pre_use_checks_confirmed": {"type": "boolean", "description": "Warning light and shutter indicators seen working; must be true."},
        "dosimeter_worn": {"type": "boolean"},
        "dosimeters": {"type": "array", "maxItems": 6, "items": {"type": "string"}, "description": "Serials of the operator's dosimeters worn (whole body, rings)."},
        "dosimeter": {"type": "string", "description": "Serial of one dosimeter; use 'dosimeters' for several."},
        "alignment": {"type": "boolean"},
        "configuration_changed": {"type": "boolean"},
        "configuration_change": {"type": "string", "maxLength": 5000,
                                 "description": "Required when configuration_changed is true."},
        "notes": {"type": "string", "maxLength": 5000},
        "caution_acknowledged": {"type": "boolean", "description": "Required true for alignment work or under an active bypass permit: the operator read the caution about the primary beam and ring dosimetry."},
        "started_at": {**_TIME, "description": "Defaults to now when opening; not in the future."},
    },
}

_FINISHED = {
    **_ENTRY,
    "required": [*_ENTRY["required"], "started_at", "ended_at"],
    "properties": {**_ENTRY["properties"], "ended_at": {**_TIME, "description": "After the start, not in the future."},
                   "beam_on_minutes": {"type": "number", "minimum": 0, "description": "At most the session's length; defaults to it."}},
}

_CLOSE = {"type": "object", "properties": {
    "ended_at": {**_TIME, "description": "Defaults to now."},
    "beam_on_minutes": {"type": "number", "minimum": 0, "description": "Defaults to the session's length."}}}

_SESSION = {"type": "object", "properties": {
    "id": {"type": "integer"}, "instrument": {"type": "string"}, "operator": {"type": "string"},
    "supervisor": {"type": "string", "nullable": True},
    "started_at": _TIME, "ended_at": {**_TIME, "nullable": True},
    "kv": {"type": "number"}, "ma": {"type": "number"}, "beam_on_minutes": {"type": "number", "nullable": True},
    "purpose": {"type": "string"}, "pre_use_checks_confirmed": {"type": "boolean"},
    "dosimeter_worn": {"type": "boolean"}, "dosimeters": {"type": "array", "items": {"type": "string"}},
    "dosimeter": {"type": "string", "nullable": True, "description": "The first of 'dosimeters'."},
    "alignment": {"type": "boolean"}, "configuration_changed": {"type": "boolean"},
    "configuration_change": {"type": "string", "nullable": True}, "notes": {"type": "string", "nullable": True},
    "bypass_permit_id": {"type": "integer", "nullable": True, "description": "Set when a bypass permit was active at the start."},
    "source": {"type": "string", "enum": ["form", "api", "import"]},
    "figures": {"type": "object", "properties": {
        "power_w": {"type": "number"}, "energy_kwh": {"type": "number", "nullable": True},
        "max_photon_energy_kev": {"type": "number"}, "lambda_min_angstrom": {"type": "number"},
        "k_edge_kev": {"type": "number", "nullable": True}, "k_lines_excited": {"type": "boolean", "nullable": True},
        "k_lines_note": {"type": "string", "nullable": True}}},
}}

_PROBLEM = {"type": "object", "description": "RFC 9457 problem details.", "properties": {
    "type": {"type": "string"}, "title": {"type": "string"}, "status": {"type": "integer"},
    "detail": {"type": "string"},
    "errors": {"type": "object", "additionalProperties": {"type": "string"},
               "description": "Each refused field with its message."}}}


def _problem(description: str) -> dict:
    """A response carrying a problem document."""
    return {"description": description,
            "content": {"application/problem+json": {"schema": {"$ref": "#/components/schemas/Problem"}}}}


def _json(description: str, schema: dict) -> dict:
    """A JSON response."""
    return {"description": description, "content": {"application/json": {"schema": schema}}}


def _body(ref: str) -> dict:
    """A required JSON request body."""
    return {"required": True, "content": {"application/json": {"schema": {"$ref": ref}}}}


_ERRORS = {"401": _problem("Missing, unknown or revoked token."),
           "422": _problem("Refused by a rule; nothing written."),
           "429": _problem("Too many requests from this token."),
           "default": _problem("Any other error (404, 405, 413, 500...), always as a problem document.")}
_POST_ERRORS = {**_ERRORS, "400": _problem("Not a JSON object, not valid JSON, or nested too deeply."),
                "413": _problem("Body larger than 64 KiB.")}


def _created(description: str) -> dict:
    """201 with the new session and a Location header naming it."""
    return {**_json(description, {"$ref": "#/components/schemas/Session"}),
            "headers": {"Location": {"description": "Where the new session can be read.",
                                     "schema": {"type": "string"}}}}
_SESSION_REF = {"$ref": "#/components/schemas/Session"}
_IDEMPOTENCY_KEY = {
    "name": "Idempotency-Key", "in": "header", "required": False,
    "schema": {"type": "string", "minLength": 1, "maxLength": 255},
    "description": "A key chosen by the PC for this request (a UUID, say). A retry with the same key "
                   "and the same body gets the first answer (header Idempotent-Replayed) and writes "
                   "nothing; the same key with another body is refused (422). Refusals are not kept."}


def document() -> dict:
    """The whole OpenAPI document."""
    return {
        "openapi": "3.0.3",
        "info": {"title": "X-ray safety logbook API", "version": "1",
                 "description": "For instrument PCs: each token belongs to one instrument. "
                                "The same rules apply as in the browser forms."},
        "servers": [{"url": "/api/v1"}],
        "security": [{"bearer": []}],
        "paths": {
            "/sessions": {
                "get": {"summary": "Sessions of the token's instrument, newest first",
                        "parameters": [
                            {"name": "from", "in": "query", "schema": _TIME},
                            {"name": "to", "in": "query", "schema": _TIME},
                            {"name": "limit", "in": "query", "schema": {"type": "integer", "minimum": 1, "maximum": 1000, "default": 100}}],
                        "responses": {"200": _json("Sessions", {"type": "object", "properties": {
                            "instrument": {"type": "string"}, "sessions": {"type": "array", "items": _SESSION_REF}}}),
                            **_ERRORS}},
                "post": {"summary": "Open a session", "parameters": [_IDEMPOTENCY_KEY], "requestBody": _body("#/components/schemas/OpenSession"),
                         "responses": {"201": _created("Opened"), **_POST_ERRORS}},
            },
            "/sessions/finished": {
                "post": {"summary": "Log a session that already ended", "parameters": [_IDEMPOTENCY_KEY],
                         "requestBody": _body("#/components/schemas/FinishedSession"),
                         "responses": {"201": _created("Logged"), **_POST_ERRORS}},
            },
            "/sessions/{session_id}/close": {
                "post": {"summary": "End an open session",
                         "parameters": [{"name": "session_id", "in": "path", "required": True, "schema": {"type": "integer"}},
                                        _IDEMPOTENCY_KEY],
                         "requestBody": _body("#/components/schemas/CloseSession"),
                         "responses": {"200": _json("Ended", _SESSION_REF), "404": _problem("No such session on this instrument."), **_POST_ERRORS}},
            },
            "/sessions/{session_id}": {
                "get": {"summary": "One session of the token's instrument",
                        "parameters": [{"name": "session_id", "in": "path", "required": True, "schema": {"type": "integer"}}],
                        "responses": {"200": _json("The session", _SESSION_REF), "404": _problem("No such session on this instrument."), **_ERRORS}},
            },
            "/openapi.json": {
                "get": {"summary": "This document", "security": [],
                        "responses": {"200": {"description": "OpenAPI 3 document", "content": {"application/json": {}}}}},
            },
        },
        "components": {
            "securitySchemes": {"bearer": {"type": "http", "scheme": "bearer",
                                           "description": "Token made by an admin or `flask instruments token NAME`."}},
            "schemas": {"OpenSession": _ENTRY, "FinishedSession": _FINISHED, "CloseSession": _CLOSE,
                        "Session": _SESSION, "Problem": _PROBLEM},
        },
    }
