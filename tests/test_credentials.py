"""Password hashing and policy, session tokens, throttling."""

import hashlib

import pytest

from sitecheck import credentials


@pytest.fixture(scope="module")
def stored_hash():
    # scrypt is slow by design; hash once for the module.
    return credentials.hash_password("correct horse battery")


def test_passwords_are_hashed_with_scrypt(stored_hash):
    assert stored_hash.startswith("scrypt:")
    assert "correct horse battery" not in stored_hash
    assert credentials.check_password(stored_hash, "correct horse battery")
    assert not credentials.check_password(stored_hash, "correct horse battery ")
    assert not credentials.check_password(stored_hash, "Correct horse battery")


def test_the_same_password_from_another_keyboard_still_matches():
    composed = "caf\u00e9 au lait 2026"
    decomposed = "cafe\u0301 au lait 2026"
    assert composed != decomposed
    assert credentials.check_password(credentials.hash_password(composed), decomposed)


def test_unknown_accounts_are_checked_against_a_dummy_hash(stored_hash):
    assert credentials.verify_login(None, "correct horse battery") is False
    assert credentials.verify_login(stored_hash, "correct horse battery") is True
    assert credentials.verify_login(stored_hash, "wrong horse battery") is False


@pytest.mark.parametrize(
    ("password", "problem"),
    [
        ("short", "at least 10"),
        ("123456789", "at least 10"),
        ("x" * 257, "at most 256"),
        ("1234567890", "first that anyone would try"),
        ("Password123", "first that anyone would try"),
        ("QWERTYUIOP", "first that anyone would try"),
        ("aaaaaaaaaaaa", "first that anyone would try"),
        ("ann.smith@example.test", "e-mail"),
    ],
)
def test_password_policy_refuses(password, problem):
    assert problem in credentials.password_problem(password, email="Ann.Smith@example.test")


@pytest.mark.parametrize(
    "password",
    [
        "tenletters",  # exactly the minimum, no digits or symbols needed
        "lowercase words only here",
        "ab" * 128,  # exactly the maximum
        "padstone on block wall 7",
        "ünïcödé pässwörd",
    ],
)
def test_password_policy_accepts(password):
    assert credentials.password_problem(password) is None


def test_common_password_list_is_a_fair_size_and_long_enough_to_matter():
    assert len(credentials.COMMON_PASSWORDS) >= 50
    assert len(set(credentials.COMMON_PASSWORDS)) == len(credentials.COMMON_PASSWORDS)
    assert all(len(p) >= credentials.PASSWORD_MIN for p in credentials.COMMON_PASSWORDS)


def test_session_tokens_are_random_and_only_their_hash_is_stored():
    first, second = credentials.new_session_token(), credentials.new_session_token()
    assert first.token != second.token
    assert len(first.token) >= 43  # 32 random bytes in URL-safe base64
    assert first.session_id == hashlib.sha256(first.token.encode()).hexdigest()
    assert credentials.session_id_for(first.token) == first.session_id
    assert len(first.session_id) == 64 and first.token not in first.session_id


RULE = credentials.ThrottleRule(free=5, first_wait_s=2, max_wait_s=900)


@pytest.mark.parametrize(
    ("failures", "since_s", "wait"),
    [
        (0, 0, 0),
        (4, 0, 0),  # the first five failures cost nothing
        (5, 0, 2),
        (5, 1.5, 1),  # counted from the last failure, rounded up
        (5, 2, 0),
        (6, 0, 4),  # doubling with each further failure
        (9, 0, 32),
        (13, 0, 512),
        (14, 0, 900),  # up to the most
        (10_000, 0, 900),  # a flood builds no huge number
        (10_000, 900, 0),  # and never locks: the wait runs out
    ],
)
def test_throttle_wait_grows_and_runs_out(failures, since_s, wait):
    assert credentials.throttle_wait(failures, since_s, RULE) == wait


def test_throttle_wait_refuses_a_negative_count():
    with pytest.raises(ValueError, match="negative"):
        credentials.throttle_wait(-1, 0, RULE)


@pytest.mark.parametrize(
    ("seconds", "words"),
    [(1, "1 second"), (2, "2 seconds"), (89, "89 seconds"), (90, "2 minutes"), (900, "15 minutes")],
)
def test_wait_words(seconds, words):
    assert credentials.wait_words(seconds) == words
