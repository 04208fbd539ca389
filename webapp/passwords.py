"""Passwords: one place that chooses the hashing scheme and judges a new password."""
from __future__ import annotations

import re

from werkzeug.security import check_password_hash, generate_password_hash
from wtforms.validators import ValidationError
from zxcvbn import zxcvbn

MIN_LENGTH = 10
MAX_LENGTH = 200
# zxcvbn scores 0-4; 3 means "safely unguessable: moderate protection from offline attacks".
MIN_SCORE = 3


def hash_password(password: str) -> str:
    """A salted scrypt hash of the password."""
    return generate_password_hash(password, method="scrypt")


def password_matches(password_hash: str | None, password: str) -> bool:
    """True when the password matches the stored hash."""
    return bool(password_hash) and check_password_hash(password_hash, password)


def password_problem(password: str, *about_person: str) -> str | None:
    """Why a new password is refused (too short, too long, easy to guess), or None when it will do.

    `about_person` (login, name, e-mail) counts as guessable too.
    """
    if len(password) < MIN_LENGTH:
        return f"Use at least {MIN_LENGTH} characters."
    if len(password) > MAX_LENGTH:
        return f"Use at most {MAX_LENGTH} characters."
    # Whole and in parts: "Mara Winter" makes both "mara" and "winter" guessable.
    words = {w.lower() for p in about_person for w in (p, *re.split(r"[\s@._-]+", p)) if w}
    verdict = zxcvbn(password[:MAX_LENGTH], user_inputs=sorted(words))
    if verdict["score"] < MIN_SCORE:
        hint = verdict["feedback"]["warning"] or "It is too easy to guess."
        return f"{hint} Choose a longer password, e.g. a few unrelated words.".strip()
    return None


def strong_password(about_person):
    """A form validator refusing a weak new password; `about_person(form)` lists guessable words."""

    def check(form, field) -> None:
        problem = password_problem(field.data or "", *about_person(form))
        if problem:
            raise ValidationError(problem)

    return check
