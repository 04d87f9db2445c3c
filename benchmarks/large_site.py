"""Large sites: what the list pages, the site pack, the database and the write path cost at
10, 100, 1,000 and 10,000 bearings; print it, each figure beside its baseline from the same
run, and each figure's growth exponent from 1,000 to 10,000 bearings.

    .venv/bin/python benchmarks/large_site.py [--sizes 10,100,1000,10000] [--repeat 7]
        [--only pages,pack,db,writes] [--records 200] [--rebuild]

Each size is one invented site with that many bearings (the demo's designs, repeated over
blocks and levels, the reaction lighter on higher levels) and one as-built record each,
built straight through sitecheck.services and the store, not over HTTP: a 10,000-bearing
site takes minutes to build. Built databases are kept in $SITECHECK_LARGE_CACHE (default
/tmp/sitecheck-large/), keyed by the schema (the migrations' names) and this builder's
version, and copied for each run, so a run never changes them. Other benchmarks reuse
:func:`built_site` and :class:`Served` (e.g. exports and the PDF at scale).

Then a real server (`sitecheck serve` as in production: a worker process per core) on a
copy, on 127.0.0.1, and clients that log in as the site's people:

- pages: the site page (engineer), the survey list (inspector) and the review queue
  (engineer), each asked --repeat times; printed: the median answer time, the server's CPU
  per answer, the answer's size as sent (gzip) and unpacked. Baseline: /api/csrf, a trivial
  route that still loads the session and its person.
- pack: the site pack as the phone first downloads it, and again after 10 changes when the
  phone says which version it holds (``?since=``). Time, server CPU, bytes as sent.
- db: the database file per bearing, and the largest tables (SQLite's dbstat).
- writes: --records as-built records without photo sent one after another on one kept-open
  connection, as the phone's outbox sends them; the server's CPU per record over the whole
  run, and the median over batches of 25. Baselines: the same requests to the HTTP server
  alone (gunicorn's threaded worker with sitecheck's counts around benchmarks/bare_wsgi.py,
  which only reads the body and answers), and bare sqlite-utils inserts of the same row into a table of the
  same columns, one transaction each, in this process.

The server's CPU is that of all its processes; its peak memory (VmHWM, the largest of
any one process) after each size's requests is printed too.

Targets (issue 13): at 10,000 bearings each page <= 300 ms and <= 100 KB as sent, growing
no faster than linearly from 1,000 (exponent <= 1.05); the first site pack <= 1 s and
<= 600 KB as sent, a later one with 10 changes <= 50 ms; <= 15 KB of database per bearing;
<= 1.5 ms of server CPU per record without photo. The machine is shared: every timed figure
is a median of repeats, and the load average is printed with it.
"""

from __future__ import annotations

import argparse
import contextlib
import dataclasses
import gzip
import hashlib
import http.client
import json
import math
import os
import shutil
import sqlite3
import statistics
import subprocess
import sys
import tempfile
import time
import urllib.error
import urllib.request
import uuid
from datetime import UTC, datetime, timedelta
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT / "tests"))
sys.path.insert(0, str(ROOT / "benchmarks"))

from photo_memory import free_port, rss_mb  # noqa: E402

from kit.client import Client  # noqa: E402

SIZES = (10, 100, 1000, 10000)
CACHE = Path(os.environ.get("SITECHECK_LARGE_CACHE") or "/tmp/sitecheck-large")
# Bump when what the builder writes changes (other than through the schema).
BUILDER_VERSION = 1
SITE_NAME = "Millbrook Quarter (invented large site)"
PEOPLE = {
    "engineer": ("engineer@large-site.example", "Ada Mensah", "large site engineer pass"),
    "inspector": ("inspector@large-site.example", "Rui Castro", "large site inspector pass"),
    "contractor": ("contractor@large-site.example", "Noor Haddad", "large site contractor pass"),
    "viewer": ("viewer@large-site.example", "Ivo Brandt (building control)", "large viewer pass"),
}
LEVELS = 10  # per block; the reaction falls by 4 % a level up
MAX_ASKING_S = 60  # stop repeating a request once its answers took this long in all

