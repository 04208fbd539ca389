"""Security headers on every response, and no caching of anything but the static files."""
from __future__ import annotations

from flask import Flask, Response, request

# No inline script or style anywhere: scripts and styles come from /static only.
PAGE_POLICY = ("default-src 'self'; script-src 'self'; style-src 'self'; img-src 'self' data:; "
               "object-src 'none'; base-uri 'none'; form-action 'self'; frame-ancestors 'none'")
# The dose chart is a matplotlib SVG shown through <img>: its own inline styles, never a script.
SVG_POLICY = "default-src 'none'; style-src 'unsafe-inline'; frame-ancestors 'none'"
HSTS = "max-age=31536000"


def security_headers(response: Response, secure_cookies: bool, static: bool) -> None:
    """Set the headers every response carries."""
    svg = response.mimetype == "image/svg+xml"
    response.headers["Content-Security-Policy"] = SVG_POLICY if svg else PAGE_POLICY
    response.headers["X-Content-Type-Options"] = "nosniff"
    response.headers["X-Frame-Options"] = "DENY"
    response.headers["Referrer-Policy"] = "same-origin"
    if secure_cookies:
        response.headers["Strict-Transport-Security"] = HSTS
    if not static:
        # Pages, exports, feeds and API answers may carry personal data: keep them out of caches.
        response.headers["Cache-Control"] = "no-store"


def install(app: Flask) -> None:
    """Add the headers to every response the app sends."""

    @app.after_request
    def _headers(response: Response) -> Response:
        security_headers(response, app.config["SESSION_COOKIE_SECURE"], request.endpoint == "static")
        return response
