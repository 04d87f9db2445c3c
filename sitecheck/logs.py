"""What the server writes about itself: a line per request and every error, to stderr.

Two shapes, for a person reading a terminal or a log collector reading lines:

- text: ``2026-03-01T09:30:00.123Z INFO sitecheck.request GET /sites/x 200 12.3 ms user=4``
- JSON (``log_json`` / ``SITECHECK_LOG_JSON=1``): one object per line with ``time``,
  ``level``, ``logger``, ``message``, the request's fields and, for an error, ``traceback``.

A request line never carries what would let someone act as another person: the query's
values are left out except for a few harmless keys, and a path segment that looks like a
token (long, random, not a UUID or a photo's hash) is replaced by ``[hidden]``.
"""

from __future__ import annotations

import json
import logging
import os
import re
import sys
import traceback
from datetime import UTC, datetime
from urllib.parse import parse_qsl

__all__ = ["JsonFormatter", "TextFormatter", "safe_path", "setup"]

REQUEST_LOGGER = "sitecheck.request"
_OURS = "_sitecheck_handler"

# Query keys whose values say nothing about anyone's credentials.
_PLAIN_QUERY_KEYS = frozenset({"page", "sort", "state", "q", "role", "site", "bearing"})
_HEX = re.compile(r"[0-9a-f]+")
_UUID = re.compile(r"[0-9a-f]{8}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{12}", re.I)
_TOKENISH = re.compile(r"[A-Za-z0-9_.~=-]{20,}")
_REQUEST_FIELDS = ("method", "path", "status", "ms", "user", "remote")


def safe_path(path: str, query: str = "") -> str:
    """The path and query as logged: token-like segments hidden, query values dropped
    except for plain keys."""
    segments = []
    for segment in path.split("/"):
        stem = segment.rsplit(".", 1)[0] if "." in segment else segment
        looks_random = (
            _TOKENISH.fullmatch(segment)
            and not _UUID.fullmatch(stem)
            and not _HEX.fullmatch(stem)
            # Our routes' words are lower case with hyphens; a token almost surely has a
            # digit, a capital or an underscore in it.
            and any(c.isdigit() or c.isupper() or c == "_" for c in stem)
        )
        segments.append("[hidden]" if looks_random else segment)
    shown = "/".join(segments)
    if query:
        pairs = parse_qsl(query, keep_blank_values=True)
        parts = [f"{k}={v if k in _PLAIN_QUERY_KEYS else '[hidden]'}" for k, v in pairs]
        if parts:
            shown += "?" + "&".join(parts)
    return shown


def _time(record: logging.LogRecord) -> str:
    moment = datetime.fromtimestamp(record.created, UTC)
    return moment.strftime("%Y-%m-%dT%H:%M:%S.") + f"{moment.microsecond // 1000:03d}Z"


def _one_line(text: str) -> str:
    # A value someone typed (an e-mail with a line break) must not start a forged line.
    return text.replace("\\", "\\\\").replace("\r", "\\r").replace("\n", "\\n")


class TextFormatter(logging.Formatter):
    """One line per event, the time in UTC; a traceback follows on its own lines."""

    def format(self, record: logging.LogRecord) -> str:
        message = _one_line(record.getMessage())
        extra = " ".join(
            f"{name}={_one_line(str(getattr(record, name)))}"
            for name in ("user", "remote")
            if getattr(record, name, None) is not None
        )
        line = f"{_time(record)} {record.levelname} {record.name} {message}"
        if extra:
            line += f" {extra}"
        if record.exc_info:
            line += "\n" + "".join(traceback.format_exception(*record.exc_info)).rstrip()
        return line


class JsonFormatter(logging.Formatter):
    """One JSON object per line, the traceback a field of it."""

    def format(self, record: logging.LogRecord) -> str:
        entry = {
            "time": _time(record),
            "level": record.levelname,
            "logger": record.name,
            "message": record.getMessage(),
            "pid": record.process,
        }
        for name in _REQUEST_FIELDS:
            value = getattr(record, name, None)
            if value is not None:
                entry[name] = value
        if record.exc_info:
            entry["traceback"] = "".join(traceback.format_exception(*record.exc_info))
        return json.dumps(entry, ensure_ascii=False, default=str)


class _Stderr(logging.StreamHandler):
    """Writes to whatever sys.stderr is when a line is written, so a test that captures
    stderr, or a server that replaced it, gets the line."""

    def __init__(self):
        super().__init__()

    @property
    def stream(self):
        return sys.stderr

    @stream.setter
    def stream(self, _value):
        pass


def setup(*, json_lines: bool | None = None, level: int = logging.INFO) -> None:
    """Send sitecheck's log (and the WSGI servers') to stderr in the chosen shape.

    Safe to call again (each worker process does): sitecheck's own handler is replaced,
    nobody else's is touched.
    """
    if json_lines is None:
        json_lines = os.environ.get("SITECHECK_LOG_JSON", "").strip().lower() in ("1", "true")
    formatter = JsonFormatter() if json_lines else TextFormatter()
    for name in ("sitecheck", "waitress", "gunicorn.error"):
        logger = logging.getLogger(name)
        for handler in list(logger.handlers):
            if getattr(handler, _OURS, False):
                logger.removeHandler(handler)
        handler = _Stderr()
        setattr(handler, _OURS, True)
        handler.setFormatter(formatter)
        logger.addHandler(handler)
        logger.setLevel(level)
        logger.propagate = False
