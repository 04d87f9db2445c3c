"""The data export (CSV in a zip, JSON) and the site record (PDF) of sites of 10 to 10,000
bearings: time, CPU, peak memory and size of each file, beside its baselines from the same
run, with each figure's growth exponent from 1,000 to 10,000 bearings; print it.

    .venv/bin/python benchmarks/large_site_record.py [--sizes 10,100,1000,10000]
        [--pdf-sizes 10,100,1000] [--only csv,json,pdf,server] [--repeat 1]

The sites are benchmarks/large_site.py's (one as-built record per bearing, built through the
services and kept in /tmp/sitecheck-large by schema). Each file is made in a child process
of its own, as a background job makes it (sitecheck.report.jobs: one read snapshot, the
bearings read a batch at a time and written as they are read), so that the child's peak
resident memory (VmHWM) is the file's own. Printed per file and size: the wall time, the
child's CPU, its peak memory, its memory at rest (after opening the database and reading the
site's heading, before the first bearing) and the file's size.

Baselines, each from the same run:
- at rest: the child's memory before it writes (Python, sitecheck, the fonts);
- all at once (exports): the same data read whole into memory and the JSON file built in
  memory before it is written, as the export was made before (every record decoded, then
  one json.dumps of the whole, format 1's shape); up to 1,000 bearings unless
  --baseline-sizes says more, as it grows linearly (about 4.6 GB at 10,000);
- the PDF's memory per bearing is its peak less its memory at rest, over the bearings.

With ``server`` in --only, the largest site's JSON export is also made by a real server
(`sitecheck serve` on 127.0.0.1, on a copy of the site) as people make it: the record page's
form, then its progress page's .json until it is ready, while another connection asks for
/login every 0.2 s; printed: how long it took, how often progress moved, /login's slowest.

Targets (issue 13): each export <= 200 MB of memory at 10,000 bearings; the PDF <= 0.1 MB of
memory per bearing. The machine is shared: the load average is printed with the figures.
"""

from __future__ import annotations

import argparse
import json
import math
import os
import shutil
import subprocess
import sys
import tempfile
import threading
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT / "tests"))
sys.path.insert(0, str(ROOT / "benchmarks"))

TARGET_EXPORT_MB = 200
TARGET_PDF_MB_PER_BEARING = 0.1
KINDS = ("csv", "json", "pdf")


# --- in the child: one file, measured ---------------------------------------------------------


def _status_mb(field: str) -> float:
    for line in Path("/proc/self/status").read_text().splitlines():
        name, _, value = line.partition(":")
        if name == field:
            return int(value.split()[0]) / 1024
    raise KeyError(field)


def child(kind: str, db_path: str, site_id: str, out: str) -> None:
    """Make one file the way a job does; print what it cost as one line of JSON."""
    from sitecheck import store
    from sitecheck.report import export
    from sitecheck.report.collect import collect
    from sitecheck.report.pdf import write_pdf

    started, cpu = time.perf_counter(), time.process_time()
    db = store.open_db(db_path)
    with store.read_snapshot(db):
        rec = collect(db, site_id)
        if kind == "all-at-once":
            rest = _status_mb("VmRSS")
            _all_at_once(db, site_id, rec, Path(out))
        else:
            if kind == "pdf":
                # The fonts are loaded by the first page; at rest includes them.
                from sitecheck.report.pdf import _Doc

                _Doc(rec.site["name"])
            rest = _status_mb("VmRSS")
            if kind == "csv":
                export.write_csv_zip(rec, out, workdir=Path(out).parent)
            elif kind == "json":
                export.write_json(rec, out)
            else:
                write_pdf(rec, out)
        bearings = len(rec.bearings)
    db.conn.close()
    print(
        json.dumps(
            {
                "wall_s": time.perf_counter() - started,
                "cpu_s": time.process_time() - cpu,
                "peak_mb": _status_mb("VmHWM"),
                "rest_mb": rest,
                "bytes": Path(out).stat().st_size,
                "bearings": bearings,
            }
        )
    )


