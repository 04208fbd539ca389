"""Password hashing: one place that chooses the scheme."""
from werkzeug.security import check_password_hash, generate_password_hash

MIN_LENGTH = 10


def hash_password(password: str) -> str:
    """A salted scrypt hash of the password."""
    return generate_password_hash(password, method="scrypt")


def password_matches(password_hash: str | None, password: str) -> bool:
    """True when the password matches the stored hash."""
    return bool(password_hash) and check_password_hash(password_hash, password)