TARGETS = {
    "page_ms": 300,
    "page_kb": 100,
    "exponent": 1.05,
    "pack_first_ms": 1000,
    "pack_first_kb": 600,
    "pack_later_ms": 50,
    "db_kb_per_bearing": 15,
    "record_cpu_ms": 1.5,
}


# --- building --------------------------------------------------------------------------------


def schema_key() -> str:
    """Which schema a built database has: the names of the migrations it was built with."""
    from sitecheck.store import MIGRATIONS

    names = [m.name for m in MIGRATIONS._migrations]
    text = json.dumps([BUILDER_VERSION, names])
    return hashlib.sha256(text.encode()).hexdigest()[:12]


@dataclasses.dataclass(frozen=True)
class BuiltSite:
    path: Path  # the cached database: copy it before serving (see working_copy)
    bearings: int
    site_id: str
    build_s: float | None  # None when it came from the cache


def built_site(bearings: int, *, rebuild: bool = False, log=print) -> BuiltSite:
    """The cached database of a site with ``bearings`` bearings, one record each; built now if
    it is not cached for this schema yet."""
    folder = CACHE / schema_key()
    folder.mkdir(parents=True, exist_ok=True)
    path = folder / f"site-{bearings}.db"
    build_s = None
    if rebuild or not path.exists():
        log(f"building a site of {bearings:,} bearings in {path} ...")
        partial = path.with_suffix(".partial")
        for suffix in ("", "-wal", "-shm"):
            Path(str(partial) + suffix).unlink(missing_ok=True)
        started = time.perf_counter()
        build(partial, bearings)
        build_s = time.perf_counter() - started
        partial.replace(path)
        log(f"  built in {build_s:.1f} s")
    with sqlite3.connect(path) as con:
        site_id = con.execute("SELECT id FROM sites WHERE name = ?", [SITE_NAME]).fetchone()[0]
    return BuiltSite(path, bearings, site_id, build_s)


def working_copy(site: BuiltSite, folder: Path) -> Path:
    """A copy of a built database to serve and change (the cached one is closed and whole)."""
    target = folder / f"site-{site.bearings}.db"
    shutil.copyfile(site.path, target)
    return target


def _templates():
    """The demo's designs checked to EC6, each with what was measured on the demo's visit
    (or, where the demo has no record, the design as built)."""
    from sitecheck.demo import schedule_csv
    from sitecheck.schedule import parse_schedule

    out = []
    for row in parse_schedule(schedule_csv()).rows:
        if row.basis_name is not None:
            continue
        measured = _plain(dataclasses.asdict(row.measurements)) if row.measurements else None
        checklist = _plain(dataclasses.asdict(row.checklist)) if row.checklist else None
        out.append((row, measured, checklist))
    return out


def _plain(values: dict) -> dict:
    return {k: v for k, v in values.items() if v is not None}


def _as_designed(design_input: dict) -> dict:
    from sitecheck.web.record_form import MEASUREMENT_FIELDS, designed_value

    values = {name: designed_value(design_input, name) for name in MEASUREMENT_FIELDS}
    return {k: v for k, v in values.items() if v is not None}


AS_BUILT_CHECKS = {"bedded": True, "packing": 0, "cracks": False, "cut_units": False, "level": True}


