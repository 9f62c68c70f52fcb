"""Server-side browser sessions (polarsvc.web.sessions)."""

from __future__ import annotations

from concurrent.futures import ThreadPoolExecutor

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from polarsvc.web.sessions import SESSION_LIFETIME_S, WebSessions, tokens_match


class FakeClock:
    def __init__(self) -> None:
        self.now = 1000.0

    def __call__(self) -> float:
        return self.now


def test_a_session_maps_its_id_to_the_secret_and_a_csrf_token():
    sessions = WebSessions()
    session_id, csrf = sessions.create("psv_secret")
    assert sessions.token_for(session_id) == "psv_secret"
    assert sessions.csrf_for(session_id) == csrf
    assert sessions.check_csrf(session_id, csrf)
    assert not sessions.check_csrf(session_id, csrf + "x")
    assert not sessions.check_csrf(session_id, None)
    assert not sessions.check_csrf(None, csrf)


def test_ids_and_csrf_tokens_are_long_random_and_distinct():
    sessions = WebSessions()
    made = [sessions.create("psv_secret") for _ in range(50)]
    values = [value for pair in made for value in pair]
    assert len(set(values)) == len(values)
    # 32 random bytes in URL-safe base64: 43 characters (Python docs, secrets.token_urlsafe)
    assert all(len(value) >= 43 for value in values)


def test_end_forgets_the_session():
    sessions = WebSessions()
    session_id, _ = sessions.create("psv_secret")
    sessions.end(session_id)
    assert sessions.token_for(session_id) is None
    assert sessions.csrf_for(session_id) is None
    sessions.end(session_id)  # ending twice is harmless
    sessions.end(None)


def test_sessions_expire_after_their_lifetime():
    clock = FakeClock()
    sessions = WebSessions(clock=clock)
    session_id, _ = sessions.create("psv_secret")
    clock.now += SESSION_LIFETIME_S - 1.0
    assert sessions.token_for(session_id) == "psv_secret"
    clock.now += 1.0
    assert sessions.token_for(session_id) is None
    assert len(sessions) == 0


def test_the_session_closest_to_expiry_goes_first_beyond_the_bound():
    clock = FakeClock()
    sessions = WebSessions(clock=clock, max_sessions=2)
    first, _ = sessions.create("a")
    clock.now += 1
    second, _ = sessions.create("b")
    clock.now += 1
    third, _ = sessions.create("c")
    assert sessions.token_for(first) is None
    assert sessions.token_for(second) == "b"
    assert sessions.token_for(third) == "c"


def test_bad_arguments_are_refused():
    with pytest.raises(ValueError, match="lifetime_s"):
        WebSessions(lifetime_s=0)
    with pytest.raises(ValueError, match="max_sessions"):
        WebSessions(max_sessions=0)
    with pytest.raises(ValueError, match="token_secret"):
        WebSessions().create("")


def test_concurrent_use_loses_nothing():
    sessions = WebSessions()

    def work(index: int) -> bool:
        session_id, csrf = sessions.create(f"psv_{index}")
        ok = sessions.token_for(session_id) == f"psv_{index}" and sessions.check_csrf(
            session_id, csrf
        )
        if index % 2:
            sessions.end(session_id)
        return ok

    with ThreadPoolExecutor(max_workers=8) as pool:
        results = list(pool.map(work, range(400)))
    assert all(results)
    assert len(sessions) == 200


def test_tokens_match_needs_two_equal_non_empty_tokens():
    assert tokens_match("abc", "abc")
    assert not tokens_match("abc", "abd")
    assert not tokens_match("", "")
    assert not tokens_match(None, "abc")


@settings(max_examples=50, deadline=None)
@given(secret=st.text(min_size=1, max_size=80))
def test_the_session_id_never_carries_the_secret(secret):
    sessions = WebSessions()
    session_id, csrf = sessions.create(secret)
    assert sessions.token_for(session_id) == secret
    if len(secret) >= 8:  # a shorter string could turn up by chance in random text
        assert secret not in session_id
        assert secret not in csrf
