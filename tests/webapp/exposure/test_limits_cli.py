"""`flask limits`, the default limit set of a new database, and the attention lines about the set."""
import pytest

from models.core.settings import lab_settings
from models.people.tables import Role
from tests.conftest import LAB_TODAY, base_config
from webapp import create_app
from webapp.extensions import db


@pytest.mark.parametrize("key, expected", [(None, "icrp103"), ("euratom2013", "euratom2013")])
def test_db_upgrade_on_a_new_database_installs_the_default_set(tmp_path, monkeypatch, key, expected):
    monkeypatch.delenv("LIMIT_SET", raising=False)
    extra = {} if key is None else {"LIMIT_SET": key}
    app = create_app(base_config(f"sqlite:///{tmp_path / 'new.sqlite'}", **extra))
    runner = app.test_cli_runner()
    result = runner.invoke(args=["db", "upgrade"])
    assert result.exit_code == 0, result.output
    assert "by default" in result.output
    with app.app_context():
        settings = lab_settings(db.session)
        assert (settings.limit_set.preset_key, settings.limit_set_by_default) == (expected, True)
        again = runner.invoke(args=["db", "upgrade"])
        assert again.exit_code == 0 and "installed" not in again.output
        listing = runner.invoke(args=["limits", "list"])
        assert f"* {expected}" in listing.output and "installed by default" in listing.output
        used = runner.invoke(args=["limits", "use", "cfr10_20", "--reason", "US licence"])
        assert used.exit_code == 0, used.output
        db.session.expire_all()
        settings = lab_settings(db.session)
        assert (settings.limit_set.preset_key, settings.limit_set_by_default) == ("cfr10_20", False)
        db.engine.dispose()


def test_an_unknown_default_set_is_refused_by_name(tmp_path):
    app = create_app(base_config(f"sqlite:///{tmp_path / 'new.sqlite'}", LIMIT_SET="nonsense"))
    result = app.test_cli_runner().invoke(args=["db", "upgrade"])
    assert result.exit_code == 1
    assert "LIMIT_SET" in result.output and "nonsense" in result.output
    with app.app_context():
        db.engine.dispose()


@pytest.mark.parametrize("args, message", [
    (["limits", "use", "nonsense", "--reason", "x"], "key: No preset or saved set is called 'nonsense'"),
    (["limits", "use", "icrp103", "--reason", "  "], "reason:"),
    (["limits", "use", "icrp103"], "--reason"),
])
def test_limits_use_refuses_with_the_field_named(app, args, message):
    result = app.test_cli_runner().invoke(args=args)
    assert result.exit_code != 0 and message in result.output


def test_the_default_set_is_the_first_attention_line_until_confirmed(app, make_person, login):
    from models.exposure.rules_ops import install_default

    install_default(db.session, lab_settings(db.session), "icrp103", LAB_TODAY)
    db.session.commit()
    officer = make_person("rso", roles=(Role.SAFETY_OFFICER,))
    make_person("tom", name="Tom Young", category="trainee")
    from webapp.slots import attention

    with app.test_request_context():
        lines = attention.collect()
    assert "installed by default" in lines[0].text
    # ICRP 103 Table 6 has no limit for apprentices: the trainee is named with what to do.
    assert any("no effective-dose limit for trainee" in line.text and "Tom Young" in line.text
               for line in lines)
    client = login(officer)
    confirmed = client.post("/exposure/limits/choose", data={
        "limit_set_id": lab_settings(db.session).limit_set_id, "reason": "confirmed for this lab"})
    assert confirmed.status_code == 302
    db.session.expire_all()
    assert lab_settings(db.session).limit_set_by_default is False
    with app.test_request_context():
        assert not any("installed by default" in line.text for line in attention.collect())


def test_limits_policies_changes_only_what_is_given(app):
    runner = app.test_cli_runner()
    result = runner.invoke(args=["limits", "policies", "--mrd", "half", "--lens-source", "hp10",
                                 "--reason", "service advice"])
    assert result.exit_code == 0, result.output
    db.session.expire_all()
    settings = lab_settings(db.session)
    assert (settings.proration, settings.mrd_policy, settings.lens_source) == ("prorate_days", "half", "hp10")
    refused = runner.invoke(args=["limits", "policies", "--mrd", "double", "--reason", "x"])
    assert refused.exit_code != 0 and "--mrd" in refused.output


def test_changing_the_set_raises_investigations_at_once(app, make_person, make_dose, monkeypatch):
    from datetime import date

    import sqlalchemy as sa

    from models.exposure.tables import Investigation

    monkeypatch.setattr("webapp.exposure.limits_cli.lab_today", lambda: date(2026, 11, 15))
    ada = make_person("ada")
    # 1.5 mSv Hp(10) and a nil Hp(0.07) in October; no limit set yet, so nothing is raised.
    october = {"wear_start": date(2026, 10, 1), "wear_end": date(2026, 10, 31)}
    make_dose(ada, value=1.5, **october)
    make_dose(ada, value=0.0, quantity="Hp(0.07)", **october)
    assert db.session.scalar(sa.select(sa.func.count()).select_from(Investigation)) == 0
    result = app.test_cli_runner().invoke(args=["limits", "use", "icrp103", "--reason", "set-up"])
    assert result.exit_code == 0, result.output
    # common practice: 1.25 mSv Hp(10) in a quarter is level I (REFERENCE.md, investigation levels)
    raised = db.session.scalars(sa.select(Investigation)).all()
    assert [(i.series, i.period, i.level) for i in raised] == [("effective", "quarter", "level_1")]
    assert "1 new investigation" in result.output
