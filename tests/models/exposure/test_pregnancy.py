"""Pregnancy declarations: one in force at a time, withdrawn or ended, never in the future."""
from datetime import date

import pytest

from models.core.errors import Invalid
from models.exposure.pregnancy_ops import (
    ENDED,
    WITHDRAWN,
    declare,
    end_declaration,
    open_declaration,
    open_declarations,
)

TODAY = date(2026, 5, 1)


def test_declare_and_withdraw(session, make_person):
    ann = make_person("ann")
    declaration = declare(session, ann.id, date(2026, 3, 2), today=TODAY)
    assert open_declaration(session, ann.id) is declaration
    with pytest.raises(Invalid, match="already in force"):
        declare(session, ann.id, date(2026, 4, 1), today=TODAY)
    end_declaration(session, declaration, date(2026, 4, 1), WITHDRAWN, today=TODAY)
    assert open_declaration(session, ann.id) is None and declaration.end_reason == "withdrawn"
    with pytest.raises(Invalid, match="already ended"):
        end_declaration(session, declaration, date(2026, 4, 2), ENDED, today=TODAY)
    with pytest.raises(Invalid, match="earlier declaration"):
        declare(session, ann.id, date(2026, 3, 30), today=TODAY)
    assert declare(session, ann.id, date(2026, 4, 20), today=TODAY) in open_declarations(session)


@pytest.mark.parametrize("declared, ended, message", [
    (date(2026, 5, 2), None, "future"),
    (None, None, "Enter the date"),
    (date(2026, 3, 1), date(2026, 2, 1), "before the declaration"),
    (date(2026, 3, 1), date(2026, 6, 1), "future"),
])
def test_dates_are_checked(session, make_person, declared, ended, message):
    ann = make_person("ann")
    with pytest.raises(Invalid, match=message):
        declaration = declare(session, ann.id, declared, today=TODAY)
        end_declaration(session, declaration, ended, ENDED, today=TODAY)
