"""The HTTP server's own share of a request, for benchmarks/large_site.py --only writes.

A WSGI app that does nothing but what any app must: read the body the phone sent, and
answer with a JSON body and as many headers as sitecheck's answer to a record has (its
content type and length, Vary, the security headers, Cache-Control). Served by gunicorn's
threaded worker with sitecheck's counts (a worker per core, the same threads), it shows
what the server costs per request before sitecheck does anything.
"""

from __future__ import annotations

ANSWER = (
    b'{"uuid":"00000000-0000-4000-8000-000000000000","created":true,"state":"passed",'
    b'"passed":true,"utilisation":0.61,"governing":"masonry-bearing","reasons":[],'
    b'"url":"/sites/00000000-0000-4000-8000-000000000000/records/'
    b'00000000-0000-4000-8000-000000000000","after_release":false}\n'
)
HEADERS = [
    ("Content-Type", "application/json"),
    ("Content-Length", str(len(ANSWER))),
    ("Vary", "Cookie"),
    ("X-Content-Type-Options", "nosniff"),
    ("Content-Security-Policy", "default-src 'self'; frame-ancestors 'none'"),
    ("Referrer-Policy", "same-origin"),
    ("X-Frame-Options", "DENY"),
    ("Permissions-Policy", "camera=(self), geolocation=(self), microphone=()"),
    ("Cache-Control", "no-store"),
]


def app(environ, start_response):
    length = int(environ.get("CONTENT_LENGTH") or 0)
    if length:
        environ["wsgi.input"].read(length)
    start_response("201 CREATED", HEADERS)
    return [ANSWER]
