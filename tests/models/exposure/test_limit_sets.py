"""Presets stored in the database read back exactly as shipped."""
import pytest

from models.core.errors import Invalid
from models.exposure import presets
from models.exposure.limit_set_ops import as_rules, copy_limit_set, install_preset


@pytest.mark.parametrize("key", [p.key for p in presets.PRESETS])
def test_installed_preset_round_trips(session, key):
    stored = install_preset(session, key)
    assert as_rules(stored) == presets.preset(key)
    assert install_preset(session, key) is stored


def test_copy_is_editable_and_named(session):
    original = install_preset(session, "icrp103")
    copy = copy_limit_set(session, original, "Our lab rules")
    assert copy.id != original.id and copy.preset_key is None
    assert len(copy.rules) == len(original.rules)
    with pytest.raises(Invalid):
        copy_limit_set(session, original, "Our lab rules")


def test_unknown_preset_is_refused(session):
    with pytest.raises(Invalid):
        install_preset(session, "nonsense")
