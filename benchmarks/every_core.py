"""Does a second worker process carry more? The same mixed load against 1 and 2 workers.

    .venv/bin/python benchmarks/every_core.py [--seconds 20] [--inspectors 20]

Twenty inspectors (threads here, each its own log-in and cookies) work against
`sitecheck serve` on 127.0.0.1 (gunicorn, 4 threads per worker), each in a loop: open the
survey list, fetch the site pack, send an as-built record (JSON) and its photo (a
1600 x 1200 JPEG of about 300 KB, each a different picture). Each configuration gets a
fresh data folder and runs for a fixed time after a short warm-up; the whole run stops by
itself.

Then the same load against a trivial Flask app (every route answers "ok" after reading the
request) served by gunicorn the same way: what the server and this load generator cost
before sitecheck does any work.

Printed per configuration: requests/s done, records/s and photos stored/s, the 503s (the
server's "send it again later" when photos queue, which the phone's outbox obeys), errors,
p50/p95 per route (ms) of the answers that did the work, the CPU
the server and the load generator used, and the machine's load average (on a shared machine
other programs take cores too: read the figures with it); then the ratio of 2 workers to 1.
Loopback only; it asserts nothing.
"""

from __future__ import annotations

import argparse
import io
import json
import os
import re
import shutil
import signal
import socket
import statistics
import subprocess
import sys
import tempfile
import threading
import time
import urllib.error
import urllib.parse
import urllib.request
import uuid
from dataclasses import dataclass, field
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT / "tests"))

from kit.data_folder import as_built_record  # noqa: E402

PASSWORD = "benchmark inspector pass"  # invented accounts of a throwaway data folder
WARM_UP_S = 3.0
ROUTES = ("survey list", "site pack", "record", "photo")


def trivial_app():
    """The baseline: a Flask app that reads whatever it is sent and answers "ok"."""
    from flask import Flask, request

    app = Flask("baseline")

    @app.route("/", defaults={"path": ""}, methods=["GET", "POST"])
    @app.route("/<path:path>", methods=["GET", "POST"])
    def ok(path):
        request.get_data()
        if path == "api/csrf":
            return {"token": "-"}
        if path == "login" and request.method == "POST":
            return "", 302, {"Location": "/"}
        if path == "login":
            return '<input name="csrf_token" type="hidden" value="-">'
        if path == "api/records":
            return {"uuid": "-"}, 201
        return "ok"

    return app


# --- the data folder ----------------------------------------------------------------------------


def prepare(home: Path, inspectors: int) -> tuple[str, list[dict], list[str]]:
    """A fresh data folder: one site with the demo schedule's bearings and its inspectors."""
    from sitecheck import credentials, services, store
    from sitecheck.demo import SITE_NAME, schedule_csv

    home.mkdir(parents=True)
    db = store.open_db(home / "sitecheck.db")
    try:
        hashed = credentials.hash_password(PASSWORD)
        engineer = store.create_user(
            db, email="engineer@bench.example", name="Bench Engineer", password_hash=hashed
        )
        basis, review = services.default_site_settings()
        site = store.create_site(
            db,
            name=SITE_NAME,
            address="",
            code_basis=basis,
            review_settings=review,
            created_by=engineer["id"],
        )
        emails = []
        for n in range(inspectors):
            u = store.create_user(
                db, email=f"inspector{n}@bench.example", name=f"Inspector {n}", password_hash=hashed
            )
            store.add_membership(
                db, user_id=u["id"], site_id=site["id"], role="inspector", invited_by=engineer["id"]
            )
            emails.append(u["email"])
        text = "\n".join(x for x in schedule_csv().splitlines() if "BS 5628-1" not in x) + "\n"
        services.import_schedule(db, site=site, text=text, user_id=engineer["id"])
        bearings = store.list_bearings(db, site_id=site["id"])
    finally:
        db.conn.close()
    return site["id"], bearings, emails


