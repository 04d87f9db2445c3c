"""What many requests for the site record (PDF) cost the server, and whether log-in still
answers meanwhile; print it.

    .venv/bin/python benchmarks/record_requests.py [--people 8]

A fresh demo database served as in production (`sitecheck serve`: waitress, 8 threads) in
its own process on 127.0.0.1. N people on the demo site (every role, twice over) ask for
its site record at the same moment; meanwhile another connection asks for /login every
50 ms, until the record is ready. Then everyone asks again, with nothing changed on the site.

Printed: how long each request took to answer, how many makings the server started, how long
the making took, /login's answer times meanwhile, and the answers to the second round.
Target (issue 12): /login <= 1 s while site records are being made.
"""

from __future__ import annotations

import argparse
import json
import shutil
import sqlite3
import statistics
import sys
import tempfile
import threading
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT / "tests"))
sys.path.insert(0, str(ROOT / "benchmarks"))

from photo_memory import free_port, start_server  # noqa: E402

from kit.client import Client  # noqa: E402

TARGET_LOGIN_S = 1.0


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--people", type=int, default=8)
    args = parser.parse_args()

    from sitecheck.demo import DEMO_PEOPLE, SITE_NAME, build_demo

    work = Path(tempfile.mkdtemp(prefix="sitecheck-record-requests-"))
    db_path = work / "demo.db"
    build_demo(db_path)
    with sqlite3.connect(db_path) as con:
        site_id = con.execute("SELECT id FROM sites WHERE name = ?", [SITE_NAME]).fetchone()[0]
    port = free_port()
    server = start_server(db_path, port, work / "server.log")
    url = f"http://127.0.0.1:{port}"
    roles = list(DEMO_PEOPLE)
    try:
        people = []
        for n in range(args.people):
            email, _name, password = DEMO_PEOPLE[roles[n % len(roles)]]
            person = Client(url)
            person.log_in(email, password)
            people.append((person, person.token()))

        def ask_all() -> list[tuple[int, float]]:
            go = threading.Barrier(len(people))
            answers: list = [None] * len(people)

            def ask(n: int) -> None:
                person, token = people[n]
                go.wait()
                started = time.perf_counter()
                status = person.post_form(f"/sites/{site_id}/record/pdf", {}, token=token).status
                answers[n] = (status, time.perf_counter() - started)

            threads = [threading.Thread(target=ask, args=(n,)) for n in range(len(people))]
            for t in threads:
                t.start()
            for t in threads:
                t.join(120)
            return answers

        ready = threading.Event()
        logins: list[float] = []

        def log_in_page() -> None:
            visitor = Client(url)
            while not ready.is_set():
                started = time.perf_counter()
                assert visitor.get("/login").status == 200
                logins.append(time.perf_counter() - started)
                time.sleep(0.05)

        watcher = threading.Thread(target=log_in_page)
        watcher.start()
        started = time.perf_counter()
        first = ask_all()
        viewer = people[0][0]
        while True:
            job = viewer.get(f"/sites/{site_id}/record/pdf.json").json()["job"]
            if job and not job["running"]:
                break
            time.sleep(0.1)
        made_s = time.perf_counter() - started
        ready.set()
        watcher.join(30)
        second = ask_all()
        with sqlite3.connect(db_path) as con:
            makings = con.execute(
                "SELECT count(*) FROM record_jobs WHERE site_id = ?", [site_id]
            ).fetchone()[0]
    finally:
        server.kill()
        server.wait(10)
        shutil.rmtree(work, ignore_errors=True)

    def seconds(answers):
        return max(s for _status, s in answers)

    print(f"Site record requests: {args.people} people at once on the demo site, {url}")
    print(
        f"  first round: answers {sorted(a for a, _s in first)}, slowest answer "
        f"{seconds(first):.2f} s; record {job['state']} after {made_s:.1f} s "
        f"({job['bearings']} bearings, {(job['size_bytes'] or 0) / 1e6:.1f} MB)"
    )
    print(
        f"  /login meanwhile: {len(logins)} asked, median {statistics.median(logins):.3f} s, "
        f"slowest {max(logins):.3f} s"
    )
    print(
        f"  second round, nothing changed: answers {sorted(a for a, _s in second)}, slowest "
        f"{seconds(second):.2f} s; makings started in all: {makings}"
    )
    met = max(logins) <= TARGET_LOGIN_S and makings == 1
    print(
        f"target: one making and /login <= {TARGET_LOGIN_S:g} s meanwhile: "
        f"{'met' if met else 'NOT met'}"
    )
    print(
        json.dumps(
            {
                "people": args.people,
                "makings": makings,
                "made_s": round(made_s, 2),
                "slowest_answer_s": round(seconds(first), 3),
                "login_max_s": round(max(logins), 3),
                "login_median_s": round(statistics.median(logins), 3),
            }
        )
    )
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
