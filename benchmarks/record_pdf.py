"""Time and peak memory of one site record (PDF) for a large invented site.

    .venv/bin/python benchmarks/record_pdf.py [--bearings 200] [--photos 3] [--keep DIR]

    .venv/bin/python benchmarks/record_pdf.py --keep DIR --without-print-copies

Builds, in a temporary folder, a site of N bearings (the demo schedule's design rows under
new references), each with an as-built record and P generated 1600 × 1200 photos, some
decided and released; then makes the site record in a child process and prints its wall
time and the child's peak resident memory (the whole process: Python, fpdf2, Pillow).

Uploads keep a print copy of each photo, which the PDF embeds as it is.
``--without-print-copies`` removes them first, as for photos stored before print copies
existed: that run makes them (and keeps them), so a second run with ``--keep`` shows the
usual case again. Invented data; figures are for this machine only.
"""

from __future__ import annotations

import argparse
import dataclasses
import io
import random
import resource
import shutil
import subprocess
import sys
import tempfile
import time
import uuid
from datetime import UTC, datetime, timedelta
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent.parent))

from sitecheck import credentials, services, store  # noqa: E402
from sitecheck.demo import schedule_csv  # noqa: E402
from sitecheck.photos import PhotoStore, ingest_photo  # noqa: E402
from sitecheck.schedule import parse_schedule  # noqa: E402


def _photo(seed: str) -> bytes:
    """A stand-in for a site photo with enough texture that its JPEG is photo-sized."""
    from PIL import Image, ImageDraw

    rng = random.Random(seed)
    im = Image.effect_noise((1600, 1200), 40).convert("RGB")
    d = ImageDraw.Draw(im)
    for _ in range(60):
        x, y = rng.randrange(1600), rng.randrange(1200)
        tone = tuple(rng.randrange(90, 220) for _ in range(3))
        d.rectangle([x, y, x + rng.randrange(40, 400), y + rng.randrange(30, 120)], fill=tone)
    d.text((40, 40), seed, fill=(0, 0, 0), font_size=48)
    out = io.BytesIO()
    im.save(out, "JPEG", quality=85)
    return out.getvalue()


def build(folder: Path, bearings: int, photos_each: int) -> str:
    db_path = folder / "bench.db"
    db = store.open_db(db_path)
    photos = PhotoStore(folder / "photos")
    people = {}
    for role in ("engineer", "inspector", "contractor"):
        u = store.create_user(
            db,
            email=f"{role}@bench.example",
            name=f"Bench {role}",
            password_hash=credentials.hash_password("bench pass"),
        )
        people[role] = u["id"]
    basis, review = services.default_site_settings()
    site = store.create_site(
        db,
        name="Benchmark site (invented)",
        address="1 Nowhere Lane (invented)",
        code_basis=basis,
        review_settings=review,
        created_by=people["engineer"],
    )
    for role in ("inspector", "contractor"):
        store.add_membership(
            db, user_id=people[role], site_id=site["id"], role=role, invited_by=people["engineer"]
        )
    rows = [r for r in parse_schedule(schedule_csv()).rows if r.basis_name is None]
    start = datetime.now(UTC) - timedelta(days=2)
    for n in range(bearings):
        row = rows[n % len(rows)]
        b = services.add_bearing(
            db,
            site=site,
            reference=f"B{n + 1:03d}-{row.reference}",
            location=row.location,
            design=row.design,
            user_id=people["engineer"],
        )
        measured = dataclasses.asdict(row.measurements) if row.measurements else {}
        record_uuid = str(uuid.uuid4())
        when = start + timedelta(minutes=5 * n)
        services.record_as_built(
            db,
            site=site,
            bearing=b,
            uuid=record_uuid,
            measured_at=when.strftime("%Y-%m-%dT%H:%M:%SZ"),
            design_revision=1,
            measurements={k: v for k, v in measured.items() if v is not None},
            checklist={"bedded": True, "cracks": False},
            notes=f"Benchmark record {n + 1} (invented).",
            inspector_id=people["inspector"],
            now=when + timedelta(minutes=1),
        )
        for k in range(photos_each):
            services.store_photo(
                db,
                site=site,
                record_uuid=record_uuid,
                photo=ingest_photo(_photo(f"B{n + 1:03d} photo {k + 1}")),
                photos=photos,
                user_id=people["inspector"],
            )
        b = store.get_bearing(db, site_id=site["id"], bearing_id=b["id"])
        if b["state"] == "engineer to decide" and n % 2 == 0:
            services.decide(
                db,
                site=site,
                bearing=b,
                kind="accept",
                reason="Checked as built; accepted (invented).",
                engineer_id=people["engineer"],
            )
            b = store.get_bearing(db, site_id=site["id"], bearing_id=b["id"])
        if b["state"] in ("within design", "accepted") and n % 3 == 0:
            services.release(
                db,
                site=site,
                bearing=b,
                contractor_id=people["contractor"],
                contractor_name="Bench contractor (invented)",
                statement="Released for closing up.",
            )
    db.conn.close()
    return site["id"]