def build(path: Path, bearings: int) -> None:
    """One site of ``bearings`` bearings with one as-built record each, in ``path``."""
    from sitecheck import credentials, services, store
    from sitecheck.bearing.serial import input_to_dict

    templates = _templates()
    db = store.open_db(path)
    try:
        people = {}
        for role, (email, name, password) in PEOPLE.items():
            people[role] = store.create_user(
                db,
                email=email,
                name=name,
                password_hash=credentials.hash_password(password),
                may_make_sites=role == "engineer",
            )["id"]
        code_basis, review = services.default_site_settings()
        site = store.create_site(
            db,
            name=SITE_NAME,
            address="Millbrook (invented)",
            code_basis=code_basis,
            review_settings=review,
            created_by=people["engineer"],
        )
        for role in ("inspector", "contractor", "viewer"):
            store.add_membership(
                db,
                user_id=people[role],
                site_id=site["id"],
                role=role,
                invited_by=people["engineer"],
            )
        per_block = LEVELS * len(templates)
        visit = datetime(2026, 3, 2, 8, 0, tzinfo=UTC)
        for start in range(0, bearings, 250):
            with store.transaction(db):
                for n in range(start, min(start + 250, bearings)):
                    row, measured, checklist = templates[n % len(templates)]
                    block, level = n // per_block + 1, (n // len(templates)) % LEVELS
                    design = dataclasses.replace(
                        row.design,
                        load=dataclasses.replace(
                            row.design.load, reaction=round(row.design.load.reaction * 0.96**level)
                        ),
                    )
                    bearing = services.add_bearing(
                        db,
                        site=site,
                        reference=f"B{block:02d}-L{level:02d}-{row.reference}",
                        location=f"Block {block}, level {level}: {row.location}",
                        design=design,
                        user_id=people["engineer"],
                    )
                    when = visit + timedelta(minutes=3 * n)
                    services.record_as_built(
                        db,
                        site=site,
                        bearing=bearing,
                        uuid=str(uuid.uuid5(uuid.NAMESPACE_URL, f"large-site:{n}")),
                        measured_at=when.strftime("%Y-%m-%dT%H:%M:%SZ"),
                        design_revision=1,
                        measurements=measured or _as_designed(input_to_dict(design)),
                        checklist=checklist or AS_BUILT_CHECKS,
                        notes=f"Measured on visit {n // 400 + 1}.",
                        inspector_id=people["inspector"],
                        now=when + timedelta(minutes=1),
                    )
        db.execute("PRAGMA wal_checkpoint(TRUNCATE)")
    finally:
        db.conn.close()


# --- serving ---------------------------------------------------------------------------------


def start_server(db_path: Path, port: int, log: Path, server: str) -> subprocess.Popen:
    """`sitecheck serve` on a database, as in production unless ``server`` says which."""
    code = "from sitecheck.cli import main; raise SystemExit(main())"
    args = [sys.executable, "-c", code, "serve", "--db", str(db_path), "--port", str(port)]
    if server != "auto":
        args += ["--server", server]
    with open(log, "ab") as out:
        proc = subprocess.Popen(args, stdout=out, stderr=subprocess.STDOUT)
    deadline = time.monotonic() + 120  # an older database is brought up to date first
    while time.monotonic() < deadline:
        if proc.poll() is not None:
            raise RuntimeError(f"the server exited; see {log}")
        try:
            with urllib.request.urlopen(f"http://127.0.0.1:{port}/login", timeout=2):
                return proc
        except (urllib.error.URLError, ConnectionError, TimeoutError):
            time.sleep(0.2)
    proc.kill()
    raise RuntimeError("the server did not start in 120 s")


class Served:
    """A real server on a working copy of a built site, with a logged-in client per role."""

    def __init__(self, site: BuiltSite, work: Path, server: str = "auto"):
        self.site = site
        self.db_path = working_copy(site, work)
        self.port = free_port()
        self.url = f"http://127.0.0.1:{self.port}"
        self.proc = start_server(self.db_path, self.port, work / "server.log", server)
        self.clients: dict[str, Client] = {}
        for role, (email, _name, password) in PEOPLE.items():
            # A list page of the whole site took minutes on a busy machine before paging.
            client = Client(self.url, timeout=900)
            client.log_in(email, password)
            self.clients[role] = client

    def processes(self) -> list[int]:
        """The server's process and its workers (`sitecheck serve` forks one per core)."""
        return process_tree(self.proc.pid)

    def cpu_s(self) -> float:
        """The CPU time (user and system) the server's processes have used so far, seconds."""
        return cpu_s(self.processes())

    def peak_mb(self) -> float:
        """The highest resident memory any one of the server's processes has reached."""
        return max(rss_mb(pid)[1] for pid in self.processes())

    def stop(self) -> None:
        self.proc.kill()
        self.proc.wait(10)


