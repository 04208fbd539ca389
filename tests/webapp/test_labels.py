"""One table of words per code, read in sentences as written and capitalised on pages by a filter."""
import enum
import importlib
import pkgutil

import pytest

import models
import webapp
from webapp.formatting import capfirst


def _label_tables() -> dict[type, dict[int, str]]:
    """Every module-level dict from one enum's members to words, by enum, each table once."""
    found: dict[type, dict[int, str]] = {}
    for package in (models, webapp):
        for info in pkgutil.walk_packages(package.__path__, package.__name__ + "."):
            for name, value in vars(importlib.import_module(info.name)).items():
                if not isinstance(value, dict) or len(value) < 2:
                    continue
                classes = {type(key) for key in value}
                words = all(isinstance(v, str) and not v.startswith("state-") for v in value.values())
                if len(classes) == 1 and issubclass(next(iter(classes)), enum.Enum) and words:
                    found.setdefault(classes.pop(), {})[id(value)] = f"{info.name}.{name}"
    return found


def test_no_enum_has_two_label_tables():
    tables = _label_tables()
    twice = {cls.__name__: sorted(names.values()) for cls, names in tables.items() if len(names) > 1}
    assert twice == {}


@pytest.mark.parametrize(("text", "shown"), [
    ("calendar quarter", "Calendar quarter"),
    ("whole body, Hp(10)", "Whole body, Hp(10)"),
    ("Hp(10) whole body", "Hp(10) whole body"),  # already starts with a capital: unchanged
    ("", ""),
])
def test_capfirst_raises_only_the_first_letter(text, shown):
    assert capfirst(text) == shown
