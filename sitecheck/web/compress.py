"""gzip for text answers: a phone on one bar of signal pays for every byte of the app's
shell, and its scripts (the core's mirror most of all) shrink about fourfold.

Static files are compressed once per version (keyed by their ETag) and kept; pages and JSON
are compressed as they go. Photos, PDFs and archives are already compressed and are left
alone, as is anything small enough that the gzip header would eat the gain. Every static
file is read and closed here, before the answer leaves the app (see :func:`_read_and_close`).

Compressing pages that hold a secret beside text an attacker can choose is the shape of the
BREACH attack. The secret on our pages is the CSRF token. Flask-WTF signs it with a
timestamp and the app's secret key: the signature, without which the token is refused,
changes every second, so it never stands still across the many requests that attack needs,
and the part that does stay the same is worthless without a signature only the server can
make.
"""

from __future__ import annotations

import gzip
import threading

from flask import Flask, Response, request

COMPRESSIBLE = frozenset(
    {
        "text/html",
        "text/css",
        "text/csv",
        "text/plain",
        "text/javascript",
        "application/javascript",
        "application/json",
        "application/manifest+json",
        "image/svg+xml",
    }
)
SMALLEST = 1024  # bytes; below this gzip saves too little to matter
LEVEL = 6  # zlib's default: most of level 9's saving at a fraction of its time
_CACHE_LIMIT = 256  # static files kept compressed (the app has a few dozen)


class _StaticCache:
    def __init__(self) -> None:
        self._lock = threading.Lock()
        self._items: dict[tuple[str, str], bytes] = {}

    def get(self, key: tuple[str, str], data: bytes) -> bytes:
        with self._lock:
            found = self._items.get(key)
        if found is None:
            found = gzip.compress(data, compresslevel=LEVEL, mtime=0)
            with self._lock:
                if len(self._items) >= _CACHE_LIMIT:
                    self._items.clear()
                self._items[key] = found
        return found


def _read_and_close(response: Response) -> bytes:
    """The body of a response that passes a file straight through (send_file), read now and
    the file closed now. Left to the server, the file stays open when a client drops the
    connection mid-answer (a phone losing signal; a worker's precache cut short), as the
    development server then skips closing it."""
    close = getattr(response.response, "close", None)
    response.direct_passthrough = False
    data = response.get_data()
    if close is not None:
        close()
    return data


def _close_unsent(response: Response) -> None:
    """Close the file behind an answer that sends no body (a 304), now rather than when the
    server gets round to it, which it skips when the client has already gone."""
    close = getattr(response.response, "close", None)
    if close is not None:
        close()
    response.direct_passthrough = False
    response.response = []


def install(app: Flask) -> None:
    cache = _StaticCache()

    def compress(response: Response) -> Response:
        static = request.path.startswith("/static/") or request.path == "/sw.js"
        if static and response.direct_passthrough:
            # Small files of our own, read once per request: never leave one open. A 304
            # carries no body, yet send_file opened the file for it all the same.
            if response.status_code in (200, 206):
                _read_and_close(response)
            else:
                _close_unsent(response)
        if (
            response.status_code != 200
            or response.mimetype not in COMPRESSIBLE
            or "Content-Encoding" in response.headers
            or (response.is_streamed and not response.direct_passthrough)
            or "gzip" not in request.headers.get("Accept-Encoding", "").lower()
        ):
            return response
        response.vary.add("Accept-Encoding")
        data = _read_and_close(response) if response.direct_passthrough else response.get_data()
        if len(data) < SMALLEST:
            return response
        etag, _weak = response.get_etag()
        if etag and static:
            body = cache.get((request.path, etag or ""), data)
        else:
            body = gzip.compress(data, compresslevel=LEVEL, mtime=0)
        response.set_data(body)
        response.headers["Content-Encoding"] = "gzip"
        if etag:
            # The bytes differ from the plain file's, so the tag may only match weakly;
            # If-None-Match compares weakly, so a phone's revalidation still gets its 304.
            response.set_etag(etag, weak=True)
        return response

    app.after_request(compress)