def process_tree(root: int) -> list[int]:
    """A process and all its descendants."""
    found, parents = [root], {}
    for stat in Path("/proc").glob("[0-9]*/stat"):
        try:
            fields = stat.read_text().rsplit(")", 1)[1].split()
        except OSError:
            continue
        parents.setdefault(int(fields[1]), []).append(int(stat.parent.name))
    for pid in found:
        found += parents.get(pid, [])
    return found


def cpu_s(pids: list[int]) -> float:
    """The CPU time (user and system) these processes have used so far, seconds, their
    finished threads included (clock ticks: 10 ms apart, so only for long spans)."""
    total = 0
    for pid in pids:
        try:
            fields = Path(f"/proc/{pid}/stat").read_text().rsplit(")", 1)[1].split()
        except OSError:
            continue
        total += int(fields[11]) + int(fields[12])
    return total / os.sysconf("SC_CLK_TCK")


def cpu_ns(pids: list[int]) -> int:
    """The time these processes' living threads have run so far, ns (the scheduler's own
    count: fine enough for a batch of a few requests)."""
    total = 0
    for pid in pids:
        for task in Path(f"/proc/{pid}/task").glob("*"):
            with contextlib.suppress(OSError):
                total += int((task / "schedstat").read_text().split()[0])
    return total


class BareServer:
    """gunicorn's threaded worker, with sitecheck's counts of workers and threads, around
    benchmarks/bare_wsgi.py: what the HTTP server costs per request before the app does
    anything. (sitecheck's own worker differs only in which idle thread takes a request,
    which costs a body this small next to nothing.)"""

    def __init__(self, work: Path):
        from sitecheck.config import load_settings

        settings = load_settings(home=work / "bare-home")
        self.port = free_port()
        args = [
            sys.executable, "-m", "gunicorn", "--chdir", str(ROOT / "benchmarks"),
            "--bind", f"127.0.0.1:{self.port}", "--worker-class", "gthread",
            "--workers", str(settings.worker_count()), "--threads", str(settings.threads),
            "--error-logfile", str(work / "bare-server.log"), "bare_wsgi:app",
        ]  # fmt: skip
        self.proc = subprocess.Popen(args)
        deadline = time.monotonic() + 60
        while True:
            try:
                with contextlib.closing(http.client.HTTPConnection("127.0.0.1", self.port)) as c:
                    c.request("GET", "/")
                    c.getresponse().read()
                return
            except OSError:
                if time.monotonic() > deadline or self.proc.poll() is not None:
                    self.stop()
                    raise RuntimeError("the bare server did not start") from None
                time.sleep(0.2)

    def processes(self) -> list[int]:
        return process_tree(self.proc.pid)

    def stop(self) -> None:
        self.proc.kill()
        self.proc.wait(10)


@dataclasses.dataclass
class Asked:
    ms: float  # median answer time, client side
    cpu_ms: float  # server CPU per answer
    sent_kb: float  # as sent (gzip when the server compresses it)
    plain_kb: float
    status: int
    body: bytes = b""


def ask(served: Served, role: str, path: str, repeat: int) -> Asked:
    client = served.clients[role]
    times, cpu, last = [], 0.0, None
    for _ in range(repeat):
        if sum(times) > MAX_ASKING_S:
            break  # a slow answer's median of fewer asks says enough
        before = served.cpu_s()
        started = time.perf_counter()
        last = client.request("GET", path, headers={"Accept-Encoding": "gzip"})
        times.append(time.perf_counter() - started)
        cpu += served.cpu_s() - before
    repeat = len(times)
    plain = last.body
    if last.headers.get("Content-Encoding") == "gzip":
        plain = gzip.decompress(last.body)
    return Asked(
        ms=statistics.median(times) * 1000,
        cpu_ms=cpu / repeat * 1000,
        sent_kb=len(last.body) / 1000,
        plain_kb=len(plain) / 1000,
        status=last.status,
        body=plain,
    )