def _all_at_once(db, site_id: str, rec, out: Path) -> None:
    """The JSON export as it was made before: everything read first, the whole file built in
    memory, then written."""
    from sitecheck import store
    from sitecheck.cli import CAUTION

    records: dict[str, list] = {}
    for r in store.records_for_site(db, site_id=site_id):
        records.setdefault(r["bearing_id"], []).append(r)
    bearings = []
    for b in store.list_bearings(db, site_id=site_id):
        bearings.append(
            {
                **b,
                "records": [
                    {**r, "inspector": rec.name(r["inspector_id"])}
                    for r in records.get(b["id"], [])
                ],
                "decisions": store.decisions_for(db, site_id=site_id, bearing_id=b["id"]),
                "releases": store.releases_for(db, site_id=site_id, bearing_id=b["id"]),
                "reopenings": store.reopenings_for(db, site_id=site_id, bearing_id=b["id"]),
            }
        )
    events = list(reversed(store.events_for(db, site_id=site_id, limit=1_000_000_000)))
    whole = {
        "format_version": 1,
        "caution": CAUTION,
        "site": rec.site,
        "bearings": bearings,
        "events": [{**e, "who": rec.name(e["user_id"])} for e in events],
    }
    out.write_bytes(json.dumps(whole, ensure_ascii=False, indent=1).encode())


# --- in the parent ----------------------------------------------------------------------------


def made(kind: str, db_path: Path, site_id: str, work: Path) -> dict:
    suffix = {"csv": ".zip", "pdf": ".pdf"}.get(kind, ".json")
    out = work / f"{kind}{suffix}"
    done = subprocess.run(
        [sys.executable, __file__, "--child", kind, str(db_path), site_id, str(out)],
        check=True,
        capture_output=True,
        text=True,
    )
    out.unlink(missing_ok=True)
    return json.loads(done.stdout.strip().splitlines()[-1])


def exponent(small: float, large: float, n_small: int, n_large: int) -> float:
    if small <= 0 or large <= 0:
        return math.nan
    return math.log(large / small) / math.log(n_large / n_small)


