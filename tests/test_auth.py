"""Password hashing and policy, session tokens, throttling."""

import hashlib

import pytest

from sitecheck import auth


@pytest.fixture(scope="module")
def stored_hash():
    # scrypt is slow by design; hash once for the module.
    return auth.hash_password("correct horse battery")


def test_passwords_are_hashed_with_scrypt(stored_hash):
    assert stored_hash.startswith("scrypt:")
    assert "correct horse battery" not in stored_hash
    assert auth.check_password(stored_hash, "correct horse battery")
    assert not auth.check_password(stored_hash, "correct horse battery ")
    assert not auth.check_password(stored_hash, "Correct horse battery")


def test_the_same_password_from_another_keyboard_still_matches():
    composed = "caf\u00e9 au lait 2026"
    decomposed = "cafe\u0301 au lait 2026"
    assert composed != decomposed
    assert auth.check_password(auth.hash_password(composed), decomposed)


def test_unknown_accounts_are_checked_against_a_dummy_hash(stored_hash):
    assert auth.verify_login(None, "correct horse battery") is False
    assert auth.verify_login(stored_hash, "correct horse battery") is True
    assert auth.verify_login(stored_hash, "wrong horse battery") is False


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
    assert problem in auth.password_problem(password, email="Ann.Smith@example.test")


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
    assert auth.password_problem(password) is None


def test_common_password_list_is_a_fair_size_and_long_enough_to_matter():
    assert len(auth.COMMON_PASSWORDS) >= 50
    assert len(set(auth.COMMON_PASSWORDS)) == len(auth.COMMON_PASSWORDS)
    assert all(len(p) >= auth.PASSWORD_MIN for p in auth.COMMON_PASSWORDS)


def test_session_tokens_are_random_and_only_their_hash_is_stored():
    first, second = auth.new_session_token(), auth.new_session_token()
    assert first.token != second.token
    assert len(first.token) >= 43  # 32 random bytes in URL-safe base64
    assert first.session_id == hashlib.sha256(first.token.encode()).hexdigest()
    assert auth.session_id_for(first.token) == first.session_id
    assert len(first.session_id) == 64 and first.token not in first.session_id


@pytest.mark.parametrize(
    ("failures", "delay"),
    [(0, 0), (1, 0), (4, 0), (5, 900), (6, 900), (50, 900)],
)
def test_throttle_delay(failures, delay):
    assert auth.throttle_delay(failures) == delay


def test_throttle_limits_can_be_set():
    assert auth.throttle_delay(2, limit=3, window_s=60) == 0
    assert auth.throttle_delay(3, limit=3, window_s=60) == 60
    with pytest.raises(ValueError):
        auth.throttle_delay(-1)
