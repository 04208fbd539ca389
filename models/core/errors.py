"""The one error type that domain operations raise for bad input."""
from __future__ import annotations


class Invalid(ValueError):
    """Input refused by a domain rule; `errors` maps each field name to its message."""

    def __init__(self, errors: dict[str, str]):
        super().__init__("; ".join(f"{k}: {v}" for k, v in errors.items()))
        self.errors = errors

    @classmethod
    def one(cls, field: str, message: str) -> Invalid:
        """An error about a single field."""
        return cls({field: message})
