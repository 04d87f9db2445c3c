"""What the hand-offs cost on a large site: the header's count (asked on every page), "since
you last looked" (the sites list), the engineer's queue in order of severity, and a round of
the notice maker after a burst of records. Prints figures; asserts nothing.

    .venv/bin/python benchmarks/hand_offs.py [--bearings 10000] [--records 1000]

One invented site on a fresh SQLite file: the demo schedule's bearings copied under new
references, a share of them measured with a short bearing (so they go to the engineer).
Figures are for this machine only.
"""

from __future__ import annotations

import argparse
import statistics
import sys
import tempfile
import time
import uuid
from datetime import UTC, datetime
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent.parent))

from sitecheck import credentials, notices, services, store  # noqa: E402
from sitecheck.bearing.serial import input_from_dict  # noqa: E402
from sitecheck.demo import schedule_csv  # noqa: E402
from sitecheck.schedule import parse_schedule  # noqa: E402


def timed(label: str, fn, repeat: int = 20) -> None:
    runs = []
    for _ in range(repeat):
        start = time.perf_counter()
        fn()
        runs.append((time.perf_counter() - start) * 1000)
    print(f"{label:<52} median {statistics.median(runs):8.2f} ms   max {max(runs):8.2f} ms")


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--bearings", type=int, default=10_000)
    parser.add_argument("--records", type=int, default=1_000)
    args = parser.parse_args()

    folder = Path(tempfile.mkdtemp(prefix="sitecheck-hand-offs-"))
    db = store.open_db(folder / "bench.db")
    people = {
        role: store.create_user(
            db,
            email=f"{role}@bench.example",
            name=role.title(),
            password_hash=credentials.hash_password("a benchmark password only"),
            may_make_sites=role == "engineer",
        )
        for role in ("engineer", "inspector", "contractor")
    }
    basis, review = services.default_site_settings()
    site = store.create_site(
        db,
        name="Invented large site",
        address="",
        code_basis=basis,
        review_settings=review,
        created_by=people["engineer"]["id"],
    )
    for role in ("inspector", "contractor"):
        store.add_membership(
            db, user_id=people[role]["id"], site_id=site["id"], role=role, invited_by=None
        )
    rows = [r for r in parse_schedule(schedule_csv()).rows if r.basis_name != "BS 5628-1"]
    start = time.perf_counter()
    bearings = []
    with store.transaction(db):
        for n in range(args.bearings):
            row = rows[n % len(rows)]
            bearings.append(
                services.add_bearing(
                    db,
                    site=site,
                    reference=f"B{n:05d}-{row.reference}",
                    location=row.location,
                    design=row.design,
                    user_id=people["engineer"]["id"],
                )
            )
    print(f"{args.bearings} bearings added in {time.perf_counter() - start:.1f} s")
    store.skip_notices(db)
    store.looked(db, user_id=people["engineer"]["id"], site_ids=[site["id"]])
    start = time.perf_counter()
    now = datetime.now(UTC).strftime("%Y-%m-%dT%H:%M:%SZ")
    for b in bearings[: args.records]:
        d = input_from_dict(b["design_input"])
        measured = {
            "bearing_length": d.beam.bearing_length * 0.7,  # short: most go to the engineer
            "padstone_present": d.padstone is not None,
            "wall_thickness": d.wall.thickness,
            "masonry_group": d.masonry.group,
        }
        services.record_as_built(
            db,
            site=site,
            bearing=b,
            uuid=str(uuid.uuid4()),
            measured_at=now,
            design_revision=1,
            measurements=measured,
            checklist={},
            notes="",
            inspector_id=people["inspector"]["id"],
        )
    print(f"{args.records} records re-checked and stored in {time.perf_counter() - start:.1f} s")
    engineer = people["engineer"]["id"]
    counts = store.to_decide_counts(db, user_id=engineer)
    print(f"waiting for the engineer: {counts['waiting']} ({counts['new']} new)")
    timed("header count (every page)", lambda: store.to_decide_counts(db, user_id=engineer))
    timed(
        "since you last looked (sites list)", lambda: store.since_last_looked(db, user_id=engineer)
    )
    timed("queue rows (store.review_queue)", lambda: store.review_queue(db, user_id=engineer))
    start = time.perf_counter()
    queued = notices.make_messages(db, "https://sitecheck.bench.example")
    print(
        f"notice round after {args.records} records: {queued} message(s) queued in "
        f"{(time.perf_counter() - start) * 1000:.0f} ms"
    )
    timed(
        "an idle notice round (nothing new)", lambda: notices.make_messages(db, "https://x.example")
    )
    db.conn.close()


if __name__ == "__main__":
    main()
