"""Where a record's server CPU goes: the phone's POST /api/records, taken apart.

    .venv/bin/python benchmarks/write_path.py [--bearings 1000] [--records 300] [--profile]

The app runs in this process on a copy of a large site (benchmarks/large_site.py builds
and keeps it) and the records are sent one after another through Flask's test client on
one thread, so the thread keeps its connection as a server thread does. Printed:

- the thread's CPU per record, against a trivial route (/api/csrf) that still loads the
  session and its person: what any request costs before it does anything;
- that CPU split by step (each step's own CPU, measured by wrapping it: the sub-steps are
  inside their step, so the lines do not add up to the whole);
- the SQL statements per record and each one's CPU (a durable COMMIT's fsync included:
  synchronous=FULL, as served);
- with --profile, cProfile's largest entries (its own overhead is large: read the order,
  not the figures).

What the test client leaves out is the HTTP server's own work (gunicorn parses the request
and writes the answer): benchmarks/large_site.py --only writes measures the whole of it on a
real server. The machine is shared: every figure is a median of batches of 25.
"""

from __future__ import annotations

import argparse
import collections
import cProfile
import functools
import importlib
import io
import json
import logging
import pstats
import re
import shutil
import statistics
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT / "benchmarks"))

import large_site  # noqa: E402

BATCH = 25
# The steps of a record's request, each timed by wrapping the function where it is called.
STEPS = (
    ("sitecheck.web.sync", "read_json", "the body read as JSON"),
    ("sitecheck.web.sync", "_record_fields", "its fields checked"),
    ("sitecheck.web.sync", "site_for", "the site and the person's role"),
    ("sitecheck.web.sync", "bearing_for", "the bearing read"),
    ("sitecheck.services", "record_as_built", "re-check and store (the two below and more)"),
    ("sitecheck.services", "recheck", "  the re-check and review"),
    ("sitecheck.store", "insert_record", "  the store's transaction"),
    ("sitecheck.store.records", "pack_json", "    the trace packed"),
    ("sitecheck.web.sync", "_answer", "the answer built"),
    ("sitecheck.web.sync", "jsonify", "the answer written as JSON"),
)


