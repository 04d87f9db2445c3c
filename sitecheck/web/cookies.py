"""The session cookie and the CSRF token, each checked once per worker, not on every request.

Both are signed with the app's key (itsdangerous: HMAC over base64 JSON and a timestamp).
The phone's outbox sends the same cookie and token with every record, and checking a
signature is a pure function of the text: a text found good once is good again, with the
one exception of its age, which is checked every time. So each worker keeps the texts it
has found good (with what they decoded to and when they were signed) and checks a new one
as before. A text that fails its check is never kept, so a forged cookie costs a full check
every time, as it did.
"""

from __future__ import annotations

import hmac
import threading
import time
from collections.abc import Hashable
from typing import Any

from flask import Flask, Request, current_app, g, request, session
from flask.sessions import SecureCookieSession, SecureCookieSessionInterface
from flask_wtf.csrf import CSRFProtect, same_origin
from itsdangerous import BadSignature

__all__ = ["CheckedCookieSessions", "CheckedTokens"]

_FORM_TYPES = frozenset({"application/x-www-form-urlencoded", "multipart/form-data"})
# Enough for every person a worker serves in a working week; when full, it starts again.
KEPT_MAX = 4096


class _Kept:
    """Texts found good, by text (with the key that signed it, where one checker serves
    apps of several keys): what each decoded to and when it was signed."""

    def __init__(self) -> None:
        self._kept: dict[Hashable, tuple[Any, int]] = {}
        self._lock = threading.Lock()

    def get(self, text: Hashable, max_age: float | None) -> Any | None:
        found = self._kept.get(text)
        if found is None:
            return None
        value, signed_at = found
        if max_age is not None and not 0 <= time.time() - signed_at <= max_age:
            return None  # too old now (or from the future): checked in full, and refused
        return value

    def keep(self, text: Hashable, value: Any, signed_at: int) -> None:
        with self._lock:
            if len(self._kept) >= KEPT_MAX:
                self._kept.clear()
            self._kept[text] = (value, signed_at)


def _immutable(value: Any) -> bool:
    # A session's values are handed out as a new dict each time; a list inside (flashed
    # messages) would be shared between requests, so such a session is not kept.
    return isinstance(value, str | int | float | bool | type(None))


class CheckedCookieSessions(SecureCookieSessionInterface):
    """Flask's signed-cookie sessions, each cookie text checked once per worker."""

    def __init__(self) -> None:
        self._kept = _Kept()

    def open_session(self, app: Flask, request: Request) -> SecureCookieSession | None:
        if not app.secret_key:
            return None  # as Flask: no key, no session
        text = request.cookies.get(self.get_cookie_name(app))
        if not text:
            return self.session_class()
        max_age = int(app.permanent_session_lifetime.total_seconds())
        kept = self._kept.get(text, max_age)
        if kept is not None:
            return self.session_class(kept)
        serializer = self.get_signing_serializer(app)
        if serializer is None:
            return None
        try:
            data, signed_at = serializer.loads(text, max_age=max_age, return_timestamp=True)
        except BadSignature:
            return self.session_class()
        if isinstance(data, dict) and all(_immutable(v) for v in data.values()):
            self._kept.keep(text, dict(data), int(signed_at.timestamp()))
        return self.session_class(data)


class CheckedTokens(CSRFProtect):
    """flask-wtf's CSRF protection, each signed token checked once per worker against the
    session's own token; everything else (methods, exemptions, the referrer over HTTPS,
    the refusal) is flask-wtf's."""

    def __init__(self, app: Flask | None = None) -> None:
        self._kept = _Kept()
        super().__init__(app)

    def protect(self, apply_exemptions: bool = False) -> None:
        config = current_app.config
        if request.method not in config["WTF_CSRF_METHODS"]:
            return
        field = config["WTF_CSRF_FIELD_NAME"]
        token = self._header_token()
        own = session.get(field)
        # One checker serves every app of the process (tests make many, each its own key).
        signed = (config.get("WTF_CSRF_SECRET_KEY") or current_app.secret_key, token)
        # Forms carry their token in a field, which flask-wtf reads first: those go its way.
        fast = request.mimetype not in _FORM_TYPES and config["WTF_CSRF_TIME_LIMIT"] is None
        if fast and token and isinstance(own, str):
            kept = self._kept.get(signed, None)
            if isinstance(kept, str) and hmac.compare_digest(kept, own) and self._referrer_ok():
                g.csrf_valid = True
                return
        super().protect(apply_exemptions)
        if fast and token and isinstance(own, str) and g.get("csrf_valid"):
            # flask-wtf found this token good for this session's own token.
            self._kept.keep(signed, own, int(time.time()))

    @staticmethod
    def _header_token() -> str | None:
        for name in current_app.config["WTF_CSRF_HEADERS"]:
            token = request.headers.get(name)
            if token:
                return token
        return None

    @staticmethod
    def _referrer_ok() -> bool:
        # flask-wtf's check over HTTPS; a request failing it goes the full way, and is refused.
        if not (request.is_secure and current_app.config["WTF_CSRF_SSL_STRICT"]):
            return True
        return bool(request.referrer) and same_origin(request.referrer, f"https://{request.host}/")
