"""Account primitives: password hashing and policy, session and link tokens, log-in
slowing, and where a log-in may send you afterwards.

No Flask here: the log-in views (sitecheck.web.login) call these and ``sitecheck.store``.
"""

import functools
import hashlib
import math
import secrets
import unicodedata
from typing import NamedTuple
from urllib.parse import unquote, urlsplit

from werkzeug.security import check_password_hash, generate_password_hash

PASSWORD_MIN = 10
PASSWORD_MAX = 256
HASH_METHOD = "scrypt"

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


class LinkToken(NamedTuple):
    """A single-use link's ``token`` goes into the link; only ``token_hash`` is stored."""

    token: str
    token_hash: str


def new_link_token() -> LinkToken:
    token = secrets.token_urlsafe(32)
    return LinkToken(token=token, token_hash=link_token_hash(token))


def link_token_hash(token: str) -> str:
    return hashlib.sha256(token.encode("utf-8")).hexdigest()


class ThrottleRule(NamedTuple):
    """How failed log-ins slow the next try: the first ``free`` failures in the window cost
    nothing; after them the next try waits ``first_wait_s`` from the last failure, doubling
    with every further failure up to ``max_wait_s``. Never a lock: the wait always runs out."""

    free: int
    first_wait_s: int
    max_wait_s: int


# One account from one address: a person who forgot their password, or someone guessing it.
# Only failures since that pair's last success count.
ACCOUNT_AT_ADDRESS = ThrottleRule(free=5, first_wait_s=2, max_wait_s=15 * 60)
# Any account from one address: someone trying many accounts. Generous, because a site
# office, a firm's proxy or a phone network puts many honest people behind one address.
ANY_ACCOUNT_AT_ADDRESS = ThrottleRule(free=30, first_wait_s=2, max_wait_s=5 * 60)
# Failures older than this are forgotten (and pruned).
THROTTLE_WINDOW_S = 15 * 60


def throttle_wait(failures: int, since_last_failure_s: float, rule: ThrottleRule) -> int:
    """Seconds still to wait before the next log-in may be tried (0: try now)."""
    if failures < 0:
        raise ValueError(f"failures {failures} is negative")
    if failures < rule.free:
        return 0
    # The exponent is bounded: a flood of failures must not build a huge integer.
    doublings = min(failures - rule.free, 30)
    wait = min(rule.max_wait_s, rule.first_wait_s * 2**doublings)
    return max(0, math.ceil(wait - max(0.0, since_last_failure_s)))


def wait_words(seconds: int) -> str:
    """A wait as people say it: "20 seconds", "4 minutes"."""
    if seconds < 90:
        return f"{seconds} second{'' if seconds == 1 else 's'}"
    minutes = math.ceil(seconds / 60)
    return f"{minutes} minutes"


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
