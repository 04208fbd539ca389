"""Configuration read from the environment."""
from __future__ import annotations

import os
import secrets
from zoneinfo import ZoneInfo, ZoneInfoNotFoundError


def _flag(name: str, default: bool = False) -> bool:
    """Read a yes/no environment variable."""
    value = os.environ.get(name)
    if value is None:
        return default
    return value.strip().lower() in {"1", "true", "yes", "on"}


def _zone(name: str) -> str:
    """Read a time zone name; an unknown one stops the app here, not every page later."""
    zone = os.environ.get(name) or "UTC"
    try:
        ZoneInfo(zone)
    except (ValueError, ZoneInfoNotFoundError):
        raise ValueError(f"{name}: unknown time zone {zone!r} (use a name such as Europe/Berlin)") from None
    return zone


def from_environment(instance_path: str) -> dict:
    """Settings for the app, each overridable by an environment variable of the same name."""
    database_url = os.environ.get("DATABASE_URL") or (
        f"sqlite:///{os.path.join(instance_path, 'logbook.sqlite')}"
    )
    if database_url.startswith("postgresql://"):
        # psycopg 3 is the driver; plain postgresql:// would ask for psycopg2.
        database_url = "postgresql+psycopg://" + database_url.removeprefix("postgresql://")
    return {
        "SECRET_KEY": os.environ.get("SECRET_KEY") or _instance_secret(instance_path, "secret_key"),
        "AUDIT_KEY": os.environ.get("AUDIT_KEY") or _instance_secret(instance_path, "audit_key"),
        "SQLALCHEMY_DATABASE_URI": database_url,
        "MAIL_SERVER": os.environ.get("MAIL_SERVER", ""),
        "MAIL_PORT": int(os.environ.get("MAIL_PORT", "25")),
        "MAIL_USERNAME": os.environ.get("MAIL_USERNAME", ""),
        "MAIL_PASSWORD": os.environ.get("MAIL_PASSWORD", ""),
        "MAIL_USE_TLS": _flag("MAIL_USE_TLS"),
        "MAIL_FROM": os.environ.get("MAIL_FROM", "logbook@localhost"),
        # Read once, by the command that creates a new database; the Settings page rules afterwards.
        "LAB_TIMEZONE": _zone("LAB_TIMEZONE"),
        "MAIL_TIMEOUT": float(os.environ.get("MAIL_TIMEOUT", "10")),
        "BASE_URL": os.environ.get("BASE_URL", "http://127.0.0.1:5000"),
        # The largest request accepted, uploads included; a dosimetry report is far smaller.
        "MAX_CONTENT_LENGTH": int(os.environ.get("MAX_CONTENT_LENGTH", str(10 * 1024 * 1024))),
        "RATELIMIT_ENABLED": _flag("RATELIMIT_ENABLED", True),
        "RATELIMIT_STORAGE_URI": os.environ.get("RATELIMIT_STORAGE_URI", "memory://"),
        "SESSION_COOKIE_HTTPONLY": True,
        "SESSION_COOKIE_SAMESITE": "Lax",
        "SESSION_COOKIE_SECURE": _flag("SESSION_COOKIE_SECURE"),
        # The preset a new database gets on `flask db upgrade`, marked as installed by default.
        "LIMIT_SET": os.environ.get("LIMIT_SET", "icrp103"),
        # Reverse proxies in front of the app whose X-Forwarded-For/-Proto to believe (0: none), so
        # login throttling counts the client's address, not the proxy's.
        "PROXY_HOPS": int(os.environ.get("PROXY_HOPS", "0")),
    }


def upload_limit_text(config: dict) -> str:
    """The request size limit as people read it, e.g. "10 MB"."""
    return f"{config['MAX_CONTENT_LENGTH'] / (1024 * 1024):g} MB"


def _instance_secret(instance_path: str, name: str) -> str:
    """A random key kept in a file in instance/, so it survives restarts without configuration."""
    path = os.path.join(instance_path, name)
    if os.path.exists(path):
        with open(path, encoding="ascii") as handle:
            return handle.read().strip()
    os.makedirs(instance_path, exist_ok=True)
    key = secrets.token_hex(32)
    with open(os.open(path, os.O_WRONLY | os.O_CREAT, 0o600), "w", encoding="ascii") as handle:
        handle.write(key)
    return key
