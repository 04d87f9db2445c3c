"""Reading a JSON body without letting its shape cost the server.

Python's parser recurses once per level of nesting: a body nested thousands deep raises
RecursionError, which Flask does not count as bad JSON, so the request ended in a 500 and
the phone, which retries a 5xx for ever, sent it again for ever. A body is refused here,
with a 400 and a sentence, when it is larger or deeper than any record the phone makes.

`install(app)` also bounds every other `request.get_json()` in the app (its request class
parses with `loads` below), so a new JSON endpoint cannot bring the 500 back. Responses and
the app's own JSON are left to Flask.
"""

from __future__ import annotations

import json
import re
from typing import Any

import flask

__all__ = ["MAX_JSON_BYTES", "MAX_JSON_DEPTH", "JsonRefused", "install", "read_json"]

# The phone's largest record (every field, notes at their limit) is a few kB.
MAX_JSON_BYTES = 256 * 1024
# A record is an object of objects of values: three levels. The rest is room for growth.
MAX_JSON_DEPTH = 32

# A JSON string (escapes included) or one bracket; strings are skipped so that a bracket
# inside a note does not count as nesting.
_TOKENS = re.compile(rb'"(?:[^"\\]|\\.)*"|[\[\]{}]')
_OPENING = frozenset(b"[{")


class JsonRefused(ValueError):
    """A body refused before or while parsing; ``code`` for programs, ``message`` for people.

    A ValueError, so that Flask's own get_json() treats it as bad JSON (a 400), never a 500.
    """

    def __init__(self, code: str, message: str):
        super().__init__(message)
        self.code = code
        self.message = message


def nesting_depth(data: bytes) -> int:
    """The deepest nesting of arrays and objects in `data`, without parsing it."""
    depth = deepest = 0
    for match in _TOKENS.finditer(data):
        token = match.group()
        if len(token) != 1:
            continue  # a string
        if token[0] in _OPENING:
            depth += 1
            deepest = max(deepest, depth)
        else:
            depth -= 1
    return deepest


def loads(data: bytes | str) -> Any:
    """Parse a JSON body, refusing one too large or too deep before the parser sees it."""
    raw = data.encode("utf-8") if isinstance(data, str) else bytes(data)
    if len(raw) > MAX_JSON_BYTES:
        raise JsonRefused(
            "json-too-large",
            f"The request is {len(raw) / 1024:.0f} kB of JSON; the limit is "
            f"{MAX_JSON_BYTES // 1024} kB. Nothing was stored. An as-built record is a few kB: "
            "shorten its notes and send it again.",
        )
    # No deeper than it has opening brackets, strings' own included: a record has a few, so
    # the phone's bodies are never scanned token by token.
    opening = raw.count(b"[") + raw.count(b"{")
    if opening > MAX_JSON_DEPTH and nesting_depth(raw) > MAX_JSON_DEPTH:
        raise JsonRefused(
            "json-too-deep",
            f"The JSON is nested deeper than the server reads (at most {MAX_JSON_DEPTH} levels "
            "of arrays and objects). Nothing was stored. The phone never sends this; record "
            "the bearing again on the form.",
        )
    try:
        return json.loads(raw)
    except (ValueError, RecursionError) as error:
        raise JsonRefused("not-json", f"The request is not JSON ({error}).") from None


def read_json(request) -> Any:
    """The request's JSON body; JsonRefused if it is missing, too large, too deep or not JSON.

    The declared length is checked before anything is read, so a large body is never held
    in memory to be refused.
    """
    if not request.is_json:
        raise JsonRefused("not-json", "Send the body as JSON (Content-Type: application/json).")
    length = request.content_length
    if length is not None and length > MAX_JSON_BYTES:
        raise JsonRefused(
            "json-too-large",
            f"The request is {length / 1024:.0f} kB of JSON; the limit is "
            f"{MAX_JSON_BYTES // 1024} kB. Nothing was stored. An as-built record is a few kB: "
            "shorten its notes and send it again.",
        )
    # A body with no declared length is read one byte past the limit, no further.
    data = request.stream.read(MAX_JSON_BYTES + 1) if length is None else request.get_data()
    return loads(data)


class _BoundedJson:
    """What a request parses its body with (werkzeug calls ``json_module.loads``)."""

    @staticmethod
    def loads(s: str | bytes, **kwargs: Any) -> Any:
        return loads(s)

    @staticmethod
    def dumps(obj: Any, **kwargs: Any) -> str:
        return flask.json.dumps(obj, **kwargs)


class BoundedRequest(flask.Request):
    """Flask's request, whose get_json() refuses a body too large or too deep with a 400.

    Flask-WTF's forms read a JSON body too (any page's form, the log-in included), so this
    is where the bound belongs, not in one view.
    """

    @property
    def json_module(self):
        return _BoundedJson

    @json_module.setter
    def json_module(self, _provider) -> None:
        # Flask hands each request the app's JSON provider; request bodies keep the bound.
        pass


def install(app) -> None:
    app.request_class = BoundedRequest