def make_record(db_path: str, site_id: str, out: str) -> None:
    """The measured step, run in a child so its peak memory is its own."""
    from sitecheck.report.collect import collect
    from sitecheck.report.pdf import write_pdf

    t0 = time.perf_counter()
    db = store.open_db(db_path)
    with store.read_snapshot(db):
        # The bearings are read as the PDF is written, a batch at a time.
        rec = collect(db, site_id)
        t1 = time.perf_counter()
        write_pdf(rec, out, photo_store=PhotoStore(Path(db_path).parent / "photos"))
        t2 = time.perf_counter()
    db.conn.close()
    print(f"{t1 - t0:.3f} {t2 - t1:.3f}")


def main() -> int:
    parser = argparse.ArgumentParser()
    parser.add_argument("--bearings", type=int, default=200)
    parser.add_argument("--photos", type=int, default=3)
    parser.add_argument("--keep", type=Path, default=None, help="build here and keep it")
    parser.add_argument(
        "--without-print-copies",
        action="store_true",
        help="remove the photos' print copies first (photos stored before they existed)",
    )
    parser.add_argument("--child", nargs=3, metavar=("DB", "SITE", "OUT"), help=argparse.SUPPRESS)
    args = parser.parse_args()
    if args.child:
        make_record(*args.child)
        return 0
    with tempfile.TemporaryDirectory() as tmp:
        folder = args.keep or Path(tmp)
        folder.mkdir(parents=True, exist_ok=True)
        t = time.perf_counter()
        if (folder / "bench.db").exists():
            # A kept site is measured again as it is (building one takes minutes).
            db = store.open_db(folder / "bench.db")
            site_id = store.sites_named(db, "Benchmark site (invented)")[0]["id"]
            db.conn.close()
            print(f"reusing the site kept in {folder}")
        else:
            site_id = build(folder, args.bearings, args.photos)
            took = time.perf_counter() - t
            print(f"built {args.bearings} bearings × {args.photos} photos in {took:.1f} s")
        photo_dir = folder / "photos"
        if args.without_print_copies:
            shutil.rmtree(photo_dir / "print", ignore_errors=True)
        display = [
            p.stat().st_size
            for p in photo_dir.glob("??/*.jpg")
            if p.stat().st_size > 60_000  # display pictures, not thumbnails
        ]
        printed = [p.stat().st_size for p in photo_dir.glob("print/??/*.jpg")]
        if display:
            print(
                f"display photos: {len(display)}, mean {sum(display) / len(display) / 1e3:.0f} kB"
            )
        print(
            f"print copies kept before this run: {len(printed)}"
            + (f", mean {sum(printed) / len(printed) / 1e3:.0f} kB" if printed else "")
        )
        out = folder / "record.pdf"
        t = time.perf_counter()
        child = subprocess.run(
            [sys.executable, __file__, "--child", str(folder / "bench.db"), site_id, str(out)],
            check=True,
            capture_output=True,
            text=True,
        )
        wall = time.perf_counter() - t
        read_s, pdf_s = (float(x) for x in child.stdout.split())
        peak_mb = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss / 1024
        from pypdf import PdfReader

        pages = len(PdfReader(str(out)).pages)
        size_mb = out.stat().st_size / 1e6
        print(f"site record: {pages} pages, {size_mb:.1f} MB")
        print(f"  site and its people read: {read_s:.2f} s")
        print(f"  bearings read, PDF made and written: {pdf_s:.2f} s")
        print(f"  child process, start to end: {wall:.2f} s (target ≤ 30 s)")
        print(f"  peak memory of the child: {peak_mb:.0f} MB (target ≤ 500 MB)")
    return 0


if __name__ == "__main__":
    sys.exit(main())