def _median_of(runs: list[dict]) -> dict:
    keys = runs[0].keys()
    return {k: sorted(r[k] for r in runs)[len(runs) // 2] for k in keys}


def load() -> str:
    return " ".join(f"{x:.2f}" for x in os.getloadavg())


def table(title: str, rows: dict[int, dict], extra=None) -> None:
    print(f"\n{title}")
    print(
        f"  {'bearings':>8} {'wall s':>8} {'CPU s':>8} {'peak MB':>8} {'at rest':>8} "
        f"{'file MB':>8}" + (f" {extra[0]:>10}" if extra else "")
    )
    for n, r in rows.items():
        line = (
            f"  {n:>8,} {r['wall_s']:>8.2f} {r['cpu_s']:>8.2f} {r['peak_mb']:>8.0f} "
            f"{r['rest_mb']:>8.0f} {r['bytes'] / 1e6:>8.2f}"
        )
        if extra:
            line += f" {extra[1](n, r):>10}"
        print(line)
    sizes = sorted(rows)
    if len(sizes) >= 2:
        a, b = sizes[-2], sizes[-1]
        print(
            f"  growth {a:,} -> {b:,}: CPU exponent "
            f"{exponent(rows[a]['cpu_s'], rows[b]['cpu_s'], a, b):.2f}, memory above rest "
            f"exponent {exponent(rows[a]['peak_mb'] - rows[a]['rest_mb'], rows[b]['peak_mb'] - rows[b]['rest_mb'], a, b):.2f}"
        )


def through_a_server(site, work: Path) -> None:
    """The largest site's JSON export made by a real server as people make it."""
    from large_site import PEOPLE, working_copy
    from photo_memory import free_port, rss_mb, start_server

    from kit.client import Client

    db_path = working_copy(site, work)
    port = free_port()
    proc = start_server(db_path, port, work / "server.log")
    try:
        email, _name, password = PEOPLE["viewer"]
        client = Client(f"http://127.0.0.1:{port}")
        client.log_in(email, password)
        logins: list[float] = []
        stop = threading.Event()

        def ask_login() -> None:
            other = Client(f"http://127.0.0.1:{port}")
            while not stop.is_set():
                started = time.perf_counter()
                other.get("/login")
                logins.append(time.perf_counter() - started)
                stop.wait(0.2)

        asker = threading.Thread(target=ask_login, daemon=True)
        asker.start()
        started = time.perf_counter()
        answer = client.post_form(f"/sites/{site.site_id}/record/json", {})
        if answer.status != 302:
            raise RuntimeError(f"the export was not started: {answer.status}")
        seen, job = set(), None
        while time.perf_counter() - started < 1800:
            job = client.get(f"/sites/{site.site_id}/record/json.json").json()["job"]
            seen.add(job["bearings_done"])
            if not job["running"]:
                break
            time.sleep(0.5)
        took = time.perf_counter() - started
        stop.set()
        asker.join(5)
        got = client.get(f"/sites/{site.site_id}/export.json")
        print(
            f"\nThrough a real server, {site.bearings:,} bearings, JSON export: {job['state']} in "
            f"{took:.1f} s, progress seen at {len(seen)} different counts, file "
            f"{len(got.body) / 1e6:.1f} MB (answer {got.status}); /login slowest "
            f"{max(logins) * 1000:.0f} ms over {len(logins)} asks; server peak "
            f"{rss_mb(proc.pid)[1]:.0f} MB (its main process)"
        )
    finally:
        proc.kill()
        proc.wait(10)


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--sizes", default="10,100,1000,10000")
    parser.add_argument("--pdf-sizes", default="10,100,1000")
    parser.add_argument(
        "--baseline-sizes",
        default="10,100,1000",
        help="sizes for the all-at-once baseline (it grows linearly: about 4.6 GB at 10,000)",
    )
    parser.add_argument("--only", default="csv,json,pdf")
    parser.add_argument("--repeat", type=int, default=1, help="runs per figure (median)")
    parser.add_argument("--child", nargs=4, metavar=("KIND", "DB", "SITE", "OUT"))
    args = parser.parse_args()
    if args.child:
        child(*args.child)
        return 0

    try:
        from large_site import built_site
    except ImportError:
        print(
            "benchmarks/large_site.py (issue 13, part A: the large sites' builder) is needed",
            file=sys.stderr,
        )
        return 3

    only = set(args.only.split(","))
    sizes = [int(s) for s in args.sizes.split(",")]
    pdf_sizes = [int(s) for s in args.pdf_sizes.split(",")]
    baseline_sizes = [int(s) for s in args.baseline_sizes.split(",")]
    print(f"load average at start: {load()} (2 cores)")
    sites = {n: built_site(n) for n in sorted(set(sizes) | set(pdf_sizes) | set(baseline_sizes))}
    work = Path(tempfile.mkdtemp(prefix="sitecheck-large-record-"))
    try:
        results: dict[str, dict[int, dict]] = {}
        for kind in ("csv", "json", "all-at-once", "pdf"):
            wanted = kind in only or (kind == "all-at-once" and "json" in only)
            if not wanted:
                continue
            for n in {"pdf": pdf_sizes, "all-at-once": baseline_sizes}.get(kind, sizes):
                site = sites[n]
                runs = [made(kind, site.path, site.site_id, work) for _ in range(args.repeat)]
                results.setdefault(kind, {})[n] = _median_of(runs)
                print(f"  made {kind} of {n:,} bearings (load {load()})", flush=True)
        largest = max(sizes)
        if "csv" in results:
            table("Data export, CSV files zipped (written bearing by bearing):", results["csv"])
        if "json" in results:
            table("Data export, JSON (written bearing by bearing):", results["json"])
            table(
                "Baseline: the same data read whole and the JSON built in memory (as before):",
                results["all-at-once"],
            )
        for kind in ("csv", "json"):
            if kind in results and largest in results[kind]:
                peak = results[kind][largest]["peak_mb"]
                verdict = "met" if peak <= TARGET_EXPORT_MB else "NOT met"
                print(
                    f"{kind} export at {largest:,} bearings: peak {peak:.0f} MB "
                    f"(target <= {TARGET_EXPORT_MB} MB): {verdict}"
                )
        if "pdf" in results:

            def per_bearing(n: int, r: dict) -> str:
                return f"{(r['peak_mb'] - r['rest_mb']) / n:.3f}"

            table(
                "Site record (PDF), one read snapshot, bearings read as written:",
                results["pdf"],
                extra=("MB/bearing", per_bearing),
            )
            biggest = max(results["pdf"])
            r = results["pdf"][biggest]
            each = (r["peak_mb"] - r["rest_mb"]) / biggest
            verdict = "met" if each <= TARGET_PDF_MB_PER_BEARING else "NOT met"
            print(
                f"PDF at {biggest:,} bearings: {each:.3f} MB per bearing above rest "
                f"(target <= {TARGET_PDF_MB_PER_BEARING} MB): {verdict}"
            )
        if "server" in only:
            through_a_server(sites[largest], work)
    finally:
        shutil.rmtree(work, ignore_errors=True)
    print(f"load average at end: {load()}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
