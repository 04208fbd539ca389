"""API tokens are shown once and kept only as their SHA-256 hash."""
import hashlib

from models.instruments.token_ops import PREFIX, create_token, instrument_for_token, revoke_token


def test_token_is_stored_hashed_and_stops_when_revoked(session, make_instrument):
    instrument = make_instrument()
    row, token = create_token(session, instrument)
    assert token.startswith(PREFIX) and len(token) > 40
    assert row.token_hash == hashlib.sha256(token.encode()).hexdigest()
    assert instrument_for_token(session, token) is instrument
    assert instrument_for_token(session, token + "x") is None
    assert instrument_for_token(session, "") is None
    revoke_token(session, row)
    assert instrument_for_token(session, token) is None