def photos(count: int) -> list[bytes]:
    """Different 1600 x 1200 pictures of about 300 KB each, a phone's shrunk photo's size."""
    from PIL import Image, ImageFilter

    made = []
    base = Image.linear_gradient("L").resize((1600, 1200))
    for _ in range(count):
        noise = Image.effect_noise((1600, 1200), 60).filter(ImageFilter.GaussianBlur(1))
        bands = [
            Image.blend(b, noise, 0.5)
            for b in (
                base,
                base.transpose(Image.Transpose.FLIP_LEFT_RIGHT),
                base.transpose(Image.Transpose.FLIP_TOP_BOTTOM),
            )
        ]
        buffer = io.BytesIO()
        Image.merge("RGB", bands).save(buffer, "JPEG", quality=80)
        made.append(buffer.getvalue())
    return made


# --- servers ------------------------------------------------------------------------------------


def free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


class Server:
    def __init__(self, command: list[str], port: int, log: Path, env: dict | None = None):
        self.url = f"http://127.0.0.1:{port}"
        self._log = open(log, "wb")  # noqa: SIM115 - closed in stop()
        self.process = subprocess.Popen(
            command, stdout=self._log, stderr=self._log, env={**os.environ, **(env or {})}
        )
        deadline = time.monotonic() + 60
        while time.monotonic() < deadline:
            try:
                with urllib.request.urlopen(self.url + "/healthz", timeout=2):
                    return
            except (OSError, urllib.error.URLError):
                if self.process.poll() is not None:
                    raise RuntimeError(f"server stopped: {log.read_text()[-2000:]}") from None
                time.sleep(0.1)
        self.stop()
        raise RuntimeError("server did not start in 60 s")

    def cpu_seconds(self) -> float:
        """CPU time of the server's processes so far (the master and its workers), from
        /proc; nan where there is none."""
        ticks = os.sysconf("SC_CLK_TCK")
        total, found = 0.0, False
        for stat in Path("/proc").glob("[0-9]*/stat"):
            try:
                fields = stat.read_text().rsplit(")", 1)[1].split()
            except OSError:
                continue
            pid, ppid = int(stat.parent.name), int(fields[1])
            if pid == self.process.pid or ppid == self.process.pid:
                total += (int(fields[11]) + int(fields[12])) / ticks
                found = True
        return total if found else float("nan")

    def stop(self) -> None:
        if self.process.poll() is None:
            self.process.send_signal(signal.SIGTERM)
            try:
                self.process.wait(30)
            except subprocess.TimeoutExpired:
                self.process.kill()
                self.process.wait(10)
        self._log.close()


def sitecheck_server(home: Path, workers: int, threads: int, log: Path) -> Server:
    port = free_port()
    sitecheck = str(Path(sys.executable).with_name("sitecheck"))
    command = [sitecheck, "serve", "--home", str(home), "--port", str(port)]
    command += ["--workers", str(workers), "--threads", str(threads)]
    return Server(command, port, log)


def baseline_server(workers: int, threads: int, log: Path) -> Server:
    port = free_port()
    command = [sys.executable, "-m", "gunicorn", "--chdir", str(Path(__file__).parent)]
    command += ["--bind", f"127.0.0.1:{port}", "--workers", str(workers), "--threads", str(threads)]
    command += ["--worker-class", "gthread", "--no-control-socket", "every_core:trivial_app()"]
    return Server(command, port, log)


# --- the load -----------------------------------------------------------------------------------


@dataclass
class Tally:
    """Times of the answers that did the work; a 503 (the server asks the phone to send it
    again later, as its outbox does) is counted apart, and anything else is an error."""

    times: dict[str, list[float]] = field(default_factory=lambda: {r: [] for r in ROUTES})
    later: dict[str, int] = field(default_factory=lambda: dict.fromkeys(ROUTES, 0))
    errors: dict[str, int] = field(default_factory=dict)
    lock: threading.Lock = field(default_factory=threading.Lock)

    def add(self, route: str, seconds: float, status: int | None, what: str = "") -> None:
        with self.lock:
            if status is not None and status < 400:
                self.times[route].append(seconds)
            elif status == 503:
                self.later[route] += 1
            else:
                key = f"{route}: {what}"
                self.errors[key] = self.errors.get(key, 0) + 1