class _Timed:
    """A connection that adds up each statement's CPU (sqlite3's own type cannot be wrapped)."""

    def __init__(self, conn, spent: collections.Counter, count: collections.Counter):
        self._conn, self._spent, self._count = conn, spent, count

    def execute(self, sql, *args):
        started = time.thread_time()
        try:
            return self._conn.execute(sql, *args)
        finally:
            key = " ".join(sql.split())[:72]
            self._spent[key] += time.thread_time() - started
            self._count[key] += 1

    def __getattr__(self, name):
        return getattr(self._conn, name)


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--bearings", type=int, default=1000)
    parser.add_argument("--records", type=int, default=300)
    parser.add_argument("--profile", action="store_true")
    args = parser.parse_args()

    from sitecheck import web
    from sitecheck.web import create_app

    site = large_site.built_site(args.bearings)
    work = Path(tempfile.mkdtemp(prefix="sitecheck-write-path-"))
    try:
        db_path = large_site.working_copy(site, work)
        logging.getLogger("sitecheck.request").disabled = True  # a line per request, to stderr
        app = create_app(db_path, MAIL_SENDER=False)
        client = app.test_client()
        email, _name, password = large_site.PEOPLE["inspector"]
        page = client.get("/login").get_data(as_text=True)
        token = re.search(r'name="csrf_token" type="hidden" value="([^"]+)"', page).group(1)
        answer = client.post(
            "/login", data={"email": email, "password": password, "csrf_token": token}
        )
        assert answer.status_code == 302, answer.status_code
        headers = {
            "Content-Type": "application/json",
            "X-CSRFToken": client.get("/api/csrf").get_json()["token"],
        }
        picked = large_site.bearings_to_record(db_path, site.site_id, args.records + BATCH)
        bodies = [
            json.dumps(large_site.record_body(site.site_id, b, n)) for n, b in enumerate(picked)
        ]

        def send(body: str) -> None:
            answer = client.post("/api/records", data=body, headers=headers)
            if answer.status_code != 201:
                raise RuntimeError(f"refused: {answer.status_code} {answer.get_data()[:300]!r}")

        for body in bodies[:BATCH]:  # the thread's connection, caches and imports settle
            send(body)
        bodies = bodies[BATCH:]

        whole = _batches(bodies, send)
        trivial = _batches(bodies, lambda _body: client.get("/api/csrf"))
        print(f"Write path at {args.bearings:,} bearings, {len(bodies)} records without photo")
        print(f"load average {' '.join(f'{x:.2f}' for x in _load())} on 2 cores")
        print(f"  thread CPU per record      {whole:8.3f} ms   (median of batches of {BATCH})")
        print(f"  trivial route (/api/csrf)  {trivial:8.3f} ms   what any request costs")

        spent: collections.Counter = collections.Counter()
        restore = [_wrap(module, name, spent) for module, name, _words in STEPS]
        try:
            steps_total = _batches(bodies, send)
        finally:
            for undo in restore:
                undo()
        print(f"by step (own CPU per record, wrapped; the whole was {steps_total:.3f} ms):")
        for module, name, words in STEPS:
            print(f"  {words:<46}{spent[f'{module}.{name}'] / len(bodies) * 1000:8.3f} ms")

        sql_spent: collections.Counter = collections.Counter()
        sql_count: collections.Counter = collections.Counter()
        db = web._thread.db
        plain = db.conn
        db.conn = _Timed(plain, sql_spent, sql_count)
        try:
            _batches(bodies, send)
        finally:
            db.conn = plain
        per = len(bodies)
        total = sum(sql_count.values()) / per
        print(
            f"SQL: {total:.1f} statements per record, {sum(sql_spent.values()) / per * 1000:.3f} ms"
        )
        for sql, cpu in sql_spent.most_common():
            print(f"  {cpu / per * 1000:7.3f} ms  x{sql_count[sql] / per:.1f}  {sql}")

        if args.profile:
            profile = cProfile.Profile(time.thread_time)
            profile.enable()
            _batches(bodies, send)
            profile.disable()
            out = io.StringIO()
            pstats.Stats(profile, stream=out).sort_stats("cumulative").print_stats(40)
            print(out.getvalue())
    finally:
        shutil.rmtree(work, ignore_errors=True)
    return 0


def _batches(bodies: list[str], send) -> float:
    """Median thread CPU per request, ms, over batches (a shared machine's bursts fall out)."""
    per = []
    for start in range(0, len(bodies) - BATCH + 1, BATCH):
        started = time.thread_time()
        for body in bodies[start : start + BATCH]:
            send(body)
        per.append((time.thread_time() - started) / BATCH * 1000)
    # Each body is sent once per measurement; the same UUID again is the resend path, which
    # answers from the stored row: new bodies for each measurement would need a bigger site.
    for n, body in enumerate(bodies):
        data = json.loads(body)
        data["uuid"] = _new_uuid()
        bodies[n] = json.dumps(data)
    return statistics.median(per)


def _new_uuid() -> str:
    import uuid

    return str(uuid.uuid4())


def _wrap(module_name: str, name: str, spent: collections.Counter):
    module = importlib.import_module(module_name)
    original = getattr(module, name)
    key = f"{module_name}.{name}"

    @functools.wraps(original)
    def timed(*args, **kwargs):
        started = time.thread_time()
        try:
            return original(*args, **kwargs)
        finally:
            spent[key] += time.thread_time() - started

    setattr(module, name, timed)
    return lambda: setattr(module, name, original)


def _load() -> tuple[float, ...]:
    import os

    return os.getloadavg()


if __name__ == "__main__":
    raise SystemExit(main())
