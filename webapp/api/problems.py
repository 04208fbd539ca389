"""Error responses as application/problem+json (RFC 9457)."""
from __future__ import annotations

from flask import Response, json

MEDIA_TYPE = "application/problem+json"
# Every answer under this path is JSON, errors included.
API_PREFIX = "/api/v1/"


def problem(status: int, title: str, detail: str, errors: dict[str, str] | None = None,
            headers: dict[str, str] | None = None) -> Response:
    """A problem document; `errors` names each refused field with its message."""
    body = {"type": "about:blank", "title": title, "status": status, "detail": detail}
    if errors:
        body["errors"] = errors
    response = Response(json.dumps(body), status=status, mimetype=MEDIA_TYPE)
    response.headers.update(headers or {})
    return response