class Inspector:
    """One inspector: cookies and a loop of the four requests."""

    def __init__(self, url: str):
        self.url = url
        jar = urllib.request.HTTPCookieProcessor()

        class NoRedirect(urllib.request.HTTPRedirectHandler):
            def redirect_request(self, *args, **kwargs):
                return None

        self.opener = urllib.request.build_opener(jar, NoRedirect())

    def call(self, method: str, path: str, body: bytes | None = None, headers=None):
        request = urllib.request.Request(
            self.url + path, data=body, method=method, headers=headers or {}
        )
        try:
            with self.opener.open(request, timeout=60) as response:
                return response.status, response.read()
        except urllib.error.HTTPError as error:
            with error:
                return error.code, error.read()

    def log_in(self, email: str) -> str:
        _, page = self.call("GET", "/login")
        token = re.search(rb'name="csrf_token" type="hidden" value="([^"]+)"', page).group(1)
        body = urllib.parse.urlencode(
            {"email": email, "password": PASSWORD, "csrf_token": token.decode()}
        ).encode()
        status, _ = self.call(
            "POST", "/login", body, {"Content-Type": "application/x-www-form-urlencoded"}
        )
        if status != 302:
            raise RuntimeError(f"log-in of {email} answered {status}")
        return json.loads(self.call("GET", "/api/csrf")[1])["token"]


def record_body(site_id: str, bearing: dict) -> dict:
    return {**as_built_record(site_id, bearing), "notes": "Benchmark record."}


def multipart(data: bytes) -> tuple[bytes, str]:
    boundary = uuid.uuid4().hex
    body = b"".join(
        [
            f'--{boundary}\r\nContent-Disposition: form-data; name="photo_uuid"\r\n\r\n'
            f"{uuid.uuid4()}\r\n".encode(),
            f'--{boundary}\r\nContent-Disposition: form-data; name="photo"; '
            f'filename="IMG.jpg"\r\nContent-Type: image/jpeg\r\n\r\n'.encode(),
            data,
            f"\r\n--{boundary}--\r\n".encode(),
        ]
    )
    return body, f"multipart/form-data; boundary={boundary}"


def run_load(server, site_id, bearings, emails, pictures, seconds) -> tuple[Tally, float, dict]:
    """Every inspector loops until the time is up; returns the tally (warm-up left out),
    the seconds measured and the CPU seconds of this process and of the server in them."""
    url = server.url
    tally = Tally()
    start = time.monotonic()
    measure_from = start + WARM_UP_S
    stop_at = measure_from + seconds
    failures = []

    def work(n: int) -> None:
        try:
            me = Inspector(url)
            token = me.log_in(emails[n])
        except Exception as error:  # a log-in that fails ends this inspector, and is shown
            failures.append(f"inspector {n}: {error}")
            return
        i = 0
        while time.monotonic() < stop_at:
            bearing = bearings[(n * 7 + i) % len(bearings)]
            body = record_body(site_id, bearing)
            steps = [
                ("survey list", "GET", f"/sites/{site_id}/inspect", None, {}),
                ("site pack", "GET", f"/api/sites/{site_id}/pack", None, {}),
                (
                    "record",
                    "POST",
                    "/api/records",
                    json.dumps(body).encode(),
                    {"Content-Type": "application/json", "X-CSRFToken": token},
                ),
            ]
            photo, kind = multipart(pictures[(n + i) % len(pictures)])
            steps.append(
                (
                    "photo",
                    "POST",
                    f"/api/records/{body['uuid']}/photos",
                    photo,
                    {"Content-Type": kind, "X-CSRFToken": token},
                )
            )
            for route, method, path, data, headers in steps:
                began = time.monotonic()
                try:
                    status, _ = me.call(method, path, data, headers)
                    what = str(status)
                except OSError as error:
                    status, what = None, type(error).__name__
                ended = time.monotonic()
                if began >= measure_from and ended <= stop_at:
                    tally.add(route, ended - began, status, what)
            i += 1

    threads = [threading.Thread(target=work, args=(n,)) for n in range(len(emails))]
    for t in threads:
        t.start()
    time.sleep(max(0.0, measure_from - time.monotonic()))
    cpu = {"load": time.process_time(), "server": server.cpu_seconds()}
    time.sleep(max(0.0, stop_at - time.monotonic()))
    cpu = {
        "load": time.process_time() - cpu["load"],
        "server": server.cpu_seconds() - cpu["server"],
        "loadavg": os.getloadavg()[0],
    }
    for t in threads:
        t.join(seconds + 120)
    for failure in failures:
        tally.errors[failure] = tally.errors.get(failure, 0) + 1
    return tally, seconds, cpu


