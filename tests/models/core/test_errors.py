"""Errors of several rules merged by field."""
import pytest

from models.core.errors import Invalid, errors_of


def _refuse(**errors):
    """A validator that refuses with the given errors, or passes when there are none."""
    def validate():
        if errors:
            raise Invalid(errors)
    return validate


@pytest.mark.parametrize(("validate", "expected"), [
    (_refuse(), {}),
    (_refuse(name="Enter a name."), {"name": "Enter a name."}),
    (_refuse(name="Enter a name.", kv="Too high."), {"name": "Enter a name.", "kv": "Too high."}),
])
def test_errors_of_returns_what_the_validator_refused(validate, expected):
    assert errors_of(validate) == expected


def test_other_errors_are_not_swallowed():
    def broken():
        raise KeyError("not a refusal")

    with pytest.raises(KeyError):
        errors_of(broken)
