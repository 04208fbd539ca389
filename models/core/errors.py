"""The one error type that domain operations raise for bad input."""
from __future__ import annotations

from collections.abc import Callable


class Invalid(ValueError):
    """Input refused by a domain rule; `errors` maps each field name to its message."""

    def __init__(self, errors: dict[str, str]):
        super().__init__("; ".join(f"{k}: {v}" for k, v in errors.items()))
        self.errors = errors

    @classmethod
    def one(cls, field: str, message: str) -> Invalid:
        """An error about a single field."""
        return cls({field: message})


def errors_of(validate: Callable[[], object]) -> dict[str, str]:
    """The errors a validator raises, by field (empty when it passes), to merge with other rules' errors."""
    try:
        validate()
    except Invalid as error:
        return error.errors
    return {}
