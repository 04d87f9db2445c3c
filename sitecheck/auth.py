"""Account primitives: password hashing and policy, session tokens, sign-in throttling.

No Flask here: the sign-in views call these and ``sitecheck.store``.
"""

import functools
import hashlib
import secrets
import unicodedata
from typing import NamedTuple
from urllib.parse import unquote, urlsplit

from werkzeug.security import check_password_hash, generate_password_hash

PASSWORD_MIN = 10
PASSWORD_MAX = 256
HASH_METHOD = "scrypt"

THROTTLE_LIMIT = 5
THROTTLE_WINDOW_S = 15 * 60

# Passwords people pick first. Length alone already refuses the shorter ones; the list is for
# those long enough to pass it. Compared without case.
COMMON_PASSWORDS = (
    "0000000000",
    "0123456789",
    "0987654321",
    "1111111111",
    "1234512345",
    "1234567890",
    "12345678910",
    "123456789a",
    "1234567890a",
    "123123123123",
    "987654321a",
    "1q2w3e4r5t",
    "1q2w3e4r5t6y",
    "q1w2e3r4t5",
    "1qaz2wsx3edc",
    "qazwsxedc123",
    "qwertyuiop",
    "qwerty1234",
    "qwerty12345",
    "qwerty123456",
    "asdfghjkl1",
    "zxcvbnm123",
    "abc1234567",
    "abcd123456",
    "abcdefghij",
    "password12",
    "password123",
    "password1234",
    "password!1",
    "passw0rd123",
    "p@ssw0rd123",
    "iloveyou12",
    "iloveyou123",
    "letmein123",
    "welcome123",
    "welcome1234",
    "changeme123",
    "administrator",
    "admin12345",
    "admin123456",
    "trustno1234",
    "sunshine123",
    "football123",
    "baseball123",
    "monkey12345",
    "dragon12345",
    "princess123",
    "superman123",
    "starwars123",
    "michael123",
    "construction",
    "construction1",
    "building123",
    "engineer123",
    "inspector123",
    "contractor1",
    "sitecheck123",
    "padstone123",
    "bearing123",
)
_COMMON = frozenset(p.casefold() for p in COMMON_PASSWORDS)


class SessionToken(NamedTuple):
    """``token`` goes into the cookie; only ``session_id`` (its sha256) is stored."""

    token: str
    session_id: str


def _normalise(password: str) -> str:
    # The same password typed on two keyboards can arrive as different code points (composed or
    # not); NFKC makes them one, so a user is not locked out by their phone's keyboard.
    if not isinstance(password, str):
        raise TypeError("password must be text")
    return unicodedata.normalize("NFKC", password)


def password_problem(password: str, *, email: str | None = None) -> str | None:
    """Why this password may not be used, as a sentence for the form; None if it is fine.

    Length and a list of common passwords only: no rules about digits or symbols.
    """
    password = _normalise(password)
    if len(password) < PASSWORD_MIN:
        return f"Use at least {PASSWORD_MIN} characters; a short sentence is easy to remember."
    if len(password) > PASSWORD_MAX:
        return f"Use at most {PASSWORD_MAX} characters."
    folded = password.casefold()
    if folded in _COMMON or len(set(folded)) == 1:
        return "That password is one of the first that anyone would try; choose another."
    if email and folded in {email.strip().casefold(), email.strip().casefold().split("@")[0]}:
        return "Do not use your e-mail address as your password."
    return None


def hash_password(password: str) -> str:
    return generate_password_hash(_normalise(password), method=HASH_METHOD)


def check_password(password_hash: str, password: str) -> bool:
    return check_password_hash(password_hash, _normalise(password))


@functools.cache
def _dummy_hash() -> str:
    return hash_password(secrets.token_urlsafe(16))


def verify_login(password_hash: str | None, password: str) -> bool:
    """Check a password; with no account (None) spend the same time and answer False.

    Answering at once for unknown e-mail addresses would tell an attacker which ones exist.
    """
    if password_hash is None:
        check_password(_dummy_hash(), password)
        return False
    return check_password(password_hash, password)


def session_id_for(token: str) -> str:
    """The stored id of a session token: sha256 hex. A stolen database holds no live cookie."""
    return hashlib.sha256(token.encode("utf-8")).hexdigest()


def new_session_token() -> SessionToken:
    token = secrets.token_urlsafe(32)
    return SessionToken(token=token, session_id=session_id_for(token))


def throttle_delay(
    failures: int, *, limit: int = THROTTLE_LIMIT, window_s: int = THROTTLE_WINDOW_S
) -> int:
    """Seconds to refuse sign-in for (answer 429 with Retry-After), given recent failures.

    No delay below ``limit`` failures in the window; at or above it, refuse until the window
    has passed. That is an upper bound: failures age out one by one, so it may open sooner.
    """
    if failures < 0:
        raise ValueError(f"failures {failures} is negative")
    return 0 if failures < limit else window_s


def same_site_path(target: str | None) -> str | None:
    """``target`` as a path on this site to go to after logging in, or None to go home.

    Control characters and whitespace are removed first (browsers drop a tab or a newline
    inside a URL, so ``/\t/evil.example`` reaches them as ``//evil.example``). Then only a
    plain absolute path is kept: no scheme, no host, no backslash (browsers read it as a
    slash) and no doubled slash in the path, neither as sent nor percent-decoded once more.
    """
    if not isinstance(target, str):
        return None
    kept = _without_invisibles(target)
    for form in (kept, _without_invisibles(unquote(kept))):
        parts = urlsplit(form)
        if parts.scheme or parts.netloc or "\\" in form or not form.startswith("/"):
            return None
        # Not parts.path: urlsplit reads "///evil.example" as an empty host and drops the
        # slashes that a browser would not.
        path = form.split("?", 1)[0].split("#", 1)[0]
        while "/./" in path:
            path = path.replace("/./", "/")
        if "//" in path:
            return None
    return kept


def _without_invisibles(text: str) -> str:
    return "".join(
        c for c in text if not c.isspace() and unicodedata.category(c) not in ("Cc", "Cf")
    )