def record_body(site_id: str, bearing: dict, n: int) -> dict:
    """A second as-built record of a bearing, as the phone's outbox sends it."""
    from sitecheck.web.record_form import MEASUREMENT_FIELDS

    measurements = {k: v for k, v in bearing["measurements"].items() if k in MEASUREMENT_FIELDS}
    return {
        "uuid": str(uuid.uuid4()),
        "site_id": site_id,
        "bearing_id": bearing["id"],
        "design_revision": bearing["revision"],
        "measured_at": (datetime.now(UTC) - timedelta(minutes=n)).strftime("%Y-%m-%dT%H:%M:%SZ"),
        "measurements": measurements,
        "checklist": AS_BUILT_CHECKS,
        "notes": "Measured again for the benchmark.",
    }


def bearings_to_record(db_path: Path, site_id: str, count: int) -> list[dict]:
    """Bearings spread over the site, with their latest record's measurements."""
    with contextlib.closing(sqlite3.connect(db_path)) as con:
        con.row_factory = sqlite3.Row
        total = con.execute("SELECT count(*) FROM bearings WHERE site_id = ?", [site_id]).fetchone()
        step = max(1, total[0] // count)
        rows = con.execute(
            """
            SELECT b.id, b.revision, r.measurements FROM bearings b
            JOIN as_built_records r ON r.uuid = b.latest_record_uuid
            WHERE b.site_id = ? AND b.state <> 'released' ORDER BY b.id
            """,
            [site_id],
        ).fetchall()
    picked = rows[::step][:count]
    return [
        {"id": r["id"], "revision": r["revision"], "measurements": json.loads(r["measurements"])}
        for r in picked
    ]


# --- measuring -------------------------------------------------------------------------------

PAGES = (
    ("site page", "engineer", "/sites/{site}"),
    ("survey list", "inspector", "/sites/{site}/inspect"),
    ("review queue", "engineer", "/review"),
)
BASELINE_PAGE = ("trivial route (/api/csrf)", "engineer", "/api/csrf")


def measure_pages(served: Served, repeat: int) -> dict:
    out = {}
    for name, role, path in (BASELINE_PAGE, *PAGES):
        asked = ask(served, role, path.format(site=served.site.site_id), repeat)
        if asked.status != 200:
            raise RuntimeError(f"{name}: the server answered {asked.status}")
        out[name] = asked
    return out


def measure_pack(served: Served, repeat: int) -> dict:
    site = served.site.site_id
    first = ask(served, "inspector", f"/api/sites/{site}/pack", repeat)
    pack = json.loads(first.body)
    out = {"first pack": first}
    version = pack.get("version")
    # Ten changes on the site, as a morning's records bring them.
    inspector = served.clients["inspector"]
    token = inspector.token()
    for n, bearing in enumerate(bearings_to_record(served.db_path, site, 10)):
        answer = inspector.post_json("/api/records", record_body(site, bearing, n), token=token)
        if answer.status != 201:
            raise RuntimeError(f"a record was refused: {answer.status} {answer.text[:300]}")
    if version is None:
        out["later pack, 10 changes"] = None  # the server sends the whole pack every time
        return out
    later = ask(served, "inspector", f"/api/sites/{site}/pack?since={version}", repeat)
    changed = json.loads(later.body)
    out["later pack, 10 changes"] = later
    out["later_bearings"] = len(changed.get("bearings", []))
    return out


WRITE_BATCH = 25


def measure_writes(served: Served, records: int, work: Path) -> dict:
    site = served.site.site_id
    inspector = served.clients["inspector"]
    token = inspector.token()
    bodies = [
        json.dumps(record_body(site, b, n))
        for n, b in enumerate(bearings_to_record(served.db_path, site, records))
    ]
    headers = {
        "Content-Type": "application/json",
        "X-CSRFToken": token,
        "Cookie": "; ".join(f"{c.name}={c.value}" for c in inspector.cookies),
    }
    got = _send_one_after_another(served.port, served.processes(), bodies, headers, 201)
    # The same requests to the HTTP server alone: its own share of each.
    bare = BareServer(work)
    try:
        alone = _send_one_after_another(bare.port, bare.processes(), bodies, headers, 201)
    finally:
        bare.stop()
    return {
        "records": len(bodies),
        "cpu_ms": got["cpu_ms"],
        "batch_median_ms": got["batch_median_ms"],
        "per_s": got["per_s"],
        "server_alone_cpu_ms": alone["cpu_ms"],
    }


def _send_one_after_another(
    port: int, pids: list[int], bodies: list[str], headers: dict, status: int
) -> dict:
    """POST each body on one kept-open connection, as a phone's outbox sends them: the
    server's CPU per request over the whole run (every process, every thread, a WAL
    checkpoint included when one falls in it) and the median over batches of
    WRITE_BATCH (which a burst of other work on the machine moves less)."""
    connection = http.client.HTTPConnection("127.0.0.1", port, timeout=120)
    batches = []
    before, started = cpu_s(pids), time.perf_counter()
    for first in range(0, len(bodies), WRITE_BATCH):
        batch = bodies[first : first + WRITE_BATCH]
        batch_started = cpu_ns(pids)
        for body in batch:
            connection.request("POST", "/api/records", body=body, headers=headers)
            answer = connection.getresponse()
            text = answer.read()
            if answer.status != status:
                raise RuntimeError(f"a record was refused: {answer.status} {text[:300]!r}")
        batches.append((cpu_ns(pids) - batch_started) / len(batch) / 1e6)
    wall = time.perf_counter() - started
    cpu = cpu_s(pids) - before
    connection.close()
    return {
        "cpu_ms": cpu / len(bodies) * 1000,
        "batch_median_ms": statistics.median(batches),
        "per_s": len(bodies) / wall,
    }


def bare_inserts(db_path: Path, records: int) -> dict:
    """The baseline: the same record rows inserted by sqlite-utils alone, one transaction each,
    with the same durability (WAL, synchronous FULL)."""
    import sqlite_utils

    with contextlib.closing(sqlite3.connect(db_path)) as con:
        con.row_factory = sqlite3.Row
        rows = [dict(r) for r in con.execute("SELECT * FROM as_built_records LIMIT ?", [records])]
    work = Path(tempfile.mkdtemp(prefix="sitecheck-bare-"))
    try:
        db = sqlite_utils.Database(work / "bare.db")
        db.execute("PRAGMA journal_mode = WAL")
        db.execute("PRAGMA synchronous = FULL")
        table = db["records"]
        table.create({k: type(v) if v is not None else str for k, v in rows[0].items()}, pk="uuid")
        started_cpu, started = time.process_time(), time.perf_counter()
        for row in rows:
            table.insert({**row, "uuid": str(uuid.uuid4())})
        cpu = time.process_time() - started_cpu
        wall = time.perf_counter() - started
        db.close()
    finally:
        shutil.rmtree(work, ignore_errors=True)
    return {"records": len(rows), "cpu_ms": cpu / len(rows) * 1000, "per_s": len(rows) / wall}


def measure_db(site: BuiltSite) -> dict:
    size = site.path.stat().st_size
    with contextlib.closing(sqlite3.connect(site.path)) as con:
        tables = con.execute(
            "SELECT name, sum(pgsize) FROM dbstat GROUP BY name ORDER BY 2 DESC LIMIT 6"
        ).fetchall()
    return {
        "kb_per_bearing": size / site.bearings / 1000,
        "mb": size / 1e6,
        "tables": {name: round(b / site.bearings / 1000, 2) for name, b in tables},
    }


def exponent(small: float | None, large: float | None, sizes=(1000, 10000)) -> float | None:
    """How a figure grows with the number of bearings: 1 is linear."""
    if not small or not large or small <= 0 or large <= 0:
        return None
    return math.log(large / small) / math.log(sizes[1] / sizes[0])


# --- printing --------------------------------------------------------------------------------


def _exp_text(value: float | None) -> str:
    return "—" if value is None else f"{value:.2f}"


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--sizes", default=",".join(str(s) for s in SIZES))
    parser.add_argument("--repeat", type=int, default=7)
    parser.add_argument("--records", type=int, default=200)
    parser.add_argument("--only", default="pages,pack,db,writes")
    parser.add_argument("--rebuild", action="store_true")
    parser.add_argument(
        "--server", default="auto", choices=("auto", "gunicorn", "waitress"), help="as serve"
    )
    args = parser.parse_args()
    sizes = [int(s) for s in args.sizes.split(",")]
    only = set(args.only.split(","))

    print(f"Large sites: sizes {', '.join(f'{s:,}' for s in sizes)}; schema {schema_key()}")
    print(f"load average before: {' '.join(f'{x:.2f}' for x in os.getloadavg())} on 2 cores")
    results: dict[int, dict] = {}
    work = Path(tempfile.mkdtemp(prefix="sitecheck-large-run-"))
    try:
        for size in sizes:
            site = built_site(size, rebuild=args.rebuild)
            out = results[size] = {"build_s": site.build_s}
            if "db" in only:
                out["db"] = measure_db(site)
            if only & {"pages", "pack", "writes"}:
                served = Served(site, work, args.server)
                try:
                    if "pages" in only:
                        out["pages"] = measure_pages(served, args.repeat)
                    if "pack" in only:
                        out["pack"] = measure_pack(served, args.repeat)
                    if "writes" in only:
                        out["writes"] = measure_writes(served, min(args.records, size), work)
                    out["peak_mb"] = served.peak_mb()
                finally:
                    served.stop()
                    for suffix in ("", "-wal", "-shm"):
                        Path(str(served.db_path) + suffix).unlink(missing_ok=True)
            if "writes" in only:
                out["bare"] = bare_inserts(site.path, min(args.records, size))
            print(f"  {size:,} bearings measured; load average {os.getloadavg()[0]:.2f}")
    finally:
        shutil.rmtree(work, ignore_errors=True)
    report(results, sizes)
    return 0


def report(results: dict[int, dict], sizes: list[int]) -> None:
    big, mid = max(sizes), (1000 if 1000 in sizes else None)

    def row(label, cells, exp=None, note=""):
        text = f"  {label:<34}" + "".join(f"{c:>14}" for c in cells)
        if exp is not None or mid:
            text += f"{_exp_text(exp):>9}"
        print(text + (f"  {note}" if note else ""))

    header = "".join(f"{s:>14,}" for s in sizes)
    print()
    print(f"  {'bearings':<34}{header}{'exp':>9}")
    verdicts = {}

    if all("pages" in results[s] for s in sizes):
        print("pages (median answer ms / server CPU ms per answer / KB as sent, KB unpacked)")
        names = [BASELINE_PAGE[0], *(p[0] for p in PAGES)]
        for name in names:
            got = [results[s]["pages"][name] for s in sizes]
            ms = [g.ms for g in got]
            row(
                name + ", ms",
                [f"{x:.0f}" for x in ms],
                exponent(results[mid]["pages"][name].ms, results[big]["pages"][name].ms)
                if mid
                else None,
            )
            row(
                "  server CPU ms",
                [f"{g.cpu_ms:.0f}" for g in got],
                exponent(results[mid]["pages"][name].cpu_ms, results[big]["pages"][name].cpu_ms)
                if mid
                else None,
            )
            row("  KB sent / unpacked", [f"{g.sent_kb:.0f}/{g.plain_kb:.0f}" for g in got])
            if name != BASELINE_PAGE[0]:
                g = results[big]["pages"][name]
                e = exponent(results[mid]["pages"][name].ms, g.ms) if mid else None
                verdicts[name] = (
                    g.ms <= TARGETS["page_ms"]
                    and g.sent_kb <= TARGETS["page_kb"]
                    and (e is None or e <= TARGETS["exponent"])
                )
    if all("pack" in results[s] for s in sizes):
        print("site pack (median ms / server CPU ms / KB as sent, KB unpacked)")
        for name in ("first pack", "later pack, 10 changes"):
            got = [results[s]["pack"][name] for s in sizes]
            if any(g is None for g in got):
                row(name, ["whole" for _ in sizes], note="the server sends the whole pack")
                verdicts[name] = False
                continue
            row(
                name + ", ms",
                [f"{g.ms:.0f}" for g in got],
                exponent(results[mid]["pack"][name].ms, results[big]["pack"][name].ms)
                if mid
                else None,
            )
            row(
                "  server CPU ms",
                [f"{g.cpu_ms:.0f}" for g in got],
                exponent(results[mid]["pack"][name].cpu_ms, results[big]["pack"][name].cpu_ms)
                if mid
                else None,
            )
            row("  KB sent / unpacked", [f"{g.sent_kb:.0f}/{g.plain_kb:.0f}" for g in got])
        g = results[big]["pack"]["first pack"]
        verdicts["first pack"] = (
            g.ms <= TARGETS["pack_first_ms"] and g.sent_kb <= TARGETS["pack_first_kb"]
        )
        later = results[big]["pack"]["later pack, 10 changes"]
        if later is not None:
            row("  bearings in it", [str(results[s]["pack"]["later_bearings"]) for s in sizes])
            verdicts["later pack"] = later.ms <= TARGETS["pack_later_ms"]
    if all("db" in results[s] for s in sizes):
        print("database")
        got = [results[s]["db"] for s in sizes]
        row("KB per bearing", [f"{g['kb_per_bearing']:.1f}" for g in got])
        row("file MB", [f"{g['mb']:.1f}" for g in got])
        print(f"  largest at {big:,}, KB per bearing: {results[big]['db']['tables']}")
        verdicts["database"] = results[big]["db"]["kb_per_bearing"] <= TARGETS["db_kb_per_bearing"]
    if all("writes" in results[s] for s in sizes):
        print("write path, records without photo")
        row("server CPU ms per record", [f"{results[s]['writes']['cpu_ms']:.2f}" for s in sizes])
        row(
            f"  median of batches of {WRITE_BATCH}",
            [f"{results[s]['writes']['batch_median_ms']:.2f}" for s in sizes],
        )
        row("records/s, one after another", [f"{results[s]['writes']['per_s']:.0f}" for s in sizes])
        row(
            "  baseline HTTP server alone, CPU ms",
            [f"{results[s]['writes']['server_alone_cpu_ms']:.2f}" for s in sizes],
        )
        row("  baseline bare insert CPU ms", [f"{results[s]['bare']['cpu_ms']:.2f}" for s in sizes])
        row("  baseline bare inserts/s", [f"{results[s]['bare']['per_s']:.0f}" for s in sizes])
        verdicts["write path"] = results[big]["writes"]["cpu_ms"] <= TARGETS["record_cpu_ms"]
    if all("peak_mb" in results[s] for s in sizes):
        row("server peak memory MB", [f"{results[s]['peak_mb']:.0f}" for s in sizes])
    built = [results[s]["build_s"] for s in sizes]
    if any(b is not None for b in built):
        row("built now, s", ["cached" if b is None else f"{b:.0f}" for b in built])
    print(f"load average after: {' '.join(f'{x:.2f}' for x in os.getloadavg())}")
    for name, ok in verdicts.items():
        print(f"target {name}: {'met' if ok else 'NOT met'}")
    print(json.dumps({str(s): _jsonable(results[s]) for s in sizes}))


def _jsonable(value):
    if isinstance(value, Asked):
        return {k: round(v, 2) for k, v in dataclasses.asdict(value).items() if k != "body"}
    if isinstance(value, dict):
        return {k: _jsonable(v) for k, v in value.items()}
    if isinstance(value, float):
        return round(value, 3)
    return value


if __name__ == "__main__":
    raise SystemExit(main())