def percentile(values: list[float], q: float) -> float:
    if not values:
        return float("nan")
    ordered = sorted(values)
    return ordered[min(len(ordered) - 1, int(round(q * (len(ordered) - 1))))]


def report(name: str, tally: Tally, seconds: float, cpu: dict) -> float:
    done = sum(len(v) for v in tally.times.values())
    later = sum(tally.later.values())
    rate = done / seconds
    print(f"\n{name}")
    print(
        f"  {rate:7.1f} requests/s done   {len(tally.times['record']) / seconds:5.1f} records/s   "
        f"{len(tally.times['photo']) / seconds:5.1f} photos stored/s   "
        f"{later / seconds:5.1f}/s asked to send again (503)   errors {sum(tally.errors.values())}"
    )
    print(
        f"  CPU: server {cpu['server'] / seconds:.2f} cores, load generator "
        f"{cpu['load'] / seconds:.2f} cores (of {os.cpu_count()}); machine's load average "
        f"{cpu['loadavg']:.1f} (other programs running count too)"
    )
    for route in ROUTES:
        times = tally.times[route]
        if times:
            print(
                f"  {route:12} {len(times):6d} done   p50 {percentile(times, 0.5) * 1000:7.1f} ms"
                f"   p95 {percentile(times, 0.95) * 1000:7.1f} ms"
                f"   mean {statistics.fmean(times) * 1000:7.1f} ms"
                + (f"   503: {tally.later[route]}" if tally.later[route] else "")
            )
    for what, count in sorted(tally.errors.items()):
        print(f"  error {what}: {count}")
    return rate


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--seconds", type=float, default=20.0, help="measured time per run")
    parser.add_argument("--inspectors", type=int, default=20)
    parser.add_argument("--threads", type=int, default=4, help="threads per worker")
    args = parser.parse_args()

    print(
        f"{args.inspectors} inspectors, {args.seconds:.0f} s measured after {WARM_UP_S:.0f} s "
        f"warm-up, gunicorn with {args.threads} threads per worker, {os.cpu_count()} cores"
    )
    pictures = photos(args.inspectors)
    print(
        f"photos: {len(pictures)}, {statistics.fmean(map(len, pictures)) / 1000:.0f} KB each on average"
    )
    work = Path(tempfile.mkdtemp(prefix="sitecheck-every-core-"))
    rates = {}
    try:
        for workers in (1, 2):
            home = work / f"data-{workers}"
            site_id, bearings, emails = prepare(home, args.inspectors)
            server = sitecheck_server(home, workers, args.threads, work / f"serve-{workers}.log")
            try:
                tally, seconds, cpu = run_load(
                    server, site_id, bearings, emails, pictures, args.seconds
                )
            finally:
                server.stop()
            rates[("sitecheck", workers)] = report(
                f"sitecheck, {workers} worker{'s' if workers > 1 else ''}", tally, seconds, cpu
            )
        for workers in (1, 2):
            server = baseline_server(workers, args.threads, work / f"baseline-{workers}.log")
            try:
                tally, seconds, cpu = run_load(
                    server, site_id, bearings, emails, pictures, args.seconds
                )
            finally:
                server.stop()
            rates[("baseline", workers)] = report(
                f"trivial Flask route (baseline), {workers} worker{'s' if workers > 1 else ''}",
                tally,
                seconds,
                cpu,
            )
    finally:
        shutil.rmtree(work, ignore_errors=True)
    print()
    for kind in ("sitecheck", "baseline"):
        one, two = rates[(kind, 1)], rates[(kind, 2)]
        print(
            f"{kind:9}: 2 workers / 1 worker = {two / one:.2f} ({one:.1f} -> {two:.1f} requests/s)"
        )
    return 0


if __name__ == "__main__":
    sys.exit(main())
